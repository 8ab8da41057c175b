"""The hardening cases of whole runs: checkpoints that cannot lie, work that is never lost or blocked.

Each case runs the command line (in this process, or as a process of its own where a signal,
a second process or a full disk is needed) and asserts the exit code, a phrase of the message
and no traceback; numbers of a resumed run equal those of an uninterrupted one to 1e-9
(relative: the order of merging blocks moves only the last bits). Common practice, no source.
"""

from __future__ import annotations

import errno
import io
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import netbuild
import onnx
import pytest
from onnx import numpy_helper
from reportdiff import differences

import audit.cli.output
from audit.cli import main

ROOT = Path(__file__).resolve().parents[2]
ENV = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT / "tests"), str(ROOT)])}
RTOL = 1e-9
SLOW = ["audit", "clifuncs:slow_sum", "--dim", "3", "--law", "uniform", "--points", "256", "--replicates", "12"]


def _netdim(args, **kw) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "audit", *args], env=ENV, cwd=ROOT, capture_output=True, text=True, timeout=600, **kw
    )


def _same(a: Path, b: Path) -> None:
    problems = differences(json.loads(a.read_text()), json.loads(b.read_text()), RTOL)
    assert not problems, "\n".join(problems[:10])


def _clean(err: str) -> None:
    assert "Traceback" not in err and "unexpected failure" not in err, err


def _start(args: list[str], ckpt: Path) -> subprocess.Popen:
    """A slow run, returned once its checkpoint holds finished work."""
    proc = subprocess.Popen(
        [sys.executable, "-m", "audit", *args], env=ENV, cwd=ROOT, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
        text=True,
    )  # fmt: skip
    deadline = time.time() + 120
    while not ckpt.exists() and time.time() < deadline and proc.poll() is None:
        time.sleep(0.02)
    assert ckpt.exists(), proc.stderr.read() if proc.poll() is not None else "no checkpoint in 120 s"
    return proc


# -- checkpoints that cannot lie -------------------------------------------------------------


def test_a_model_retrained_in_place_does_not_resume_an_old_checkpoint(tmp_path, capsys) -> None:
    model = netbuild.linear_graph(tmp_path / "m.onnx")
    ckpt = tmp_path / "c.npz"
    args = ["audit", str(model), "--points", "64", "--replicates", "2", "--seed", "3", "--quiet", "--no-save",
            "--checkpoint", str(ckpt)]  # fmt: skip
    assert main(args) == 0 and ckpt.exists()
    retrained = onnx.load(str(model))  # new weights, same file name, inputs and outputs
    weights = retrained.graph.initializer[0]
    weights.CopyFrom(numpy_helper.from_array(1.5 * numpy_helper.to_array(weights), weights.name))
    onnx.save(retrained, str(model))
    code = main(args)
    err = capsys.readouterr().err
    assert code == 2 and "belongs to a different run" in err and "model_sha256" in err, err
    _clean(err)


def test_a_run_without_a_seed_resumes_with_the_seed_it_recorded(tmp_path, capsys) -> None:
    ckpt = tmp_path / "c.npz"
    args = ["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--replicates", "3", "--quiet"]
    reports = [tmp_path / f"{k}.json" for k in "abc"]
    assert main([*args, "--checkpoint", str(ckpt), "--json", str(reports[0])]) == 0
    assert main([*args, "--checkpoint", str(ckpt), "--json", str(reports[1])]) == 0  # the same command
    assert main([*args, "--json", str(reports[2])]) == 0  # without the checkpoint: a fresh seed
    seeds = [json.loads(r.read_text())["design"]["seed"] for r in reports]
    assert seeds[0] == seeds[1] != seeds[2]
    _same(reports[0], reports[1])


def test_another_memory_limit_still_resumes(tmp_path, capsys) -> None:
    ckpt = tmp_path / "c.npz"
    args = ["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "256", "--replicates", "3", "--seed", "2",
            "--quiet", "--checkpoint", str(ckpt)]  # fmt: skip
    assert main([*args, "--memory-limit", "0.5", "--json", str(tmp_path / "a.json")]) == 0
    assert main([*args, "--memory-limit", "4", "--json", str(tmp_path / "b.json")]) == 0, capsys.readouterr().err
    _same(tmp_path / "a.json", tmp_path / "b.json")


def test_two_runs_on_one_checkpoint_the_second_is_refused(tmp_path) -> None:
    ckpt = tmp_path / "c.npz"
    args = [*SLOW, "--seed", "4", "--quiet", "--no-save", "--checkpoint", str(ckpt), "--checkpoint-every", "0"]
    first = _start(args, ckpt)
    try:
        second = _netdim(args)
    finally:
        first.send_signal(signal.SIGKILL)
        first.wait(timeout=30)
    assert second.returncode == 2, second.stderr
    assert "is in use by another netdim run" in second.stderr, second.stderr
    _clean(second.stderr)


def test_sigterm_exits_143_and_the_same_command_resumes(tmp_path) -> None:
    ckpt = tmp_path / "c.npz"
    args = [*SLOW, "--seed", "5", "--quiet", "--checkpoint", str(ckpt), "--checkpoint-every", "0"]
    proc = _start([*args, "--json", str(tmp_path / "a.json")], ckpt)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 143, err
    assert "checkpoint" in err, err
    _clean(err)
    resumed = _netdim([*args, "--json", str(tmp_path / "b.json")])
    assert resumed.returncode == 0, resumed.stderr
    fresh = _netdim([*SLOW, "--seed", "5", "--quiet", "--json", str(tmp_path / "c.json")])
    assert fresh.returncode == 0, fresh.stderr
    _same(tmp_path / "b.json", tmp_path / "c.json")


