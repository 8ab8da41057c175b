"""Tests of audit.report.commands: suggested command lines repeat the run's model and input options."""

from __future__ import annotations

import json
import shlex

from reportdata import make_result

from audit.cli.parser import build_parser
from audit.report.commands import DESIGN_DEFAULTS, input_options, run_options, suggest
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


def _with_options(**design) -> AuditResult:
    base = make_result()
    return AuditResult(base.model, base.inputs, {**base.design, "spec": "g.toml", **design}, base.outputs)


def test_suggestions_repeat_every_option_the_run_needed_and_the_parser_accepts_them():
    options = {
        "input_shape": {"image": [1, 8, 8], "extra": [3]},
        "torch_class": "pkg.nets:Net",
        "torch_arguments": {"hidden": 32, "name": "it's"},
        "trust": True,
        "layers": "body.1,body.3",
        "unit_detail": ["body.3"],
        "outputs": ["probabilities[1]", "probabilities[2]"],
    }
    result = _with_options(options=options, replicates=4, sampler="mc", estimator="fast")
    parser = build_parser()
    for verb in ("audit", "advise"):
        (line,) = suggest(result, verb, "--points 4096")
        args = parser.parse_args(shlex.split(line)[1:])
        assert args.command == verb and args.model == base_source(result) and args.inputs == "g.toml"
        assert args.input_shape == ["image=1,8,8", "extra=3"] and args.torch_class == "pkg.nets:Net"
        assert json.loads(args.torch_args) == options["torch_arguments"] and args.trust_pickle
        assert args.outputs == "probabilities[1],probabilities[2]" and args.points == 4096
        assert args.replicates == 4 and args.sampler == "mc"
        if verb == "audit":  # advise takes neither layers nor another estimator
            assert args.layers == "body.1,body.3" and args.unit_detail == ["body.3"] and args.estimator == "fast"
    one_shape = _with_options(options={"input_shape": [1, 8, 8]})
    (line,) = suggest(one_shape, "audit")
    assert parser.parse_args(shlex.split(line)[1:]).input_shape == ["1,8,8"]


def test_default_design_settings_are_left_out_and_match_the_library():
    from audit.studies.options import DesignOptions

    # the parser leaves them unset (so a baseline's design can stand); the library's defaults apply
    defaults = build_parser().parse_args(["audit", "m.onnx"])
    assert all(getattr(defaults, k) is None for k in DESIGN_DEFAULTS)
    assert {k: getattr(DesignOptions(), k) for k in DESIGN_DEFAULTS} == DESIGN_DEFAULTS
    plain = _with_options(replicates=8, sampler="sobol", estimator="jansen")
    assert run_options(plain, "audit") == []


def base_source(result: AuditResult) -> str:
    return str(result.model["source"])
