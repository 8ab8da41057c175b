"""The engine (audit.engine): tasks, evaluation, checks of the model's answers, executors and the memory plan."""

import itertools
from collections.abc import Iterator

import estimator_checks as checks
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit.design import Design
from audit.engine import Group, Job, LocalExecutor, NonFiniteError, Task, iter_tasks, run, run_task
from audit.errors import UserError
from audit.estimators import make_estimator
from audit.inputs import Law
from audit.memory import MAX_ROWS, _bytes_per_point, available_memory, estimate_memory, plan_block

LAWS = checks.LAWS
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


def _job(points=256, replicates=2, seed=1, func=checks.evaluator, groups=None, estimator="jansen", sampler="sobol"):
    design = Design(LAWS, points, replicates, seed, sampler)
    return checks.job(estimator, design, groups or [Group("out", 3, True)], func)


# ----------------------------------------------------------------------------- tasks


@st.composite
def _finished(draw):
    """points, replicates, block and non-overlapping finished ranges (start, n) per randomization."""
    points = draw(st.integers(1, 300))
    replicates = draw(st.integers(1, 3))
    block = draw(st.integers(1, 70))
    done = {}
    for rep in range(replicates):
        cuts = sorted(draw(st.sets(st.integers(0, points), max_size=8)) | {0, points})
        spans = [(a, b - a) for a, b in itertools.pairwise(cuts) if b > a]
        done[rep] = [s for s in spans if draw(st.booleans())]
    return points, replicates, block, done


@settings(max_examples=200, deadline=None)
@given(_finished())
def test_tasks_cover_every_row_exactly_once_around_finished_ranges(case):
    points, replicates, block, done = case
    covered = np.zeros((replicates, points), dtype=int)
    for rep, spans in done.items():
        for start, n in spans:
            covered[rep, start : start + n] += 1
    tasks = list(iter_tasks(points, replicates, block, done))
    for t in tasks:
        assert 1 <= t.n <= block and t.start >= 0 and t.start + t.n <= points
        covered[t.rep, t.start : t.start + t.n] += 1
    assert np.all(covered == 1)
    assert [t.rep for t in tasks] == sorted(t.rep for t in tasks)  # randomization by randomization


@pytest.mark.parametrize("block", [1, 3, 64, 100, 256, 1000])
def test_tasks_of_a_fresh_run_are_consecutive_blocks(block):
    tasks = list(iter_tasks(256, 2, block))
    assert [(t.rep, t.start) for t in tasks] == [(r, s) for r in range(2) for s in range(0, 256, block)]
    assert sum(t.n for t in tasks) == 512


def test_tasks_are_generated_lazily():
    tasks = iter_tasks(2**50, 10**6, 1)
    assert isinstance(tasks, Iterator)
    assert list(itertools.islice(tasks, 3)) == [Task(0, 0, 1), Task(0, 1, 1), Task(0, 2, 1)]


def test_a_finished_run_has_no_tasks_left():
    assert list(iter_tasks(64, 2, 16, {0: [(0, 64)], 1: [(32, 32), (0, 32)]})) == []


# ----------------------------------------------------------------------------- one task


def _bad_row_evaluator(bad_point: int):
    """The Ishigami evaluator returning NaN on the model row of one design point's f(A)."""

    def func(x):
        y = checks.evaluator(x)["out"].copy()
        y[bad_point, 1] = np.nan
        return {"outputs": y}

    return func


def test_non_finite_outputs_name_an_example_row():
    job = _job(func=_bad_row_evaluator(5), groups=[Group("outputs", 3)])
    job.feature_names = ["temperature", "wind", "sun"]
    block = job.design.block(0, 0, 16)
    with pytest.raises(NonFiniteError) as e:
        run_task(job, Task(0, 0, 16))
    row = block.A[5]
    example = f"temperature={row[0]:.6g}, wind={row[1]:.6g}, sun={row[2]:.6g}"
    assert f"(e.g. {example})" in e.value.message
    assert "in its outputs for 1 of 80 sampled input rows" in e.value.message
    assert "bounded laws" in e.value.message and isinstance(e.value, UserError)


