"""What the reports of the workflows show: advise and compare results rendered for the terminal and as Markdown.

Moved unchanged from the workflow tests; the runs they render are shared fixtures (tests/conftest.py).
"""

import clifuncs
import numpy as np
import pytest
from advice_cases import render

from audit.models.python import PythonModel
from audit.report import CAUTION, markdown
from audit.report.text import fmt
from audit.results import AdviceResult
from audit.studies import compare_models


def _m(f, d=6):
    return PythonModel(f, d, source=f.__name__)


@pytest.mark.parametrize("fixture", ["net_advice", "ridge_advice"])
def test_terminal_report_fits_and_shows_the_numbers(fixture, request):
    res: AdviceResult = request.getfixturevalue(fixture)
    text = render(res)
    assert "\x1b[" not in text
    assert max(len(line) for line in text.splitlines()) <= 80
    out = res.outputs[0]
    best = out.best
    flat = " ".join(text.split())
    assert fmt(out.audit.mean_dimension.estimate) in text
    assert fmt(best.mean_dimension_after.estimate) in text
    assert fmt(best.variance_identity.measured.estimate) in text
    assert fmt(out.rqmc_gain.rows[-1].ratio, 3) in text
    if out.freeze_group is not None:
        assert fmt(out.freeze_group.bound.estimate) in flat
        assert fmt(out.freeze_group.measured.estimate) in flat
    assert " ".join(CAUTION.split()) in flat
    md = markdown(res)
    assert fmt(best.mean_dimension_after.estimate) in md and CAUTION in md
    assert md.count("| input |") >= 1
    ascii_text = render(res, "ascii")
    assert ascii_text.isascii() and max(len(line) for line in ascii_text.splitlines()) <= 80


def test_markdown_export_has_the_numbers():
    from audit.report import build_report
    from audit.report.document import Table
    from audit.report.markdown import escape

    r = compare_models(_m(clifuncs.additive6), _m(clifuncs.additive6_plus_product), "normal", points=256, seed=6)
    md = markdown(r)
    for table in (b for b in build_report(r).blocks() if isinstance(b, Table)):
        for row in table.rows:
            for cell in row:
                assert escape(getattr(cell, "text", cell)) in md
    assert np.isfinite(r.outputs[0].mean_dimension_change.estimate)
