"""Checkpoints (audit.checkpoint): the save interval, the lock, consistency checks and the fingerprint.

A checkpoint must resume a run to the numbers of an uninterrupted one, refuse a file that does
not belong to the run or that was edited, and never lose the previous file when a save fails.
"""

import errno
import os
import subprocess
import sys

import estimator_checks as checks
import numpy as np
import pytest

import audit.checkpoint
from audit.checkpoint import FORMAT, Checkpoint
from audit.design import Design
from audit.engine import Group, Task, iter_tasks, run
from audit.errors import UserError
from audit.estimators import FreezeError, PrefixMeans

LAWS = checks.LAWS
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


def _job(seed=1, points=256, replicates=2, func=checks.evaluator, name="test"):
    job = checks.job("jansen", Design(LAWS, points, replicates, seed), [Group("out", 3, True)], func)
    job.name = name
    return job


def _counting():
    """An evaluator that counts the design points it is asked for (5 model rows each)."""
    seen = []

    def func(x):
        seen.append(len(x) // 5)
        return checks.evaluator(x)

    return func, seen


def _same(a, b):
    for x, y in zip(a["out"], b["out"], strict=True):
        checks.assert_same(checks.finished(x), checks.finished(y))


def _complete(path, **kw):
    """A checkpoint holding the finished job ``_job(**kw)``."""
    with Checkpoint(path) as store:
        run(_job(**kw), block=64, checkpoint=store)
    return path


@pytest.mark.parametrize("overlap_from", [1 << 30, 0])  # sums formed here, or beside the next evaluation
def test_checkpoint_resume_after_failure_loses_nothing(tmp_path, monkeypatch, overlap_from):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", overlap_from)
    design = Design(LAWS, 512, 3, seed=9)
    groups = [Group("out", 3, True)]
    ckpt = tmp_path / "run.npz"
    calls = {"n": 0}

    def flaky(x):
        calls["n"] += 1
        if calls["n"] == 5:
            raise KeyboardInterrupt  # a kill in the middle of the run
        return checks.evaluator(x)

    with pytest.raises(KeyboardInterrupt), Checkpoint(ckpt, interval=0) as store:
        run(checks.job("jansen", design, groups, flaky), block=128, checkpoint=store)
    assert ckpt.exists()
    seen = []
    with Checkpoint(ckpt) as store:
        counting = checks.job("jansen", design, groups, lambda x: seen.append(1) or checks.evaluator(x))
        resumed = run(counting, block=128, checkpoint=store)
    total = len(list(iter_tasks(512, 3, 128)))
    assert len(seen) == total - 4  # only the unfinished tasks run again
    fresh = run(checks.job("jansen", design, groups), block=128)
    for a, b in zip(resumed["out"], fresh["out"], strict=True):
        np.testing.assert_allclose(a.finish(1).total, b.finish(1).total, rtol=1e-12)
        np.testing.assert_allclose(a.finish(1).first, b.finish(1).first, rtol=1e-12, atol=1e-14)


# ----------------------------------------------------------------------------- the save interval


@pytest.mark.parametrize("interval,saves", [(3600, 2), (0, 33)])
def test_saves_honour_the_interval(tmp_path, interval, saves):
    # 32 tasks: 2 randomizations of 256 points in blocks of 16. With a long interval the first
    # finished task is saved at once and the end once more; with interval 0 every task, then the end.
    seen = []
    with Checkpoint(tmp_path / "c.npz", interval=interval) as store:
        job = _job()
        assert len(list(iter_tasks(256, 2, 16))) == 32
        run(job, block=16, checkpoint=store, progress=lambda n, phase: seen.append(store.saves))
        assert store.saves == saves and store.failure is None
    # progress is reported before each save: after the first task nothing is saved yet
    assert seen[0] == 0 and seen[1] == 1
    assert seen[-1] == (1 if interval else 31)


def test_a_failing_run_saves_what_it_finished(tmp_path):
    func, _ = _counting()
    calls = []

    def failing(x):
        calls.append(1)
        if len(calls) == 3:
            raise RuntimeError("the model broke")
        return func(x)

    with Checkpoint(tmp_path / "c.npz", interval=3600) as store, pytest.raises(RuntimeError, match="broke"):
        run(_job(func=failing), block=64, checkpoint=store)
    assert store.saves == 2  # the first task at once, then the failure
    with Checkpoint(tmp_path / "c.npz") as store:
        assert store.job(_job()).rows_done == 2 * 64


# ----------------------------------------------------------------------------- the lock


def test_a_lock_held_by_a_live_process_refuses_a_second_run(tmp_path):
    path = tmp_path / "c.npz"
    holder = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        path.with_name("c.npz.lock").write_text(str(holder.pid))
        with pytest.raises(UserError, match=rf"in use by another netdim run \(process {holder.pid}\)"):
            Checkpoint(path)
    finally:
        holder.kill()
        holder.wait()
    # the holder is gone: its lock is stale and taken over
    with Checkpoint(path) as store:
        assert path.with_name("c.npz.lock").read_text() == str(os.getpid())
        store.save()
    assert not path.with_name("c.npz.lock").exists() and path.exists()  # close releases the lock, keeps the file


def test_another_process_is_refused_while_this_one_holds_the_checkpoint(tmp_path):
    path = tmp_path / "c.npz"
    script = (
        "import sys\nfrom audit.checkpoint import Checkpoint\nfrom audit.errors import UserError\n"
        "try:\n    Checkpoint(sys.argv[1])\nexcept UserError as e:\n    print(e)\n    sys.exit(2)\n"
    )
    with Checkpoint(path):
        p = subprocess.run([sys.executable, "-c", script, str(path)], capture_output=True, text=True, timeout=120)
    assert p.returncode == 2, p.stderr
    assert f"in use by another netdim run (process {os.getpid()})" in p.stdout


def test_a_second_checkpoint_in_the_same_process_is_refused(tmp_path):
    with Checkpoint(tmp_path / "c.npz"), pytest.raises(UserError, match="in use by another netdim run"):
        Checkpoint(tmp_path / "c.npz")


@pytest.mark.parametrize("content", ["", "not a pid", "0"])
def test_an_unreadable_lock_is_taken_over(tmp_path, content):
    path = tmp_path / "c.npz"
    path.with_name("c.npz.lock").write_text(content)
    with Checkpoint(path):
        assert path.with_name("c.npz.lock").read_text() == str(os.getpid())


def test_a_lock_of_a_process_that_is_gone_is_taken_over(tmp_path):
    gone = subprocess.Popen([sys.executable, "-c", "pass"])
    gone.wait()
    (tmp_path / "c.npz.lock").write_text(str(gone.pid))
    with Checkpoint(tmp_path / "c.npz"):
        assert (tmp_path / "c.npz.lock").read_text() == str(os.getpid())


def test_bad_places_and_intervals_are_refused(tmp_path):
    with pytest.raises(UserError, match="does not exist"):
        Checkpoint(tmp_path / "missing" / "c.npz")
    with pytest.raises(UserError, match="is a folder"):
        Checkpoint(tmp_path)
    for bad in (-1.0, float("nan"), float("inf")):
        with pytest.raises(UserError, match="`checkpoint_seconds`"):
            Checkpoint(tmp_path / "c.npz", interval=bad)
    assert not (tmp_path / "c.npz.lock").exists()


# ----------------------------------------------------------------------------- belonging to the run


def test_a_fingerprint_mismatch_names_what_changed(tmp_path):
    path = _complete(tmp_path / "c.npz", seed=1)
    with Checkpoint(path) as store:
        with pytest.raises(UserError) as e:
            store.job(_job(seed=2))
        assert "belongs to a different run: for 'test', seed: 1 then, 2 now" in e.value.message
        with pytest.raises(UserError, match="points: 256 then, 512 now") as e:
            store.job(_job(points=512, replicates=3))
        assert "replicates: 2 then, 3 now" in e.value.message
    with Checkpoint(path) as store:
        changed = _job()
        changed.identity = {"model_sha256": "abc"}
        with pytest.raises(UserError, match=r'model_sha256: "\(absent\)" then, "abc" now'):
            store.job(changed)


def _estimator_job(estimator, copies=2):
    design = Design(LAWS, 64, 2, seed=3, copies=copies)
    return checks.job(estimator, design, [Group("out", 3, False)])


@pytest.mark.parametrize(
    "before,after",
    [
        (lambda: _estimator_job(FreezeError(3, [[0]])), lambda: _estimator_job(FreezeError(3, [[1, 2]]))),
        (lambda: _estimator_job(PrefixMeans([16, 64]), 1), lambda: _estimator_job(PrefixMeans([32, 64]), 1)),
    ],
    ids=["freeze groups", "prefixes"],
)
def test_a_checkpoint_of_other_estimator_settings_is_refused(tmp_path, before, after):
    with Checkpoint(tmp_path / "c.npz") as store:
        run(before(), checkpoint=store)
    with Checkpoint(tmp_path / "c.npz") as store, pytest.raises(UserError, match="different run"):
        store.job(after())


# ----------------------------------------------------------------------------- edited files


def _edit(path, change):
    with np.load(path, allow_pickle=False) as z:
        data = {k: z[k] for k in z.files}
    change(data)
    with open(path, "wb") as f:
        np.savez(f, **data)


def _drop(prefix):
    return lambda data: [data.pop(k) for k in [k for k in data if k.startswith(prefix)]]


def _set_rows(data):
    meta = data["j0/s/0/1/meta"].copy()
    meta[3] -= 16
    data["j0/s/0/1/meta"] = meta


TAMPERED = {
    "sums disagree with the rows": (_set_rows, "for randomization 2 hold 240 rows but 256 are recorded"),
    "a randomization's sums missing": (_drop("j0/s/0/1/"), "the sums of 'out' for randomization 2 are missing"),
    "done shortened": (lambda d: d.update({"j0/done": d["j0/done"][:-1]}), "hold 256 rows but 192 are recorded"),
    "overlapping ranges": (
        lambda d: d.update({"j0/done": np.vstack([d["j0/done"], [[0, 32, 64]]])}),
        "finished rows of randomization 1 overlap",
    ),
    "rows beyond the design": (
        lambda d: d.update({"j0/done": np.vstack([d["j0/done"], [[1, 250, 64]]])}),
        "out of range",
    ),
    "wrong format string": (lambda d: d.update({"format": np.array("netdim checkpoint 1")}), "not written by this"),
    "fingerprint missing": (_drop("j0/fingerprint"), "malformed"),
    "malformed sums": (_drop("j0/s/0/0/mean"), "the sums of 'out' are malformed"),
    "a sum's value edited": (
        lambda d: d.update({"j0/s/0/0/mean": d["j0/s/0/0/mean"] + 1.0}),
        "do not match the consistency record",
    ),
}


@pytest.mark.parametrize("case", list(TAMPERED))
def test_an_edited_checkpoint_is_refused_before_any_work(tmp_path, case):
    change, needle = TAMPERED[case]
    path = _complete(tmp_path / "c.npz")
    _edit(path, change)
    before = path.read_bytes()
    func, seen = _counting()
    with pytest.raises(UserError, match="cannot be resumed") as e, Checkpoint(path) as store:
        run(_job(func=func), block=64, checkpoint=store)
    assert needle in e.value.message and "Delete it to start the run afresh" in e.value.message
    assert seen == [] and path.read_bytes() == before
    assert not path.with_name("c.npz.lock").exists()


def test_a_file_that_is_no_checkpoint_is_refused(tmp_path):
    path = tmp_path / "c.npz"
    path.write_bytes(os.urandom(200))
    with pytest.raises(UserError, match="not a readable checkpoint"):
        Checkpoint(path)
    assert not path.with_name("c.npz.lock").exists()


def test_a_checkpoint_too_large_to_read_is_refused(tmp_path, monkeypatch):
    path = _complete(tmp_path / "c.npz")
    monkeypatch.setattr(audit.checkpoint, "MAX_BYTES", 1000)
    with pytest.raises(UserError, match="it would expand to"):
        Checkpoint(path)


def test_the_format_string_is_written(tmp_path):
    with np.load(_complete(tmp_path / "c.npz"), allow_pickle=False) as z:
        assert str(z["format"]) == FORMAT and all(z[k].dtype != object for k in z.files)


# ----------------------------------------------------------------------------- writing


def test_a_failed_save_keeps_the_previous_file_and_says_why(tmp_path, monkeypatch):
    path = _complete(tmp_path / "c.npz", name="first")
    before = path.read_bytes()

    def full_disk(src, dst):
        raise OSError(errno.ENOSPC, "No space left on device")

    with Checkpoint(path, interval=0) as store:
        with monkeypatch.context() as m:
            m.setattr(audit.checkpoint.os, "replace", full_disk)
            second = run(_job(name="second"), block=64, checkpoint=store)  # the run itself goes on
            assert store.failure == "No space left on device" and store.saves == 0
        assert path.read_bytes() == before
        assert sorted(p.name for p in tmp_path.iterdir()) == ["c.npz", "c.npz.lock"]  # no temporary file left
        store.save()
        assert store.failure is None and store.saves == 1
    _same(second, run(_job(), block=64))
    with Checkpoint(path) as store:  # both jobs are in the file now
        assert store.job(_job(name="first")).rows_done == store.job(_job(name="second")).rows_done == 512


def test_jobs_of_an_earlier_run_are_kept_when_this_run_does_not_use_them(tmp_path):
    path = _complete(tmp_path / "c.npz", name="a")
    with Checkpoint(path) as store:
        run(_job(name="b"), block=64, checkpoint=store)
    func, seen = _counting()
    with Checkpoint(path) as store:
        resumed = run(_job(name="a", func=func), block=64, checkpoint=store)
    assert seen == []  # finished jobs are not evaluated again
    _same(resumed, run(_job(), block=64))


def test_resuming_with_another_block_size_gives_the_same_numbers(tmp_path):
    path = tmp_path / "c.npz"
    calls = []

    def killed(x):
        calls.append(1)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return checks.evaluator(x)

    with Checkpoint(path, interval=0) as store, pytest.raises(KeyboardInterrupt):
        run(_job(func=killed), block=64, checkpoint=store)
    func, seen = _counting()
    with Checkpoint(path) as store:
        resumed = run(_job(func=func), block=48, checkpoint=store)
    assert sum(seen) == 2 * 256 - 3 * 64  # only the rows that were missing
    _same(resumed, run(_job(), block=256))


def test_the_record_of_a_finished_job_holds_every_row(tmp_path):
    with Checkpoint(tmp_path / "c.npz") as store:
        run(_job(), block=128, checkpoint=store)
        record = store.records["test"]
        assert record.rows_done == 512 and len(record.done) == 4
        assert all(s.rows == 256 for s in record.sums["out"])


def test_an_interrupt_between_merging_two_groups_of_a_task_waits_until_the_task_is_recorded(tmp_path):
    import signal

    from audit.checkpoint import _SavedRecord

    job = checks.job("jansen", Design(LAWS, 64, 2, 1), [Group("out", 3, True), Group("h", 3, False)])
    record = _SavedRecord(job, {})
    merged = []

    class Part:
        rows = 64

        def __init__(self, name, interrupt):
            self.name, self.interrupt = name, interrupt

        def merge(self, other):
            merged.append(other.name)
            if other.interrupt:  # a Ctrl-C after the first group's merge, before the second's
                os.kill(os.getpid(), signal.SIGINT)

    record.add(Task(0, 0, 32), {"out": Part("out", False), "h": Part("h", False)})
    # Python's own Ctrl-C handler, whatever this process inherited (a shell's background job ignores SIGINT)
    before = signal.signal(signal.SIGINT, signal.default_int_handler)
    try:
        with pytest.raises(KeyboardInterrupt):
            record.add(Task(0, 32, 32), {"out": Part("out", True), "h": Part("h", False)})
    finally:
        signal.signal(signal.SIGINT, before)
    assert merged == ["out", "h"]  # both groups merged before the interrupt arrived ...
    assert [t.start for t in record.done] == [0, 32] and record.rows_done == 64  # ... and the task recorded once


def test_half_written_copies_of_a_killed_run_are_removed_when_the_checkpoint_opens(tmp_path):
    path = tmp_path / "run.npz"
    stale = tmp_path / ".run.npz.12345.tmp.npz"  # what a kill during a save leaves
    other = tmp_path / ".other.npz.12345.tmp.npz"  # another checkpoint's: not touched
    stale.write_bytes(b"partial")
    other.write_bytes(b"partial")
    with Checkpoint(path):
        assert not stale.exists() and other.exists()
