"""SIGKILL at random moments, one of them during a checkpoint write, then the same command resumes.

A quick model with large sums (``killfuncs:wide``, 40 outputs) runs many small tasks with
``--checkpoint-every 0``, so most of its time goes to writing the checkpoint and random kills
land inside writes as well as between them. The moments come from a fixed seed; each is
counted from the moment the process has saved once (it is then past its start-up). After the
kills the same command finishes the run, and its report equals an uninterrupted run's to 1e-9
(relative; the order of merging blocks moves only the last bits). Common practice, no source.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from reportdiff import differences

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
RTOL = 1e-9
SEED = 20261202


def _command(replicates: int) -> list[str]:
    return ["audit", "killfuncs:wide", "--dim", "4", "--points", "64", "--replicates", str(replicates), "--seed",
            "11", "--quiet"]  # fmt: skip


def _popen(args: list[str]) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "audit", *args], env=ENV, cwd=ROOT, stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE, text=True,
    )  # fmt: skip


def _temporaries(ckpt: Path) -> list[Path]:
    return list(ckpt.parent.glob(f".{ckpt.name}.*.tmp.npz"))


def _saved_once(proc: subprocess.Popen, ckpt: Path, before: int | None) -> bool:
    """Wait until ``proc`` has written the checkpoint (its time stamp moved); False when it ended first."""
    deadline = time.time() + 120
    while time.time() < deadline and proc.poll() is None:
        if ckpt.exists() and ckpt.stat().st_mtime_ns != before:
            return True
        time.sleep(0.005)
    return False


def _kill_during_a_write(run: list[str], ckpt: Path) -> bool:
    """Start the run and SIGKILL it as soon as a checkpoint write has begun (its temporary file exists)."""
    proc = _popen(run)
    deadline = time.time() + 120
    while time.time() < deadline and proc.poll() is None:
        if ckpt.exists() and _temporaries(ckpt):
            proc.send_signal(signal.SIGKILL)
            break
        time.sleep(0.0005)
    proc.wait(timeout=30)
    left = bool(_temporaries(ckpt))  # what the killed write left behind; the next run sweeps it away
    return proc.returncode == -signal.SIGKILL and left


def _kill_and_resume(tmp_path: Path, kills: int, replicates: int, window: float) -> tuple[int, bool]:
    args = _command(replicates)
    ckpt = tmp_path / "run.npz"
    run = [*args, "--checkpoint", str(ckpt), "--checkpoint-every", "0", "--json", str(tmp_path / "resumed.json")]
    in_write = _kill_during_a_write(run, ckpt)
    moments = np.random.default_rng(SEED).uniform(0.0, window, kills - 1)
    landed = int(in_write)
    for moment in moments:
        before = ckpt.stat().st_mtime_ns if ckpt.exists() else None
        proc = _popen(run)
        if _saved_once(proc, ckpt, before):
            time.sleep(float(moment))
            if proc.poll() is None:
                proc.send_signal(signal.SIGKILL)  # no chance to clean up: only what was saved survives
                landed += 1
        proc.wait(timeout=60)
        assert proc.returncode in (0, -signal.SIGKILL), proc.stderr.read() if proc.stderr else ""
    resumed = subprocess.run([sys.executable, "-m", "audit", *run], env=ENV, cwd=ROOT, capture_output=True, text=True,
                             timeout=600)  # fmt: skip
    assert resumed.returncode == 0, resumed.stderr
    assert not _temporaries(ckpt)  # half-written copies of killed runs are removed by the next run
    fresh = subprocess.run([sys.executable, "-m", "audit", *args, "--json", str(tmp_path / "fresh.json")], env=ENV,
                           cwd=ROOT, capture_output=True, text=True, timeout=600)  # fmt: skip
    assert fresh.returncode == 0, fresh.stderr
    a, b = (json.loads((tmp_path / f).read_text()) for f in ("fresh.json", "resumed.json"))
    problems = differences(a, b, RTOL)
    assert not problems, "\n".join(problems[:10])
    assert a["design"]["replicates"] == b["design"]["replicates"] == replicates
    return landed, in_write


def test_three_kills_then_resume_equal_the_uninterrupted_run(tmp_path) -> None:
    landed, in_write = _kill_and_resume(tmp_path, kills=3, replicates=100, window=0.5)
    assert in_write, "the first kill did not land inside a checkpoint write"
    assert landed >= 2, f"only {landed} of 3 kills landed before the run ended"


@pytest.mark.slow
def test_twenty_kills_then_resume_equal_the_uninterrupted_run(tmp_path) -> None:
    landed, in_write = _kill_and_resume(tmp_path, kills=20, replicates=300, window=0.4)
    assert in_write, "the first kill did not land inside a checkpoint write"
    assert landed >= 15, f"only {landed} of 20 kills landed before the run ended"