def test_non_finite_values_of_a_layer_name_the_layer_and_default_feature_names():
    def func(x):
        return {"out": checks.evaluator(x)["out"], "layer:dense/1": np.full((len(x), 2), np.inf)}

    job = _job(func=func, groups=[Group("out", 3), Group("layer:dense/1", 2)])
    with pytest.raises(NonFiniteError, match=r"in its layer 'dense/1' for 80 of 80 sampled input rows \(e\.g\. x0="):
        run_task(job, Task(0, 0, 16))


def test_many_inputs_are_shortened_in_the_example():
    design = Design([Law("normal")] * 20, 8, 1, seed=1)
    job = checks.job("hashed", design, [Group("y", 1)], lambda x: {"y": np.log(x[:, :1])})
    with pytest.raises(NonFiniteError) as e, np.errstate(invalid="ignore", divide="ignore"):
        run_task(job, Task(0, 0, 8))
    assert "x11=" in e.value.message and "x12=" not in e.value.message and " ...)" in e.value.message


def test_the_unit_count_and_the_group_names_are_checked():
    job = _job(func=lambda x: {"out": checks.evaluator(x)["out"][:, :2]})
    with pytest.raises(ValueError, match="group 'out': expected 3 units, the evaluator returned 2"):
        run_task(job, Task(0, 0, 16))
    job = _job(func=lambda x: {"other": checks.evaluator(x)["out"]})
    with pytest.raises(KeyError, match="no array named 'out'"):
        run_task(job, Task(0, 0, 16))


def test_run_task_hands_the_evaluator_rows_of_the_job_dtype():
    seen = []

    def func(x):
        seen.append(x.dtype)
        return checks.evaluator(x)

    job = _job(func=func)
    job.dtype = np.float32
    sums = run_task(job, Task(1, 16, 16))["out"]
    assert seen == [np.float32] and sums.rows == 16


# ----------------------------------------------------------------------------- executors and runs


def test_local_executor_runs_the_tasks_in_order():
    job = _job()
    tasks = list(iter_tasks(256, 2, 64))
    done = list(LocalExecutor().map(job, tasks))
    assert [t for t, _ in done] == tasks
    assert all(set(part) == {"out"} and part["out"].rows == 64 for _, part in done)


class _Reversed:
    """An executor that finishes tasks in the opposite order (as a cluster may)."""

    def __init__(self):
        self.tasks = 0

    def map(self, job, tasks):
        tasks = list(tasks)
        self.tasks += len(tasks)
        for t in reversed(tasks):
            yield t, run_task(job, t)


def test_any_executor_and_order_give_the_same_numbers():
    executor = _Reversed()
    there = run(_job(replicates=3), block=32, executor=executor)
    here = run(_job(replicates=3), block=32)
    assert executor.tasks == 24
    for a, b in zip(there["out"], here["out"], strict=True):
        checks.assert_same(checks.finished(a), checks.finished(b))


class _Dropping:
    def map(self, job, tasks):
        for t in list(tasks)[1:]:
            yield t, run_task(job, t)


def test_a_run_missing_rows_is_an_error_not_a_result():
    with pytest.raises(RuntimeError, match="ended with randomizations missing rows"):
        run(_job(), block=64, executor=_Dropping())


def test_progress_counts_every_model_evaluation_once():
    calls = []
    job = _job(replicates=3)
    job.cost = 4
    run(job, block=64, progress=lambda n, phase: calls.append((n, phase)))
    assert sum(n for n, _ in calls) == job.evaluations == 256 * 3 * 5 * 4
    assert calls[0][1] == "test, randomization 1/3" and calls[-1][1] == "test, randomization 3/3"


def test_the_estimator_refuses_its_design_before_any_work():
    seen = []
    job = _job(points=2, func=lambda x: seen.append(1) or checks.evaluator(x), estimator="fast")
    with pytest.raises(UserError, match="at least as many points as inputs"):
        run(job)
    assert seen == []


def test_block_size_does_not_change_monte_carlo_numbers():
    a = run(_job(points=200, sampler="mc"), block=50)
    b = run(_job(points=200, sampler="mc"), block=200)
    for x, y in zip(a["out"], b["out"], strict=True):
        checks.assert_same(checks.finished(x), checks.finished(y))