# -- clusters --------------------------------------------------------------------------------


def test_a_scheduler_given_by_address_finishes_and_writes_the_report(tmp_path) -> None:
    distributed = pytest.importorskip("distributed")
    args = ["audit", "clifuncs:two_outputs", "--dim", "3", "--points", "128", "--replicates", "4", "--seed", "6",
            "--quiet"]  # fmt: skip
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None, protocol="tcp", host="127.0.0.1"
    ) as c:
        port = c.scheduler_address.rsplit(":", 1)[1]
        there = _netdim([*args, "--cluster", f"localhost:{port}", "--json", str(tmp_path / "there.json")])
    assert there.returncode == 0, there.stderr
    _clean(there.stderr)
    here = _netdim([*args, "--json", str(tmp_path / "here.json")])
    assert here.returncode == 0, here.stderr
    _same(tmp_path / "here.json", tmp_path / "there.json")


# -- full disk -------------------------------------------------------------------------------


def _previous_report(tmp_path: Path) -> tuple[Path, str]:
    path = tmp_path / "r.json"
    assert main(["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "64", "--quiet", "--json", str(path)]) == 0
    return path, path.read_text()


def test_a_disk_full_midway_keeps_the_previous_report(tmp_path, capsys, monkeypatch) -> None:
    monkeypatch.chdir(ROOT)
    path, before = _previous_report(tmp_path)
    kept_dir = tmp_path / "tmp"
    kept_dir.mkdir()
    monkeypatch.setattr(audit.cli.output.tempfile, "tempdir", str(kept_dir))
    real_fdopen = os.fdopen

    class HalfFull(io.TextIOWrapper):
        """Writes half of what it is given, then the disk is full."""

        def write(self, text: str) -> int:
            super().write(text[: len(text) // 2])
            super().flush()
            raise OSError(errno.ENOSPC, "No space left on device")

    def fdopen(fd, mode="r", *args, **kwargs):
        if os.path.dirname(os.path.realpath(f"/proc/self/fd/{fd}")) == os.path.realpath(tmp_path):
            return HalfFull(real_fdopen(fd, "wb"), encoding="utf-8")  # the report's temporary file
        return real_fdopen(fd, mode, *args, **kwargs)

    monkeypatch.setattr(audit.cli.output.os, "fdopen", fdopen)
    code = main(["audit", "clifuncs:two_outputs", "--dim", "2", "--points", "128", "--quiet", "--json", str(path)])
    err = capsys.readouterr().err
    assert code == 2 and "No space left on device" in err and "Nothing is lost" in err, err
    _clean(err)
    assert path.read_text() == before and json.loads(before)["kind"] == "audit"  # intact and valid JSON
    kept = Path(err.split("saved to '")[1].split("'")[0])
    assert kept.parent == kept_dir and json.loads(kept.read_text())["design"]["points"] == 128
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.json", "tmp"]  # no half-written file left


def test_a_full_tmpfs_keeps_the_previous_report(tmp_path, monkeypatch) -> None:
    if shutil.which("unshare") is None or sys.platform != "linux":
        pytest.skip("needs Linux and unshare to mount a private tmpfs")
    probe = subprocess.run(["unshare", "-rm", "sh", "-c", f"mount -t tmpfs -o size=64k tmpfs '{tmp_path}'"],
                           capture_output=True, text=True)  # fmt: skip
    if probe.returncode != 0:
        pytest.skip(f"this machine does not allow mounting a tmpfs ({probe.stderr.strip()})")
    monkeypatch.chdir(ROOT)
    path, before = _previous_report(tmp_path)
    disk, out, kept = tmp_path / "disk", tmp_path / "out", tmp_path / "kept"
    for folder in (disk, out, kept):
        folder.mkdir()
    run = " ".join([sys.executable, "-m", "audit", "audit", "clifuncs:two_outputs", "--dim", "2", "--points", "128",
                    "--quiet", "--json", f"{disk}/r.json"])  # fmt: skip
    script = (
        f"mount -t tmpfs -o size=256k tmpfs '{disk}' && cp '{path}' '{disk}/r.json' && "
        f"(dd if=/dev/zero of='{disk}/fill' bs=4k 2>/dev/null; true) && "
        f"TMPDIR='{kept}' {run} 2>'{out}/err'; echo $? >'{out}/rc'; cp '{disk}/r.json' '{out}/r.json'; "
        f"ls -a '{disk}' >'{out}/ls'"
    )
    subprocess.run(["unshare", "-rm", "sh", "-c", script], env=ENV, cwd=ROOT, timeout=300, check=True)
    err = (out / "err").read_text()
    assert (out / "rc").read_text().strip() == "2", err
    assert "No space left on device" in err and "Nothing is lost" in err, err
    _clean(err)
    assert (out / "r.json").read_text() == before  # the previous report, intact and valid JSON
    assert json.loads(before)["kind"] == "audit"
    assert sorted((out / "ls").read_text().split()) == [".", "..", "fill", "r.json"]  # no temporary file left
    copy = Path(err.split("saved to '")[1].split("'")[0])
    assert copy.parent == kept and json.loads(copy.read_text())["design"]["points"] == 128
