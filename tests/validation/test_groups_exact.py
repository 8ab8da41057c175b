"""Indices of groups of inputs, and of one-hot categorical inputs, against exact answers.

Every estimate is compared with its exact value within ``t_bound(m, R)`` standard errors: the
Bonferroni-adjusted t quantile for the m comparisons of a test at a family-wise error of 1 %
(tests/estimator_checks.py). The exact values are derived beside each test.
"""

from __future__ import annotations

import numpy as np
import pytest
from estimator_checks import t_bound
from exact import ishigami

from audit import audit_function
from audit.engine import iter_tasks
from audit.inputs import parse_spec
from audit.studies import function_model, prepare
from audit.studies.options import DesignOptions
from model_zoo import functions as fz

R = 8


def _close(est, exact: float, m: int) -> bool:
    return abs(est.estimate - exact) <= t_bound(m, R) * est.std_error + 1e-12


def _normal_pairs_spec() -> dict:
    return {
        "inputs": {"law": "normal", "names": ["x1", "x2", "x3", "x4"]},
        "groups": {"group": [{"name": "a", "inputs": ["x1", "x2"]}, {"name": "b", "inputs": ["x3", "x4"]}]},
    }


def _g(x: np.ndarray, i: int, j: int) -> np.ndarray:
    return x[:, i] + x[:, j] + x[:, i] * x[:, j]


def test_additive_function_of_groups_has_one_group_dimension():
    # f = g(x1, x2) + g(x3, x4), g(u, v) = u + v + uv, x ~ N(0, 1)^4: the terms x1, x2, x1x2, ... are
    # orthonormal (products of distinct He_1), so Var f = 6; orders 1, 1, 2 per group give
    # ν = (4·1 + 2·2)/6 = 4/3 over inputs, and ν_G = 1 over groups (f is additive in a and b).
    # The groups' total and closed first-order indices are 1/2 each.
    r = audit_function(
        lambda x: _g(x, 0, 1) + _g(x, 2, 3),
        parse_spec(_normal_pairs_spec()),
        points=4096,
        replicates=R,
        seed=5,
        view="both",
    )
    out, grouped = r.outputs[0], r.by_group.outputs[0]
    checks = [(out.mean_dimension, 4 / 3), (grouped.mean_dimension, 1.0)]
    checks += [(f.value, 0.5) for f in grouped.total_index] + [(f.value, 0.5) for f in grouped.first_order]
    assert [f.feature for f in grouped.total_index] == ["a", "b"]
    assert all(_close(e, v, len(checks)) for e, v in checks), [(e.estimate, e.std_error, v) for e, v in checks]
    # both views ran on the same points: the same variance
    assert grouped.variance.estimate == pytest.approx(out.variance.estimate, rel=1e-12)


def test_product_of_two_groups_has_group_dimension_two_and_more_over_inputs():
    # f = g(x1, x2) · g(x3, x4): products of one term of each group, 9 orthonormal terms of orders
    # 2 (x1x3, x1x4, x2x3, x2x4), 3 (four terms) and 4 (x1x2x3x4): ν = (4·2 + 4·3 + 4)/9 = 8/3 over
    # inputs; every term involves both groups, so ν_G = 2, each group's total index is 1 and its
    # closed first-order index 0.
    r = audit_function(
        lambda x: _g(x, 0, 1) * _g(x, 2, 3),
        parse_spec(_normal_pairs_spec()),
        points=4096,
        replicates=R,
        seed=6,
        view="both",
    )
    out, grouped = r.outputs[0], r.by_group.outputs[0]
    checks = [(out.mean_dimension, 8 / 3), (grouped.mean_dimension, 2.0)]
    checks += [(f.value, 1.0) for f in grouped.total_index] + [(f.value, 0.0) for f in grouped.first_order]
    assert all(_close(e, v, len(checks)) for e, v in checks), [(e.estimate, e.std_error, v) for e, v in checks]
    assert out.mean_dimension.ci_low > grouped.mean_dimension.ci_high


