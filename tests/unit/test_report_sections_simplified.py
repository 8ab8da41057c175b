"""The simplify report: the written model, the before/after table, the checks, the caution."""

from test_results_simplified import result

from audit import report
from audit.report.sections.simplified import simplified_report


def test_report_content():
    r = result()
    doc = simplified_report(r)
    titles = [s.title for s in doc.sections]
    assert titles == ["Model and run", "Simplified model written", "y: before and after"]
    text = report.markdown(r)
    assert "m.onnx" in text and "b ~" in text and "4 Gauss nodes" in text
    assert "Mean after − before" in text and "Variance check" in text and "Freezing changes" in text
    assert text.rstrip().endswith("engineers.") and "not a safety validation" in text
