"""Tests of audit.report.commands: suggested command lines repeat the run's model and input options."""

from __future__ import annotations

import shlex

from reportdata import make_result

from audit.report.commands import input_options, suggest
from audit.results import AuditResult


def test_input_options_prefer_the_spec_then_a_standard_law_then_a_placeholder():
    base = make_result()
    assert input_options(base) == "--inputs SPEC.toml"  # uniform(0, 16) is no standard law
    spec = AuditResult(base.model, base.inputs, {**base.design, "spec": "my specs/g.toml"}, base.outputs)
    assert input_options(spec) == "--inputs 'my specs/g.toml'"
    normal = [{"name": f"x{j}", "law": "normal", "mean": 0.0, "sd": 1.0} for j in range(3)]
    py = AuditResult({"source": "pkg.mod:f", "format": "python"}, normal, {}, [])
    assert input_options(py) == "--law normal --dim 3"
    onnx = AuditResult({"source": "m.onnx", "format": "onnx"}, normal, {}, [])
    assert input_options(onnx) == "--law normal"
    uniform = AuditResult({"source": "m.onnx"}, [{"name": "x", "law": "uniform", "low": 0, "high": 1}], {}, [])
    assert input_options(uniform) == "--law uniform"


def test_suggest_quotes_the_model_and_needs_a_source():
    base = make_result()
    odd = AuditResult({"source": "models/my net.onnx", "format": "onnx"}, base.inputs, base.design, base.outputs)
    (line,) = suggest(odd, "audit", "--points 4096")
    assert shlex.split(line) == ["netdim", "audit", "models/my net.onnx", "--inputs", "SPEC.toml", "--points", "4096"]
    assert suggest(AuditResult({}, base.inputs, base.design, base.outputs), "advise") == ()