def test_ishigami_group_of_x1_and_x3_has_the_published_closed_index():
    # Ishigami (Proc. ISUMA '90, 1990): V = V1 + V2 + V13 with V3 = 0, so the group {x1, x3} has the
    # closed first-order index (V1 + V3 + V13)/V and, since x2 enters alone, the total index
    # (V1 + V13)/V; ν_G = 1 (f is additive in {x1, x3} and {x2}). Terms from tests/exact.py.
    terms = ishigami()
    v1 = terms["first"][0] * terms["variance"]
    v13 = terms["total"][2] * terms["variance"]
    closed = (v1 + 0.0 + v13) / terms["variance"]
    spec = parse_spec(
        {
            "inputs": {"law": "uniform", "low": -np.pi, "high": np.pi, "names": ["x1", "x2", "x3"]},
            "groups": {"group": [{"name": "x1_x3", "inputs": ["x1", "x3"]}]},
        }
    )
    r = audit_function(fz.ishigami, spec, points=8192, replicates=R, seed=7)
    out = r.outputs[0]
    assert r.design["view"] == "groups" and r.design["evaluations"] == 8192 * R * 4  # G = 2: N(G + 2)
    by = {f.feature: f.value for f in out.first_order}
    tot = {f.feature: f.value for f in out.total_index}
    checks = [(by["x1_x3"], closed), (tot["x1_x3"], closed), (by["x2"], terms["first"][1]), (out.mean_dimension, 1.0)]
    assert all(_close(e, v, len(checks)) for e, v in checks), [(e.estimate, e.std_error, v) for e, v in checks]


LEVELS = np.array([0.0, 2.0, -1.0])
SLOPES = np.array([1.0, 3.0, 0.5])
PROBS = np.array([0.5, 0.3, 0.2])


def _category_function(x: np.ndarray) -> np.ndarray:
    """f = a_c + b_c · t with c one-hot in columns 1..3 and t ~ U[0, 1] in column 0."""
    c = np.argmax(x[:, 1:4], axis=1)
    return LEVELS[c] + SLOPES[c] * x[:, 0]


def _category_spec():
    one_hot = [{"name": "colour", "columns": ["red", "green", "blue"], "probabilities": PROBS.tolist()}]
    return parse_spec({"inputs": {"law": "uniform", "names": ["t", "red", "green", "blue"], "one_hot": one_hot}})


def test_every_sampled_row_holds_a_valid_one_hot_vector():
    # every row the engine would evaluate (A, B and every A_B^(j)), in every block of every randomization
    model, spec = function_model(_category_function, _category_spec(), None)
    setup = prepare(model, spec, design=DesignOptions(points=512, replicates=3, seed=9), layers="none")
    seen = np.zeros(3)
    for task in iter_tasks(512, 3, 128):
        rows, _ = setup.estimator.layout(setup.design.block(task.rep, task.start, task.n), np.float64)
        block = rows[:, 1:4]
        assert np.isin(block, (0.0, 1.0)).all() and (block.sum(axis=1) == 1).all()
        seen += block.sum(axis=0)
    # and the categories come with their probabilities (binomial sd of a share of 512·3·4 rows < 0.006)
    np.testing.assert_allclose(seen / seen.sum(), PROBS, atol=0.03)


def test_one_hot_category_is_one_input_with_its_exact_total_index():
    # f = a_c + b_c t, c categorical (probabilities p), t ~ U[0, 1]. Exactly, by summation over c and
    # the moments of t (E t = 1/2, Var t = 1/12): Var f = Var_c(a_c + b_c/2) + E_c[b_c²]/12; the
    # total index of c is E_t[Var_c(f | t)]/Var f with Var_c(f | t) quadratic in t; that of t is
    # E_c[b_c²]/12 / Var f.
    spec = _category_spec()
    r = audit_function(_category_function, spec, points=4096, replicates=R, seed=20)
    mean_c = LEVELS + SLOPES / 2
    var = PROBS @ mean_c**2 - (PROBS @ mean_c) ** 2 + PROBS @ SLOPES**2 / 12
    # Var_c(a_c + b_c t) = A + 2 B t + C t², with A, B, C the variances/covariance over c
    ea, eb = PROBS @ LEVELS, PROBS @ SLOPES
    a_var = PROBS @ LEVELS**2 - ea**2
    ab_cov = PROBS @ (LEVELS * SLOPES) - ea * eb
    b_var = PROBS @ SLOPES**2 - eb**2
    total_c = (a_var + ab_cov + b_var / 3) / var  # E t = 1/2, E t² = 1/3
    total_t = PROBS @ SLOPES**2 / 12 / var
    out = r.outputs[0]
    assert [f.feature for f in out.total_index] == ["t", "colour"]
    assert r.inputs[1]["one_hot"] == ["red", "green", "blue"]
    tot = {f.feature: f.value for f in out.total_index}
    checks = [(tot["colour"], total_c), (tot["t"], total_t)]
    assert all(_close(e, v, len(checks)) for e, v in checks), [(e.estimate, e.std_error, v) for e, v in checks]
    assert r.design["evaluations"] == 4096 * R * 4  # two inputs: N(2 + 2), the block swapped as a whole
