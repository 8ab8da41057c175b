"""The measured RQMC gain (audit.studies.advise.gain): prefix variances, log-log slopes, equal-cost ratios.

References: a least-squares line through exact points log v = log C + a log n recovers a and C,
and the equal-cost ratio follows from the two lines by its definition in the module (common
practice, no source).
"""

import math

import numpy as np
import pytest
from advice_cases import step, step_theta

from audit.models.python import PythonModel
from audit.report.text import fmt
from audit.results import GainRow
from audit.studies import advise_function, prepare_advice
from audit.studies.advise.gain import equal_cost_ratio, fit, gain

POINTS = (256, 1024, 4096)


def test_rqmc_gain_on_step():
    d = 16
    res = advise_function(
        step(step_theta(d)),
        "normal",
        dim=d,
        points=256,
        replicates=8,
        seed=8,
        top=1,
        node_cap=64,
        gain_points=(256, 1024, 4096),
    )
    out = res.outputs[0]
    gain = out.rqmc_gain
    assert out.best.feature == "x0" and gain.feature == "x0"
    assert not out.best.converged and any("not smooth" in n for n in res.notices)
    print(
        "RQMC variance ratio on the step:",
        [fmt(r.ratio) for r in gain.rows],
        "slopes",
        gain.slope_before,
        gain.slope_after,
    )
    assert gain.ratio > 1 and all(r.ratio > 1 for r in gain.rows)
    assert gain.evaluations_after == gain.evaluations_before * gain.nodes == 4096 * 8 * 64


def test_fit_recovers_an_exact_power_law():
    n = np.array(POINTS, dtype=float)
    slope, intercept = fit(POINTS, 3.0 * n**-1.5)
    assert slope == pytest.approx(-1.5, rel=1e-12) and intercept == pytest.approx(math.log(3.0), rel=1e-12)


def test_fit_leaves_out_points_without_a_positive_variance():
    n = np.array(POINTS, dtype=float)
    v = 2.0 * n**-1.0
    v[1] = 0.0
    assert fit(POINTS, v)[0] == pytest.approx(-1.0, rel=1e-12)
    v[2] = np.nan
    assert all(math.isnan(x) for x in fit(POINTS, v))


def test_equal_cost_ratio_reads_both_lines_at_the_largest_n():
    n = np.array(POINTS, dtype=float)
    before, after, cost = 2.0 * n**-1.0, 0.5 * n**-2.0, 8
    big = max(POINTS)
    expect = (2.0 * (big * cost) ** -1.0) / (0.5 * big**-2.0)  # f at n·cost points against f̃ at n points
    assert equal_cost_ratio(POINTS, before, after, cost) == pytest.approx(expect, rel=1e-10)
    assert math.isnan(equal_cost_ratio(POINTS, before, np.zeros(3), cost))


def test_gain_assembles_rows_slopes_and_evaluations():
    plan = prepare_advice(PythonModel(lambda x: x.sum(axis=1), 2, source="sum"), "normal", seed=1,
                          replicates=4, gain_points=POINTS)  # fmt: skip
    n = np.array(POINTS, dtype=float)[:, None]
    before, after = np.hstack([n**-1.0, n**-1.0]), np.hstack([n**-2.0, n**-1.0])
    g = gain(plan, before, after, 0, "x1", cost=16)
    assert [r.points for r in g.rows] == list(POINTS) and g.nodes == 16 and g.replicates == 4
    assert g.slope_before == pytest.approx(-1.0) and g.slope_after == pytest.approx(-2.0)
    assert g.ratio == pytest.approx(4096.0)  # n^-1 / n^-2 at n = 4096
    assert (g.evaluations_before, g.evaluations_after) == (4096 * 4, 4096 * 4 * 16)
    assert GainRow(8, 1.0, 0.0).ratio == math.inf and math.isnan(GainRow(8, 0.0, 0.0).ratio)
