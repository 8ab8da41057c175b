"""Tests of audit.report.findings.audit: the rules of thumb for outputs and inputs.

The finding thresholds tested here are the module's own rules of thumb
(common practice, no source).
"""

from __future__ import annotations

import numpy as np
from reportdata import N_FEATURES, THRESHOLD, grid_result, make_result, output, render_text, squash

from audit.report import markdown
from audit.report.findings import derive_findings
from audit.report.findings.audit import freezable_inputs
from audit.report.terms import name_first
from audit.report.text import LIST_LIMIT
from audit.results import AuditResult


def test_findings_follow_the_rules_of_thumb():
    result = make_result()
    found = {f.kind: f for f in derive_findings(result, threshold=THRESHOLD)}
    assert found["inert"].subjects == ("alarm_flag",)
    # nu upper end 1.02 * 1.004 < 1.1
    assert found["additive"].subjects == ("inside_temperature",)
    # nu ~ 3 > 1.5 and additive share < 0.7
    assert "inside_humidity" in found["interactions"].subjects
    assert "inside_temperature" not in found["interactions"].subjects
    # relative half-width 0.25 > 0.10; advice is four times the points
    assert found["uncertain"].subjects == ("condensation_risk",)
    assert "N = 4,096 points instead of 1,024" in found["uncertain"].text
    assert "1/√N" in found["uncertain"].text
    # x11..x24 stay below 0.001 at the upper end for every varying output
    assert found["freezable"].subjects == tuple(f"x{j:02d}" for j in range(11, N_FEATURES + 1))
    # layer nu grows from about 1.15 to about 1.75
    assert found["depth"].subjects == ("encoder.relu1", "encoder.relu2")
    assert found["dead_units"].subjects == ("encoder.relu1",)
    text = squash(render_text(result))
    for f in found.values():  # as written, or with ν named at the section's first mention
        assert squash(f.text) in text or squash(name_first(f.text)[0]) in text


def test_findings_keep_their_fixed_order():
    kinds = [f.kind for f in derive_findings(make_result())]
    order = ["inert", "additive", "interactions", "freezable", "freezable_some", "uncertain", "no_interval",
             "below_one", "depth", "depth_flat", "dead_units", "next"]  # fmt: skip
    assert kinds == [k for k in order if k in kinds] and len(kinds) == len(set(kinds))


def test_no_findings_for_a_plain_result():
    totals = np.array([0.6, 0.3, 0.1] + [0.01] * (N_FEATURES - 3))  # nu = 1.21
    o = output("y", 1.0, totals, None, 0.01)
    result = AuditResult({"source": "f", "format": "python"}, [], {"points": 256}, [o])
    assert derive_findings(result) == []
    assert "Nothing stands out" in render_text(result)


def test_plain_monte_carlo_names_its_own_rate():
    base = make_result()
    mc = AuditResult(base.model, base.inputs, {**base.design, "sampler": "mc"}, base.outputs)
    uncertain = next(f for f in derive_findings(mc) if f.kind == "uncertain")
    assert "the plain Monte Carlo error falls like 1/√N" in uncertain.text
    bare = AuditResult(base.model, base.inputs, {}, base.outputs)
    uncertain = next(f for f in derive_findings(bare) if f.kind == "uncertain")
    assert "four times the current points" in uncertain.text and uncertain.commands == ()


def test_findings_stay_short_for_many_outputs_and_inputs():
    # 9 inputs freezable for some outputs only; input 7 for four outputs, input 56 for three
    freezable = {0: [7, 15], 1: [7, 56], 2: [7, 0, 56], 3: [7, 63], 4: [56, 23], 5: [31], 6: [39],
                 7: [47]}  # fmt: skip
    result = grid_result(freezable)
    found = {f.kind: f for f in derive_findings(result)}
    some = found["freezable_some"]
    named = {f"pixel_{j // 8}_{j % 8}" for js in freezable.values() for j in js}
    assert set(some.subjects) == named and len(named) == 9
    listed = [n for n in named if n in some.text]
    assert len(listed) == LIST_LIMIT
    assert f"and {len(named) - LIST_LIMIT} more inputs" in some.text
    assert "pixel_0_7 for 4 of 10 outputs" in some.text  # most outputs first
    assert "pixel_7_0 for 3 of 10 outputs" in some.text
    assert "freezable" not in found  # no input is freezable for every output
    assert all(len(f.text) < 500 for f in found.values())
    # freezing advice comes with the command to ask for it
    assert found["next"].commands == ("netdim advise model_zoo/digits_cnn.onnx --inputs SPEC.toml",)
    everywhere, per_output = freezable_inputs(result, THRESHOLD)
    assert everywhere == [] and per_output["digit_0"] == ["pixel_0_7", "pixel_1_7"]


def test_next_step_commands_follow_the_findings():
    result = make_result()  # interactions, freezable inputs and a wide interval
    found = {f.kind: f for f in derive_findings(result)}
    advise = "netdim advise model_zoo/greenhouse_v1.onnx --inputs SPEC.toml"
    assert found["next"].commands == (advise,)
    assert "pre-integrate" in found["next"].text and "freezing" in found["next"].text
    assert found["uncertain"].commands == (
        "netdim audit model_zoo/greenhouse_v1.onnx --inputs SPEC.toml --points 4096",
    )
    text = render_text(result)
    assert advise in [line.strip() for line in text.splitlines()]
    assert f"`{advise}`" in markdown(result)
    # the spec file, when the run recorded it, replaces the placeholder (quoted for the shell)
    spec = AuditResult(result.model, result.inputs, {**result.design, "spec": "my specs/g.toml"},
                       result.outputs, result.layers)  # fmt: skip
    assert derive_findings(spec)[-1].commands == (
        "netdim advise model_zoo/greenhouse_v1.onnx --inputs 'my specs/g.toml'",
    )
    # standard normal inputs of a Python callable are reproduced by --law and --dim
    normal = [{"name": i["name"], "law": "normal", "mean": 0.0, "sd": 1.0} for i in result.inputs]
    py = AuditResult({"source": "pkg.mod:f", "format": "python"}, normal, result.design,
                     result.outputs, result.layers)  # fmt: skip
    assert derive_findings(py)[-1].commands == (f"netdim advise pkg.mod:f --law normal --dim {N_FEATURES}",)
