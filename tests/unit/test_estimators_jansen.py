"""The Jansen estimator (audit.estimators.jansen): exact merging, state, block size, exact references.

References: an additive function has ν = 1 and first-order indices equal to its total indices; a
product of k centred factors Π (x_j − 1/2) under U[0, 1]^k has one ANOVA term, of order k: ν = k,
every total index 1 and every first-order index 0 (common practice, no source). Tolerances: the
estimator's 95 % interval for ν, and Bonferroni-adjusted t intervals (1 % family error) when a test
compares several indices.
"""

import estimator_checks as checks
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from audit import audit_function
from audit.design import Design
from audit.engine import Group, Task, run, run_task
from audit.estimators import Jansen, t_interval
from audit.estimators.jansen import F32_ROWS, JansenSums
from audit.inputs import Law
from model_zoo import functions as fz

LAWS = checks.LAWS
pytestmark = pytest.mark.filterwarnings(checks.ANY_BLOCK)


@pytest.mark.parametrize("estimator", ["jansen"])
@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_halves_equals_whole(estimator, detail):
    design = Design(LAWS, 1024, 1, seed=3)
    groups = [Group("out", 3, detail)]
    job = checks.job(estimator, design, groups)
    whole = run_task(job, Task(0, 0, 1024))["out"]
    parts = [run_task(job, Task(0, s, 128))["out"] for s in range(0, 1024, 128)]
    merged = parts[0]
    for p in parts[1:]:
        merged.merge(p)
    a, b = whole.finish(1), merged.finish(1)
    for name in ("mean", "variance", "total_sum", "total", "first"):
        x, y = getattr(a, name), getattr(b, name)
        if x is None:
            assert y is None
            continue
        np.testing.assert_allclose(y, x, rtol=1e-12, atol=1e-12 * np.abs(x).max())


@pytest.mark.parametrize("detail", [True, False])
def test_merge_of_blocks_of_another_size_equals_whole(detail):
    job = checks.job("jansen", Design(LAWS, 1024, 1, seed=3), [Group("out", 3, detail)])
    checks.assert_merge_of_halves_equals_whole(job, block=100)


