"""Comparing two model versions on the same points, and the pipeline gates."""

import json
import os
import subprocess
import sys
from pathlib import Path

import clifuncs
import numpy as np
import pytest

from audit.errors import UserError
from audit.models.python import PythonModel
from audit.studies import Gates, compare_models

ROOT = Path(__file__).resolve().parent.parent
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
ZOO = ROOT / "model_zoo"


def _m(f, d=6):
    return PythonModel(f, d, source=f.__name__)


def test_model_against_itself_changes_nothing_and_passes():
    m = _m(clifuncs.additive6_plus_product)
    r = compare_models(
        m,
        m,
        "normal",
        points=256,
        replicates=8,
        seed=1,
        gates=Gates(max_dimension_rise=0.0, min_rank_agreement=1.0, max_index_shift=0.0),
    )
    o = r.outputs[0]
    e = o.mean_dimension_change
    assert (e.estimate, e.ci_low, e.ci_high) == (0.0, 0.0, 0.0)
    assert all(c.value.estimate == 0.0 for c in o.total_index_change)
    assert o.moved == [] and o.kendall_tau == pytest.approx(1.0)
    assert r.passed


def test_added_three_way_term_changes_nu_by_the_exact_amount():
    # Variance components by hand (common practice, no source): additive part Σ a_j² = 28, all of order 1;
    # 2 x0 x1 x2 adds variance 4 of order 3. ν_old = 1, ν_new = (28 + 3·4)/(28 + 4) = 1.25: change 0.25.
    r = compare_models(
        _m(clifuncs.additive6), _m(clifuncs.additive6_plus_product), "normal", points=2048, replicates=10, seed=2
    )
    e = r.outputs[0].mean_dimension_change
    assert e.covers(0.25), e
    assert e.ci_low > 0
    # inputs 0, 1, 2 gain total index: new (a_j² + 4)/32 against old a_j²/28
    moved = set(r.outputs[0].moved)
    assert {"x0", "x1", "x2"} <= moved


def test_common_random_numbers_narrow_the_interval():
    # Two versions of a retrained network (the zoo's greenhouse surrogates v1 and v2), paired (same
    # points) against independent points at equal cost: the interval of the ν change should be at
    # least 3× narrower for every output (the compare issue's target).
    from audit.inputs import load_spec
    from audit.models.open import open_model

    spec = load_spec(ZOO / "greenhouse_v1.toml")
    old, new = open_model(str(ZOO / "greenhouse_v1.onnx")), open_model(str(ZOO / "greenhouse_v2.onnx"))
    kw = dict(points=1024, replicates=10, seed=3, layers="none")
    paired = compare_models(old, new, spec, **kw)
    indep = compare_models(old, new, spec, paired=False, **kw)
    for a, b in zip(paired.outputs, indep.outputs, strict=True):
        ratio = b.mean_dimension_change.width / a.mean_dimension_change.width
        print(f"{a.name}: interval width, independent / paired = {ratio:.1f}")
        assert ratio >= 3.0


def test_signatures_must_match():
    with pytest.raises(UserError, match="different numbers of inputs"):
        compare_models(_m(clifuncs.additive6), _m(clifuncs.two_outputs, 5), "normal", points=64, seed=1)
    with pytest.raises(UserError, match="`output_map`"):
        compare_models(_m(clifuncs.additive6), _m(clifuncs.two_outputs), "normal", points=64, seed=1)
    r = compare_models(
        _m(clifuncs.additive6), _m(clifuncs.two_outputs), "normal", points=64, seed=1, output_map=[(0, 0)]
    )
    assert len(r.outputs) == 1


def netdim(*args):
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], capture_output=True, text=True, env=ENV, cwd=ROOT, timeout=300
    )


def test_greenhouse_surrogates_end_to_end_with_gates(tmp_path):
    spec = str(ZOO / "greenhouse_v1.toml")
    out = tmp_path / "c.json"
    p = netdim(
        "compare",
        str(ZOO / "greenhouse_v1.onnx"),
        str(ZOO / "greenhouse_v2.onnx"),
        "--inputs",
        spec,
        "--points",
        "512",
        "--seed",
        "4",
        "--json",
        str(out),
        "--max-dimension-rise",
        "0.1",
        "--min-rank-agreement",
        "0.6",
    )
    assert p.returncode == 0, p.stderr
    rep = json.loads(out.read_text())
    assert rep["kind"] == "comparison" and rep["gates"]["passed"] is True
    for o in rep["outputs"]:
        assert {"estimate", "ci_low", "ci_high"} <= set(o["mean_dimension_change"])
    again = netdim("show", str(out))
    assert again.returncode == 0 and again.stdout.strip() in p.stdout
    # a gate that cannot pass: ν may not fall at all (judged on the interval's lower end) -> exit 3
    p = netdim(
        "compare",
        str(ZOO / "greenhouse_v1.onnx"),
        str(ZOO / "greenhouse_v2.onnx"),
        "--inputs",
        spec,
        "--points",
        "512",
        "--seed",
        "4",
        "--no-save",
        "--max-dimension-rise",
        "-1",
    )
    assert p.returncode == 3 and "gate failed: max_dimension_rise" in p.stderr


def test_surrogate_against_its_simulator(tmp_path):
    spec = str(ZOO / "greenhouse_v1.toml")
    p = netdim(
        "compare",
        "model_zoo.greenhouse:simulate",
        str(ZOO / "greenhouse_v1.onnx"),
        "--inputs",
        spec,
        "--points",
        "512",
        "--seed",
        "5",
        "--no-save",
        "--format",
        "json",
        "--quiet",
    )
    assert p.returncode == 0, p.stderr
    p = netdim(
        "compare",
        "model_zoo.greenhouse:simulate",
        str(ZOO / "greenhouse_v1.onnx"),
        "--inputs",
        spec,
        "--points",
        "512",
        "--seed",
        "5",
        "--no-save",
        "--min-rank-agreement",
        "0.8",
    )
    assert p.returncode == 0, p.stderr
    assert "Kendall" in p.stdout and "not a safety validation" in p.stdout


def test_markdown_export_has_the_numbers():
    from audit.report import build_report, markdown
    from audit.report.document import Table
    from audit.report.markdown import escape

    r = compare_models(_m(clifuncs.additive6), _m(clifuncs.additive6_plus_product), "normal", points=256, seed=6)
    md = markdown(r)
    for table in (b for b in build_report(r).blocks() if isinstance(b, Table)):
        for row in table.rows:
            for cell in row:
                assert escape(getattr(cell, "text", cell)) in md
    assert np.isfinite(r.outputs[0].mean_dimension_change.estimate)
