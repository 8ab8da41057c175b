"""netdim compare on the command line: the zoo's surrogates with pipeline gates, a surrogate against its simulator."""

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
ZOO = ROOT / "model_zoo"


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
    # a planted three-way term raises ν by 0.25 (clifuncs): the rise gate fails -> exit 3
    p = netdim(
        "compare", "clifuncs:additive6", "clifuncs:additive6_plus_product", "--dim", "6", "--points", "512",
        "--seed", "4", "--no-save", "--max-dimension-rise", "0.1",
    )  # fmt: skip
    assert p.returncode == 3 and "gate failed: " in p.stderr and "dimension_rise" in p.stderr


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
    assert "agreement" in p.stdout and "ranking" in p.stdout and "not a safety validation" in p.stdout