def test_the_fingerprint_leaves_out_how_rows_are_split():
    job = _job()
    fp = job.fingerprint()
    assert {"points", "replicates", "seed", "sampler", "estimator", "groups", "laws", "cost"} <= set(fp)
    assert fp["groups"] == [["out", 3, True]] and "block" not in fp
    job.identity = {"model_sha256": "x"}
    assert job.fingerprint()["model_sha256"] == "x"


# ----------------------------------------------------------------------------- memory


def _memory_job(groups, d=8, replicates=8, cost=1):
    design = Design([Law("normal")] * d, 1024, replicates, seed=1)
    return Job("m", None, design, make_estimator("jansen", d=d), groups, cost=cost)


def test_estimated_memory_grows_with_groups_detail_replicates_and_block():
    one = estimate_memory(_memory_job([Group("outputs", 2)]), 256)
    two = estimate_memory(_memory_job([Group("outputs", 2), Group("layer:h", 64, False)]), 256)
    detailed = estimate_memory(_memory_job([Group("outputs", 2), Group("layer:h", 64, True)]), 256)
    more_reps = estimate_memory(_memory_job([Group("outputs", 2), Group("layer:h", 64, True)], replicates=32), 256)
    assert one < two < detailed < more_reps
    job = _memory_job([Group("outputs", 2)])
    assert estimate_memory(job, 64) < estimate_memory(job, 256) < estimate_memory(job, 1024)
    # the sums alone: every randomization (plus two in flight) holds the estimator's state
    assert estimate_memory(job, 0) == 8 * job.estimator.state_size(2, True) * (8 + 2)
    # a pre-integrated model expands each row into its Gauss nodes
    assert estimate_memory(_memory_job([Group("outputs", 2)], cost=32), 64) > estimate_memory(job, 64)


@pytest.mark.parametrize("budget", [10**3, 10**5, 10**6, 10**8, 10**12])
@pytest.mark.parametrize("units,rows", [(1, 5), (100, 10), (2000, 2)])
def test_plan_block_respects_the_budget(budget, units, rows):
    per = _bytes_per_point(8, units, rows)
    n = plan_block(2**20, 8, units, rows, budget)
    assert n >= 1 and n & (n - 1) == 0  # a power of two
    assert n * per <= budget or n == 1  # fits, unless not even one point does
    assert n * rows <= MAX_ROWS  # a task evaluates at most MAX_ROWS model rows
    if n * rows * 2 <= MAX_ROWS and n < 2**20:
        assert 2 * n * per > budget  # the largest such power of two
    assert plan_block(64, 8, units, rows, budget) <= 64


def test_plan_block_defaults_to_a_share_of_the_available_memory(monkeypatch):
    monkeypatch.setattr("audit.memory.available_memory", lambda: 1 << 30)
    per = _bytes_per_point(8, 5000, 10)
    n = plan_block(2**20, 8, 5000, 10)
    assert n * per <= (1 << 30) // 4 < 2 * n * per  # MEMORY_SHARE = 1/4


def test_available_memory_is_a_positive_number_of_bytes():
    assert available_memory() > 1 << 20


def test_plan_block_caps_a_default_block_whatever_memory_is_free(monkeypatch):
    from audit.memory import BLOCK_BYTES

    monkeypatch.setattr("audit.memory.available_memory", lambda: 1 << 40)
    per = _bytes_per_point(64, 1034, 66, native=True)
    n = plan_block(2**20, 64, 1034, 66, native=True)
    assert n * per <= BLOCK_BYTES < 2 * n * per
    # an estimator taking the model's own floats needs less per point than one copying to float64
    assert _bytes_per_point(64, 1034, 66, native=True) < _bytes_per_point(64, 1034, 66)


# ----------------------------------------------------------------------------- the model's own floats


def _float32_job(func, groups, detail=True, replicates=2, points=128):
    design = Design(LAWS, points, replicates, 3)
    job = checks.job("jansen", design, [Group(g, 3, detail) for g in groups], func)
    job.dtype = np.float32
    return job


