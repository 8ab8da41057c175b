"""Tests of audit.report.findings.layers: ν below 1, ν against depth, constant hidden units."""

from __future__ import annotations

import numpy as np
from reportdata import layer, make_result, render_text, squash

from audit.report.findings import derive_findings
from audit.report.findings.layers import CHAIN_LIMIT, below_one, dead_units, depth
from audit.report.ranges import BEYOND
from audit.report.text import fmt
from audit.results import AuditResult


def test_estimates_below_one_are_flagged_as_noise_and_not_clamped():
    nus = [0.97, 0.99, 1.1, 1.2, 1.3]  # 0.97 +- 0.01 lies below 1; 0.99 +- 0.01 reaches 1
    ly = layer("/body/body.0/Gemm_output_0", "Gemm", np.array(nus), inert=0)
    base = make_result()
    assert "below_one" not in {f.kind for f in derive_findings(base)}
    result = AuditResult(base.model, base.inputs, base.design, base.outputs, [ly])
    found = {f.kind: f for f in derive_findings(result)}
    below = found["below_one"]
    varying = sum(not o.inert for o in result.outputs) + len(nus)
    assert f"for 2 of {varying} units, all in {ly.name}" in below.text
    assert "1 interval lies entirely below 1" in below.text and f"lowest {fmt(0.97)}" in below.text
    assert "N = 1,024 points" in below.text and "sampling noise" in below.text
    text = render_text(result)
    assert f"{fmt(0.97)} {BEYOND} / " in text  # the layer's minimum, shown as estimated, its interval below 1
    assert squash(below.text) in squash(text)


def test_below_one_from_a_summary_only_layer_and_several_places():
    base = make_result()
    summary_only = layer("sub", "Relu", np.array([0.95, 1.2]), 0)
    summary_only = type(summary_only)(summary_only.name, "Relu", (2,), summary_only.summary, [])
    other = layer("top", "Relu", np.array([0.96, 1.3]), 0)
    result = AuditResult(base.model, base.inputs, {}, base.outputs, [summary_only, other])
    found = below_one(result)
    assert found.subjects == ("sub", "top") and "in sub, top (lowest 0.9500 in sub" in found.text
    assert "at this N" in found.text
    assert below_one(AuditResult(base.model, base.inputs, base.design, [], [])) is None


def test_depth_summary_also_when_nu_does_not_grow():
    base = make_result()
    flat = [
        layer("block1", "Relu", np.array([1.10, 1.15, 1.20]), 0),
        layer("block2", "Relu", np.array([1.12, 1.15, 1.18]), 0),
    ]
    result = AuditResult(base.model, base.inputs, base.design, base.outputs, flat)
    kinds = {f.kind: f for f in derive_findings(result)}
    assert "depth" not in kinds
    assert kinds["depth_flat"].subjects == ("block1", "block2")
    assert "does not grow with depth" in kinds["depth_flat"].text


def test_depth_growing_between_some_layers_and_long_chains():
    base = make_result()
    levels = [1.1, 1.1, 1.5, 1.5, 1.5, 1.5, 1.5, 1.5]
    layers = [layer(f"b{k}", "Relu", np.array([v, v]), 0) for k, v in enumerate(levels)]
    some = depth(AuditResult(base.model, base.inputs, base.design, base.outputs, layers))
    assert some.kind == "depth" and some.subjects == ("b1", "b2") and "between some layers" in some.text
    rising = [layer(f"c{k}", "Relu", np.array([1.0 + 0.1 * k] * 2), 0) for k in range(CHAIN_LIMIT + 3)]
    chain = depth(AuditResult(base.model, base.inputs, base.design, base.outputs, rising))
    assert "grows with depth" in chain.text and "… (4 more)" in chain.text and "c8" in chain.text
    assert depth(AuditResult(base.model, base.inputs, base.design, base.outputs, rising[:1])) is None


def test_dead_units_count_constant_units_per_layer():
    base = make_result()
    found = dead_units(base)
    assert found.subjects == ("encoder.relu1",) and "encoder.relu1 2 of 32" in found.text
    assert dead_units(AuditResult(base.model, base.inputs, base.design, base.outputs, [])) is None
