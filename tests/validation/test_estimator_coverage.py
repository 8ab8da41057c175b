"""Every registered estimator's interval for nu covers the exact value; the fast estimator keeps the RQMC gain.

Cases (exact nu from the cited formulas):

* g-function in d = 20 with a_j = j / 2, uniform inputs (tests/exact.py, product formula);
* ReLU ridge max(0, theta^T x), |theta| = 1, d = 50, theta_j proportional to 1 + 2 (j - 1) / 49
  (non-uniform), standard normal inputs. The Hermite expansion (tests/exact.py) gives
  tau_j = Var g - sum_k a_k^2 (1 - theta_j^2)^k; summed to all orders (Mehler's formula) the sum is
  E[g(U) g(V)] - (E g)^2 for standard normals U, V of correlation rho = 1 - theta_j^2, which for the
  ReLU is (sqrt(1 - rho^2) + rho (pi - arccos rho)) / (2 pi) - 1 / (2 pi); Var g = 1/2 - 1/(2 pi)
  (both common practice, no source). tests/exact.py stops at order 60, which here overstates nu by
  about 0.003 (its own tail bound; checked below) -- a fifth of a standard error at N = 1024;
* a product of four heavy-tailed factors in 30 inputs: prod_{j < 4} (x_j^2 - 1) / sqrt(2),
  standard normal inputs; each factor is centred with variance 1 (E x^4 = 3), so f is one ANOVA
  term of four inputs: nu = 4 exactly (common practice, no source). The factors have kurtosis 15.

Every estimator gets about the evaluations of the Jansen estimator at N = 1024 and R = 10 (N
rounded down to a power of two, at least 128): the comparison is at equal cost. Each runs R = 10
randomizations, or its own default where larger (the fast estimator's 32, at a quarter of the
points: its replicates of nu are skewed on the heavy-tailed product, and a t-interval over 10 of
them covered 0.863 over these 80 seeds), with a 95 % Student-t interval (common practice, no source).

The slow test counts coverage over 80 fixed seeds and asks for at least 0.9 (with 80 seeds
the count of misses of a 95 % interval is about Binomial(80, 0.05): 0.9 is 2 standard deviations
below 0.95). It runs with ``python -m pytest -m slow`` (or NETDIM_SLOW=1); the default suite
runs 2 seeds of every case with intervals Bonferroni-adjusted for all its comparisons.
"""

from __future__ import annotations

import functools
import os

import numpy as np
import pytest
from exact import g_function, hermite_coefficients, ridge_indices

from audit.design import Design
from audit.engine import Group, Job, run
from audit.estimators import ESTIMATORS, REFERENCE_ESTIMATORS, make_estimator, t_interval
from audit.inputs import Law
from model_zoo import functions as fz

R = 10
BUDGET_POINTS = 1024  # the Jansen estimator's N; the others get its evaluations
SLOW_SEEDS = 80
FAST_SEEDS = 2
G_A = np.arange(20) / 2
THETA = np.linspace(1.0, 3.0, 50)


def _prod4(x):
    return np.prod((x[:, :4] ** 2 - 1) / np.sqrt(2), axis=1)


def relu_ridge_nu(theta: np.ndarray) -> float:
    """Exact nu of max(0, theta^T x / |theta|), x standard normal, to all orders (module docstring)."""
    t2 = np.asarray(theta, dtype=float) ** 2 / np.sum(np.asarray(theta, dtype=float) ** 2)
    rho = 1 - t2
    second = (np.sqrt(1 - rho**2) + rho * (np.pi - np.arccos(rho))) / (2 * np.pi)  # E[g(U) g(V)]
    return float(np.sum(0.5 - second) / (0.5 - 1 / (2 * np.pi)))


@functools.cache
def _cases():
    relu = relu_ridge_nu(THETA)
    return {
        "g20": (lambda x: fz.g_function(x, G_A), [Law("uniform")] * 20, float(g_function(G_A)["nu"])),
        "relu50": (lambda x: fz.relu_ridge(x, THETA), [Law("normal")] * 50, float(relu)),
        "prod4": (_prod4, [Law("normal")] * 30, 4.0),
    }


def replicates_for(name: str) -> int:
    """R for ``name``: R, or the estimator's own default where larger."""
    return max(R, {**ESTIMATORS, **REFERENCE_ESTIMATORS}[name].replicates)


