"""Freezing (audit.studies.advise.freeze): the group of negligible inputs, its bound and its measured error.

Reference: freezing the inputs u at a random draw has mean squared error 2 τ̄²_u ≤ 2 Σ_{j∈u} τ̄²_j
(the ANOVA decomposition, common practice, no source).
"""

import numpy as np
import pytest

from audit.estimators import t_interval
from audit.studies.advise.freeze import greedy_group


def test_freeze_bound_holds(net_advice):
    out = net_advice.outputs[0]
    assert {f.feature for f in out.freeze} == {"x5", "x6", "x7"}
    assert all(f.grouped and f.total_index.ci_high < 1e-3 for f in out.freeze)
    g = out.freeze_group
    assert sorted(g.features) == ["x5", "x6", "x7"]
    print("freeze bound", g.bound_normalised, "measured", g.measured_normalised)
    assert g.holds
    assert g.measured_normalised.estimate <= g.bound_normalised.ci_high
    assert g.measured.estimate <= g.bound.ci_high
    assert g.bound_normalised.ci_high <= g.budget
    assert net_advice.design["evaluations_by_phase"]["freeze_check"] == 1024 * 8 * 2


def _totals(base, replicates=8, seed=0):
    """Per-randomization un-normalised total indices near ``base`` (variance 1), shape (R, d)."""
    rng = np.random.default_rng(seed)
    return np.asarray(base)[None] * (1 + 0.01 * rng.standard_normal((replicates, len(base))))


def test_greedy_group_adds_inputs_smallest_first_while_the_bound_fits():
    total, var = _totals([0.001, 0.002, 0.004]), np.ones(8)
    group, bound, bound_n = greedy_group([0, 1, 2], total, var, budget=0.01)
    assert group == [0, 1]  # 2 (0.001 + 0.002) = 0.006 fits; adding 0.004 makes 0.014
    expect = t_interval(2 * total[:, [0, 1]].sum(axis=1))
    assert bound.estimate == pytest.approx(float(expect.estimate))
    assert bound.ci_high == pytest.approx(float(expect.high))
    assert bound_n.ci_high <= 0.01 and bound_n.estimate == pytest.approx(bound.estimate)


def test_greedy_group_normalises_by_the_variance_and_stops_at_the_first_misfit():
    total, var = _totals([0.001, 0.03, 0.0001]), np.full(8, 2.0)
    group, bound, bound_n = greedy_group([0, 1, 2], total, var, budget=0.01)
    assert group == [0] and bound_n.estimate == pytest.approx(bound.estimate / 2)
    assert greedy_group([1, 0], total, var, budget=0.01) == ([], None, None)
    assert greedy_group([], total, var, budget=0.01) == ([], None, None)


def test_no_negligible_input_means_no_freeze_check(ridge_advice):
    out = ridge_advice.outputs[0]
    assert out.freeze == [] and out.freeze_group is None
    assert ridge_advice.design["evaluations_by_phase"]["freeze_check"] == 0