def _sums_32_and_64(func, block=32, points=128):
    def as32(x):
        return {"out": func(x).astype(np.float32)}

    def as64(x):
        return {"out": func(x).astype(np.float32).astype(np.float64)}

    jobs = [_float32_job(f, ["out"], detail, points=points) for f in (as32, as64) for detail in (True, False)]
    return [run(job, block=block)["out"] for job in jobs]


def test_float32_outputs_give_the_sums_of_their_float64_copy_bit_for_bit():
    """With per-input detail the Jansen sums take float32 rows as they are; their float64 copy gives the
    same sums exactly."""
    a, _, b, _ = _sums_32_and_64(lambda x: checks.evaluator(x)["out"])
    for x, y in zip(a, b, strict=True):
        checks.assert_same(checks.finished(x), checks.finished(y), rtol=0.0)


@pytest.mark.parametrize("block", [32, 4096])  # one partial sum per block, and several of F32_ROWS rows
def test_float32_sums_without_detail_are_within_1e_6_of_float64(block):
    """Without detail (hidden layers) float32 differences are summed in float32 over at most F32_ROWS
    rows: within 1e-6 relative of the float64 sums (the documented bound)."""
    _, a, _, b = _sums_32_and_64(lambda x: checks.evaluator(x)["out"], block, points=4096)
    for x, y in zip(a, b, strict=True):
        checks.assert_same(checks.finished(x), checks.finished(y), rtol=1e-6)


def test_float32_squares_that_overflow_are_summed_in_float64():
    # differences of about 1e20 square beyond float32's 3.4e38: the block is summed in float64 instead
    _, a, _, b = _sums_32_and_64(lambda x: 1e20 * checks.evaluator(x)["out"])
    for x, y in zip(a, b, strict=True):
        assert np.isfinite(x.finish(0).total_sum).all()
        checks.assert_same(checks.finished(x), checks.finished(y), rtol=1e-12)


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
@pytest.mark.parametrize("detail", [True, False])
def test_non_finite_float32_values_are_found_through_the_sums(bad, detail):
    def func(x):
        y = checks.evaluator(x)["out"].astype(np.float32)
        y[len(y) - 3, 2] = bad  # a row of the last swapped input, which only the differences see
        return {"out": y}

    job = _float32_job(func, ["out"], detail)
    with pytest.raises(NonFiniteError, match="for 1 of 80 sampled input rows"):
        run_task(job, Task(0, 0, 16))


def test_outputs_whose_squares_overflow_are_refused_not_called_constant():
    job = _job(func=lambda x: {"out": 1e200 * (1 + checks.evaluator(x)["out"] / 100)})
    with pytest.raises(UserError, match=r"reach \d\.\d+e\+200 in magnitude: their squares would overflow"):
        run_task(job, Task(0, 0, 16))
    constant = _job(func=lambda x: {"out": np.full((len(x), 3), 1e200)})
    with pytest.raises(UserError, match="squares would overflow"):
        run_task(constant, Task(0, 0, 16))


def test_overlapping_sums_with_inference_changes_no_number(monkeypatch):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)  # these small tasks, too, go to the helper thread
    tasks = list(iter_tasks(256, 2, 32))
    apart = list(LocalExecutor(overlap=False).map(_job(), tasks))
    together = list(LocalExecutor(overlap=True).map(_job(), tasks))
    assert [t for t, _ in together] == [t for t, _ in apart] == tasks
    for (_, a), (_, b) in zip(apart, together, strict=True):
        checks.assert_same(checks.finished(a["out"]), checks.finished(b["out"]), rtol=0.0)


@pytest.mark.parametrize("overlap_from", [0, 1 << 30])
def test_an_error_in_the_sums_of_one_task_reaches_the_caller_and_stops_the_run(monkeypatch, overlap_from):
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", overlap_from)
    calls = []

    def func(x):
        calls.append(len(x))
        y = checks.evaluator(x)["out"]
        if len(calls) == 3:
            y = y.copy()
            y[0, 0] = np.nan
        return {"out": y}

    with pytest.raises(NonFiniteError):
        run(_job(func=func), block=32)
    assert len(calls) <= 4  # at most one task evaluated past the failing one
