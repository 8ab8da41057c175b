"""Every workflow honours --checkpoint and --cluster: a kill and a resume, or a local cluster,
give the numbers of one uninterrupted run in one process (to 1e-9 relative; the order of merging
blocks moves only the last bits)."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from reportdiff import differences

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
RTOL = 1e-9

COMPARE = [
    "compare", "clifuncs:slow_sum", "clifuncs:slow_sum_v2", "--dim", "3", "--law", "uniform",
    "--points", "128", "--replicates", "6", "--seed", "5",
]  # fmt: skip
ADVISE = [
    "advise", "clifuncs:slow_ridge", "--dim", "4", "--points", "128", "--replicates", "4", "--seed", "6",
    "--gain-points", "64,128", "--top", "1",
]  # fmt: skip


def _netdim(args, **kw):
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], env=ENV, cwd=ROOT, capture_output=True, text=True, timeout=600, **kw
    )


def _same(a: Path, b: Path) -> None:
    problems = differences(json.loads(a.read_text()), json.loads(b.read_text()), RTOL)
    assert not problems, "\n".join(problems[:10])


@pytest.mark.parametrize("args", [COMPARE, ADVISE], ids=["compare", "advise"])
def test_killed_run_resumes_to_the_uninterrupted_result(args, tmp_path):
    ckpt = tmp_path / "run.npz"
    run = [*args, "--checkpoint", str(ckpt), "--checkpoint-every", "0", "--quiet"]
    proc = subprocess.Popen(
        [sys.executable, "-m", "audit", *run, "--json", str(tmp_path / "killed.json")],
        env=ENV, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
    )  # fmt: skip
    deadline = time.time() + 120
    while not ckpt.exists() and time.time() < deadline:
        time.sleep(0.02)
    time.sleep(0.6)
    proc.send_signal(signal.SIGKILL)  # no chance to clean up: only what was saved survives
    proc.wait(timeout=30)
    assert ckpt.exists() and not (tmp_path / "killed.json").exists()  # killed half-way
    resumed = _netdim([*run, "--json", str(tmp_path / "resumed.json")])
    assert resumed.returncode in (0, 3), resumed.stderr
    fresh = _netdim([*args, "--quiet", "--json", str(tmp_path / "fresh.json")])
    assert fresh.returncode == resumed.returncode, fresh.stderr
    _same(tmp_path / "fresh.json", tmp_path / "resumed.json")


@pytest.mark.parametrize(
    "args",
    [
        ["compare", "model_zoo/greenhouse_v1.onnx", "model_zoo/greenhouse_v2.onnx",
         "--inputs", "model_zoo/greenhouse_v1.toml", "--points", "256", "--replicates", "4", "--seed", "7"],
        ["advise", "model_zoo/greenhouse_v1.onnx", "--inputs", "model_zoo/greenhouse_v1.toml",
         "--points", "128", "--replicates", "4", "--seed", "8", "--gain-points", "64,256", "--top", "2"],
    ],
    ids=["compare", "advise"],
)  # fmt: skip
def test_local_cluster_equals_one_process(args, tmp_path):
    here = _netdim([*args, "--quiet", "--json", str(tmp_path / "here.json")])
    assert here.returncode == 0, here.stderr
    there = _netdim([*args, "--quiet", "--cluster", "local:2", "--json", str(tmp_path / "there.json")])
    assert there.returncode == 0, there.stderr
    _same(tmp_path / "here.json", tmp_path / "there.json")


@pytest.mark.parametrize("command", ["audit", "compare", "advise"])
def test_bad_cluster_address_exits_2_naming_it(command):
    model = ["clifuncs:two_outputs"] * (2 if command == "compare" else 1)
    p = _netdim([command, *model, "--dim", "3", "--points", "64", "--no-save", "--cluster", "nowhere"])
    assert p.returncode == 2, p.stderr
    assert "'nowhere'" in p.stderr and "--cluster" in p.stderr and "Traceback" not in p.stderr
