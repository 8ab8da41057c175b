"""Two large blocks side by side (an evaluator whose model takes concurrent calls) change no number."""

from __future__ import annotations

import os
import threading

import estimator_checks as checks
import numpy as np
import pytest

import audit
from audit.design import Design
from audit.engine import Group, LocalExecutor, NonFiniteError, iter_tasks

pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


class _Twinned:
    """An evaluator like the ONNX one: ``concurrent`` gives a twin; records the threads it ran on."""

    def __init__(self, func=checks.evaluator, fail_at: np.ndarray | None = None) -> None:
        self.func, self.fail_at = func, fail_at  # fail_at: the first row of the block that gets a NaN
        self.threads: set[str] = set()
        self.calls = 0
        self.lock = threading.Lock()
        self.twin_of: int | None = None

    def concurrent(self, calls: int) -> _Twinned:
        twin = _Twinned(self.func, self.fail_at)
        twin.twin_of = calls
        self.last_twin = twin
        return twin

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        with self.lock:
            self.calls += 1
        self.threads.add(threading.current_thread().name)
        out = self.func(x)
        if self.fail_at is not None and np.array_equal(x[0], self.fail_at):
            y = out["out"].copy()
            y[0, 0] = np.nan
            out = {"out": y}
        return out


def _job(evaluator, points=512, replicates=2):
    design = Design(checks.LAWS, points, replicates, 7)
    return checks.job("jansen", design, [Group("out", 3, True)], evaluator)


@pytest.mark.parametrize("replicates", [1, 3])  # 1: consecutive blocks of one randomization from two threads
def test_blocks_side_by_side_give_the_sums_one_after_the_other(monkeypatch, replicates):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)
    tasks = list(iter_tasks(512, replicates, 32))
    inline = list(LocalExecutor(overlap=False).map(_job(checks.evaluator, replicates=replicates), tasks))
    ev = _Twinned()
    both = list(LocalExecutor(calls=2).map(_job(ev, replicates=replicates), tasks))
    assert [t for t, _ in both] == [t for t, _ in inline] == tasks
    for (_, a), (_, b) in zip(inline, both, strict=True):
        checks.assert_same(checks.finished(a["out"]), checks.finished(b["out"]), rtol=0.0)
    twin = ev.last_twin
    assert twin.twin_of == 2 and ev.calls == 0 and twin.calls == len(tasks)
    # in the executor's own threads (two of them unless the first finished each task before the next came)
    assert 1 <= len(twin.threads) <= 2 and all(name.startswith("netdim-blocks") for name in twin.threads)


def test_a_failure_side_by_side_comes_after_the_finished_tasks_before_it(monkeypatch):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)
    tasks = list(iter_tasks(512, 1, 64))  # 8 tasks; the 5th returns a NaN
    job = _job(checks.evaluator, replicates=1)
    fifth = job.design.block(0, tasks[4].start, tasks[4].n).A[0]
    job.evaluator = _Twinned(fail_at=fifth)
    done = []
    with pytest.raises(NonFiniteError):
        for task, _ in LocalExecutor(calls=2).map(job, tasks):
            done.append(task)
    assert done == tasks[:4]  # in order, none lost before the failure


def test_one_call_at_a_time_overlaps_instead(monkeypatch):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)
    ev = _Twinned()
    list(LocalExecutor(calls=1).map(_job(ev), list(iter_tasks(512, 2, 64))))
    assert not hasattr(ev, "last_twin") and ev.calls == 16


def test_an_onnx_audit_side_by_side_equals_the_inline_one(monkeypatch):
    """A network with hidden layers: every number of the report equal, the twin's sessions one thread each."""
    path = os.path.join(os.path.dirname(audit.__file__), os.pardir, "model_zoo", "greenhouse_v1.onnx")
    model = audit.open_model(path)
    kwargs = dict(points=256, replicates=4, seed=3, layers="all")
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 1 << 62)
    inline = audit.audit_model(model, "uniform", **kwargs)
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    both = audit.audit_model(model, "uniform", **kwargs)
    assert model._twins and all(t._threads == 1 for t in model._twins.values())
    a, b = inline.to_dict(), both.to_dict()
    assert a["outputs"] == b["outputs"] and a["layers"] == b["layers"]
    assert b["layers"], "the audit captured hidden layers"
