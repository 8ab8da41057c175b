"""``netdim slopes`` end to end: report, JSON contract, screening, user errors (exit 2)."""

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}


def netdim(*args):
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], capture_output=True, text=True, env=ENV, cwd=ROOT, timeout=300
    )


def test_slopes_prints_the_directions_and_saves_json(tmp_path):
    out = tmp_path / "s.json"
    p = netdim("slopes", "model_zoo/ridge_phi.pt", "--points", "256", "--replicates", "4", "--seed", "2",
               "--json", str(out))  # fmt: skip
    assert p.returncode == 0, p.stderr
    assert "Active directions of y" in p.stdout and "close to a ridge function of 1 direction" in p.stdout
    data = json.loads(out.read_text())
    assert data["kind"] == "slopes" and data["design"]["method"] == "autograd"
    assert data["outputs"][0]["directions"]["count"] == 1
    shown = netdim("show", str(out), "--format", "markdown")
    assert shown.returncode == 0 and "## Bounds on the total indices of y" in shown.stdout


def test_screening_from_the_command_line(tmp_path):
    p = netdim("slopes", "model_zoo/greenhouse_v1.onnx", "--inputs", "model_zoo/greenhouse_v1.toml", "--screen", "3",
               "--points", "128", "--replicates", "4", "--seed", "1", "--format", "json", "--no-save")  # fmt: skip
    assert p.returncode == 0, p.stderr
    data = json.loads(p.stdout)
    assert len(data["screening"]["kept"]) == 3 and len(data["screening"]["left_out"]) == 5
    assert data["screening"]["outputs"][0]["rest_bound"]["estimate"] > 0


def test_screening_everything_is_a_user_error():
    p = netdim("slopes", "model_zoo/additive.onnx", "--screen", "6", "--no-save")
    assert p.returncode == 2 and "--screen" in p.stderr and "Traceback" not in p.stderr
