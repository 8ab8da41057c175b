"""A workflow's run of the engine (audit.studies.session): executor, checkpoint and progress, opened and closed once."""

import errno

import estimator_checks as checks
import numpy as np
import pytest

import audit.checkpoint
import audit.cluster
from audit import audit_function
from audit.cluster import DaskExecutor
from audit.design import Design
from audit.engine import Group, run_task
from audit.errors import UserError
from audit.studies.options import RunOptions
from audit.studies.session import Session
from model_zoo import functions as fz

KW = dict(points=256, replicates=4, seed=3)


class _Counting:
    """An engine executor: an object with ``map(job, tasks)``."""

    def __init__(self):
        self.jobs, self.tasks = [], 0

    def map(self, job, tasks):
        self.jobs.append(job.name)
        for t in tasks:
            self.tasks += 1
            yield t, run_task(job, t)


def _nus(result):
    return [o.mean_dimension.estimate for o in result.outputs]


def test_an_executor_object_runs_every_task():
    executor = _Counting()
    there = audit_function(fz.g_function, "uniform", dim=8, cluster=executor, block=64, **KW)
    here = audit_function(fz.g_function, "uniform", dim=8, block=64, **KW)
    assert executor.jobs == ["audit"] and executor.tasks == 4 * 4
    assert _nus(there) == pytest.approx(_nus(here), rel=1e-12)


def test_a_client_is_wrapped_and_left_open():
    class Client:
        closed = False

        def map(self, *a):
            raise AssertionError("a client is not an engine executor")

        def scheduler_info(self):
            return {"workers": {}}

        def close(self):
            self.closed = True

    client = Client()
    with Session(RunOptions(cluster=client)) as session:
        assert isinstance(session.executor, DaskExecutor) and session.executor.client is client
    assert not client.closed and session.notices == []  # the caller opened it, the caller closes it


def test_a_cluster_the_session_opened_is_closed_and_a_failure_becomes_a_notice(monkeypatch):
    class Client:
        cluster = None

        def close(self):
            raise OSError("scheduler gone")

    monkeypatch.setattr(audit.cluster, "connect", lambda address: Client())
    with Session(RunOptions(cluster="tcp://nowhere:1")) as session:
        assert isinstance(session.executor, DaskExecutor)
    assert session.notices == ["The cluster did not close cleanly (OSError: scheduler gone); the results are complete."]


def test_a_checkpoint_write_failure_becomes_a_notice(tmp_path, monkeypatch):
    def full_disk(src, dst):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(audit.checkpoint.os, "replace", full_disk)
    path = tmp_path / "c.npz"
    r = audit_function(fz.g_function, "uniform", dim=8, checkpoint=path, **KW)
    assert any(
        n == f"The checkpoint '{path}' could not be written (No space left on device); the run finished without it."
        for n in r.notices
    ), r.notices
    assert not path.exists() and not (tmp_path / "c.npz.lock").exists()
    monkeypatch.undo()
    assert _nus(r) == pytest.approx(_nus(audit_function(fz.g_function, "uniform", dim=8, **KW)), rel=1e-12)


def test_the_checkpoint_takes_the_interval_and_is_released(tmp_path):
    with Session(RunOptions(checkpoint=tmp_path / "c.npz", checkpoint_seconds=0)) as session:
        assert session.checkpoint.interval == 0.0 and (tmp_path / "c.npz.lock").exists()
    assert session.checkpoint is None and not (tmp_path / "c.npz.lock").exists()


def test_a_failure_while_opening_releases_what_was_taken(tmp_path):
    options = RunOptions(cluster="local:x", checkpoint=tmp_path / "c.npz")
    with pytest.raises(UserError, match="worker processes"), Session(options):
        pass
    assert not (tmp_path / "c.npz.lock").exists()


def test_progress_is_labelled_by_phase():
    seen = []
    design = Design(checks.LAWS, 64, 2, seed=1)
    job = checks.job("jansen", design, [Group("out", 3)])
    with Session(RunOptions(progress=lambda n, phase: seen.append((n, phase)), block=32)) as session:
        sums = session.run(job, label="pre-integrating x1")
    assert [p for _, p in seen] == [f"pre-integrating x1, test, randomization {r}/2" for r in (1, 1, 2, 2)]
    assert sum(n for n, _ in seen) == job.evaluations and all(s.rows == 64 for s in sums["out"])
    assert np.isfinite(sums["out"][0].finish(0).total_sum).all()