def test_merge_in_any_order_and_state_round_trip():
    design = Design(LAWS, 256, 1, seed=4)
    groups = [Group("out", 3, True)]
    job = checks.job("jansen", design, groups)
    parts = [run_task(job, Task(0, s, 64))["out"] for s in range(0, 256, 64)]
    fwd = job.estimator.restore(parts[0].state())
    for p in parts[1:]:
        fwd.merge(job.estimator.restore(p.state()))
    rev = parts[3]
    for p in reversed(parts[:3]):
        rev.merge(p)
    np.testing.assert_allclose(fwd.finish(1).first, rev.finish(1).first, rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(fwd.finish(1).total, rev.finish(1).total, rtol=1e-12)


@pytest.mark.parametrize("detail", [True, False])
def test_merging_in_any_order_gives_the_same_sums(detail):
    job = checks.job("jansen", Design(LAWS, 512, 1, seed=5), [Group("out", 3, detail)])
    checks.assert_merging_is_order_free(job, block=48, seed=1)


@pytest.mark.parametrize("detail", [True, False])
def test_state_round_trip(detail):
    job = checks.job("jansen", Design(LAWS, 256, 1, seed=6), [Group("out", 3, detail)])
    checks.assert_state_round_trip(job, block=64)


def test_block_size_does_not_change_the_answer():
    r1 = audit_function(fz.ishigami, LAWS, points=1024, replicates=4, seed=5, block=32)
    r2 = audit_function(fz.ishigami, LAWS, points=1024, replicates=4, seed=5, block=1024)
    a, b = r1.outputs[0], r2.outputs[0]
    assert a.mean_dimension.estimate == pytest.approx(b.mean_dimension.estimate, rel=1e-12)
    for x, y in zip(a.first_order + a.total_index, b.first_order + b.total_index, strict=True):
        assert x.value.estimate == pytest.approx(y.value.estimate, rel=1e-10, abs=1e-13)


@pytest.mark.parametrize("detail", [True, False])
def test_block_size_invariance_through_engine_run(detail):
    job = checks.job("jansen", Design(LAWS, 512, 3, seed=7), [Group("out", 3, detail)])
    checks.assert_block_size_invariance(job, [1, 48, 200, 512])


def test_layout_is_a_b_then_a_with_each_column_from_b():
    design = Design([Law("normal")] * 3, 8, 1, seed=1)
    block = design.block(0, 0, 8)
    X, context = Jansen(3).layout(block, np.float64)
    assert context is None and X.shape == (5 * 8, 3)
    rows = X.reshape(5, 8, 3)
    np.testing.assert_array_equal(rows[0], block.A)
    np.testing.assert_array_equal(rows[1], block.B)
    for j in range(3):
        expect = block.A.copy()
        expect[:, j] = block.B[:, j]
        np.testing.assert_array_equal(rows[2 + j], expect)
    assert X.dtype == np.float64 and Jansen(3).layout(block, np.float32)[0].dtype == np.float32


def test_groups_swap_their_columns_together():
    block = Design([Law("normal")] * 4, 8, 1, seed=2).block(0, 0, 8)
    est = Jansen(4, groups=[[0, 2], [1], [3]])
    assert est.rows_per_point() == 5 and est.sums(1, True).g == 3
    rows = est.layout(block, np.float64)[0].reshape(5, 8, 4)
    expect = block.A.copy()
    expect[:, [0, 2]] = block.B[:, [0, 2]]
    np.testing.assert_array_equal(rows[2], expect)


def test_sums_without_detail_give_the_same_mean_dimension():
    job = checks.job("jansen", Design(LAWS, 256, 1, seed=8), [Group("out", 3, True)])
    full = run_task(job, Task(0, 0, 256))["out"].finish(0)
    job.groups = [Group("out", 3, False)]
    short = run_task(job, Task(0, 0, 256))["out"].finish(0)
    assert short.total is None and short.first is None
    np.testing.assert_allclose(short.total_sum, full.total_sum, rtol=1e-12, atol=1e-14)
    np.testing.assert_array_equal(short.variance, full.variance)


def test_sums_refuse_other_shapes_and_empty_finishes():
    with pytest.raises(ValueError, match="different shapes"):
        JansenSums(2, 3).merge(JansenSums(2, 4))
    with pytest.raises(ValueError, match="different shapes"):
        JansenSums(2, 3, True).merge(JansenSums(2, 3, False))
    with pytest.raises(ValueError, match="no rows"):
        JansenSums(2, 3).finish(0)
    assert Jansen(5).rows_per_point() == 7
    assert Jansen(5).state_size(4, True) > Jansen(5).state_size(4, False)


def _per_rep(sums: list, ddof: int):
    reps = [s.finish(ddof) for s in sums]
    var = np.array([r.variance[0] for r in reps])
    nu = np.array([r.total_sum[0] for r in reps]) / var
    total = np.array([r.total[:, 0] for r in reps]) / var[:, None]
    first = np.array([r.first[:, 0] for r in reps]) / var[:, None]
    return nu, total, first


def test_additive_function_against_its_exact_indices():
    a = np.array([1.0, 2.0, 3.0])
    design = Design([Law("normal")] * 3, 512, 10, seed=21)
    sums = run(checks.job("jansen", design, [Group("y", 1)], lambda x: {"y": (x @ a)[:, None]}), block=128)
    nu, total, first = _per_rep(sums["y"], design.ddof)
    assert t_interval(nu).low <= 1.0 <= t_interval(nu).high  # ν = 1, within the 95 % interval
    exact = a**2 / np.sum(a**2)  # total = first-order index = a_j² / Σ a²
    k = checks.t_bound(2 * len(a), design.replicates)
    for values in (total, first):
        est = t_interval(values)
        assert np.all(np.abs(est.estimate - exact) <= k * est.std_error), (est, exact)


def test_product_of_centred_factors_against_its_exact_indices():
    k_factors = 3
    design = Design([Law("uniform")] * k_factors, 512, 10, seed=22)
    func = lambda x: {"y": np.prod(x - 0.5, axis=1)[:, None]}  # noqa: E731
    nu, total, first = _per_rep(run(checks.job("jansen", design, [Group("y", 1)], func))["y"], design.ddof)
    est = t_interval(nu)
    assert est.low <= k_factors <= est.high  # ν = k, within the 95 % interval
    bound = checks.t_bound(2 * k_factors, design.replicates)
    for values, exact in ((total, 1.0), (first, 0.0)):
        e = t_interval(values)
        assert np.all(np.abs(e.estimate - exact) <= bound * e.std_error), (e, exact)


def _reference(yA: np.ndarray, yB: np.ndarray, yAB: np.ndarray) -> dict[str, np.ndarray]:
    """The per-input Jansen sums in float64, one input at a time (the definition, no buffering)."""
    a, b, ab = (np.asarray(v, dtype=np.float64) for v in (yA, yB, yAB))
    shift = b.mean(axis=0)
    dif = ab - a[None]
    return {"tot": (dif**2).sum(axis=1), "fo": ((b - shift)[None] * dif).sum(axis=1), "dif": dif.sum(axis=1)}


# block shapes on both sides of one buffer: few rows (several inputs per numpy call, g not a multiple
# of that number) and more rows than one float32 partial sum takes
SHAPES = st.tuples(st.integers(1, 9), st.sampled_from([1, 3, 17, F32_ROWS + 5]), st.integers(1, 40))


@settings(max_examples=25, deadline=None)
@given(shape=SHAPES, seed=st.integers(0, 2**16))
def test_buffered_sums_equal_the_definition(shape, seed):
    """However a block is cut into numpy calls, the sums are those of the definition: float64 rows
    with detail to 1e-12, float32 rows without detail to the documented 1e-6."""
    g, n, k = shape
    rng = np.random.default_rng(seed)
    y = (rng.standard_normal(((g + 2) * n, k)) * rng.uniform(0.1, 10, k) + rng.uniform(-5, 5, k))
    yA, yB, yAB = y[:n], y[n : 2 * n], y[2 * n :].reshape(g, n, k)
    ref = _reference(yA, yB, yAB)
    s = JansenSums(k, g, detail=True)
    s.add(y)
    for name in ("tot", "fo", "dif"):
        np.testing.assert_allclose(getattr(s, name), ref[name], rtol=1e-12, atol=1e-12 * np.abs(ref[name]).max())
    for rows in (y, y.astype(np.float32)):
        s = JansenSums(k, g, detail=False)
        s.add(rows)
        want = _reference(*(r.astype(np.float64) for r in (rows[:n], rows[n : 2 * n], rows[2 * n :].reshape(g, n, k))))
        rtol = 1e-12 if rows.dtype == np.float64 else 1e-6
        np.testing.assert_allclose(s.tot_sum, want["tot"].sum(axis=0), rtol=rtol)