def points_for(name: str, d: int) -> int:
    """N giving ``name`` about the Jansen estimator's evaluations at BUDGET_POINTS and R (a power of two, >= 128)."""
    rows = make_estimator(name, d=d, points=max(d, 128)).rows_per_point()
    n = BUDGET_POINTS * (d + 2) * R // (rows * replicates_for(name))
    return max(128, 1 << (n.bit_length() - 1))


def nu_replicates(name, f, laws, points, replicates, seed, sampler="sobol"):
    """nu of each randomization for the estimator ``name``."""
    est = make_estimator(name, d=len(laws), points=points)
    design = Design(laws, points, replicates, seed, sampler, copies=est.copies)
    job = Job(name, lambda x: {"y": f(x)[:, None]}, design, est, [Group("y", 1, False)])
    reps = [s.finish(design.ddof) for s in run(job)["y"]]
    return np.array([r.total_sum[0] / r.variance[0] for r in reps])


def _coverage(name, case, seeds, level):
    f, laws, exact = _cases()[case]
    n = points_for(name, len(laws))
    hits = []
    for seed in seeds:
        iv = t_interval(nu_replicates(name, f, laws, n, replicates_for(name), 10_000 + seed), level)
        hits.append(bool(iv.low <= exact <= iv.high))
    return hits, n


def test_relu_reference_is_the_hermite_expansion_to_all_orders():
    # the all-orders value lies below the expansion to order K = 60 by at most its tail bound,
    # sum_j (1 - theta_j^2)^K (Var g - sum_{1 <= k <= K} a_k^2) / Var g (tests/exact.py)
    hermite = ridge_indices(lambda z: max(z, 0.0), THETA, kink=0.0)
    a = hermite_coefficients(lambda z: max(z, 0.0), kink=0.0)
    var = hermite["variance"]
    tail = max(var - np.sum(a[1:] ** 2), 0.0)
    t2 = THETA**2 / np.sum(THETA**2)
    bound = np.sum((1 - t2) ** (len(a) - 1)) * tail / var
    gap = hermite["nu"] - relu_ridge_nu(THETA)
    assert -1e-9 <= gap <= bound + 1e-9, (gap, bound)


@pytest.fixture
def slow_requested(request):
    if request.config.getoption("markexpr", "") != "slow" and os.environ.get("NETDIM_SLOW") != "1":
        pytest.skip("long statistical check: run it with `python -m pytest -m slow` (or NETDIM_SLOW=1)")


@pytest.mark.slow
@pytest.mark.parametrize("case", ["g20", "relu50", "prod4"])
@pytest.mark.parametrize("name", list(ESTIMATORS))
def test_coverage_over_80_seeds(name, case, slow_requested):
    hits, n = _coverage(name, case, range(SLOW_SEEDS), 0.95)
    rate = float(np.mean(hits))
    print(f"{name} on {case}: N = {n}, R = {replicates_for(name)}, coverage {rate:.3f} over {SLOW_SEEDS} seeds")
    assert rate >= 0.9


@pytest.mark.parametrize("case", ["g20", "relu50", "prod4"])
@pytest.mark.parametrize("name", list(ESTIMATORS))
def test_exact_nu_inside_the_interval(name, case):
    # FAST_SEEDS seeds of every (estimator, case): Bonferroni over all of this test's comparisons
    comparisons = len(ESTIMATORS) * 3 * FAST_SEEDS
    hits, _ = _coverage(name, case, range(FAST_SEEDS), 1 - 0.05 / comparisons)
    assert all(hits)


def test_split_estimator_keeps_the_rqmc_gain():
    # a smooth case: Phi(theta^T x), d = 8, theta_j proportional to j; equal cost (same N, same estimator).
    # Variances over 40 randomizations each: their ratio is within a factor of about 1.9 of the truth
    # with 95 % probability (F distribution with 39 and 39 degrees of freedom).
    theta = np.arange(1.0, 9.0)
    laws = [Law("normal")] * 8

    def f(x):
        return fz.phi_ridge(x, theta)

    qmc = nu_replicates("fast", f, laws, 8192, 40, 3, "sobol").var(ddof=1)
    mc = nu_replicates("fast", f, laws, 8192, 40, 3, "mc").var(ddof=1)
    print(f"split estimator, Phi ridge d = 8, N = 8192: var(nu) Monte Carlo / scrambled Sobol' = {mc / qmc:.2f}")
    assert mc >= 2 * qmc
