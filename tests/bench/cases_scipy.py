"""Measure e: netdim against scipy's ``stats.sobol_indices`` at equal model evaluations.

Both estimate every first-order and total index of the g-function with
a_j = (j − 1)/2, j = 1..d, inputs uniform on [0, 1] ("About the use of rank
transformation in sensitivity analysis of model output", Reliability Engineering &
System Safety, 1995 (from memory); the function is ``model_zoo.functions.g_function``).
scipy with ``n = N`` costs N(d + 2) evaluations; netdim's Jansen estimator with R
randomizations of N/R points costs the same. Times are in-process, paired, each the
mean of as many calls as fill about :data:`CALL_SECONDS` (the same count for both
tools: single calls of a few milliseconds vary by a factor of three here); peak
memory is tracemalloc's peak (numpy reports its buffers to it) in separate, untimed
runs. The sanity line counts the exact indices (V_j = 1/(3(1 + a_j)²) and the product
formula, ``tests/exact.py``) inside each tool's 95 % intervals: netdim's Student-t
intervals, scipy's bootstrap intervals (99 resamples).
"""

from __future__ import annotations

import math
import sys
import time
import tracemalloc
import warnings

import numpy as np
from cases_common import ROOT, Settings, paired, row

__all__ = ["CALL_SECONDS", "against_scipy"]

#: Seconds of calls (both tools together, at their warm-up speed) averaged in one timing.
CALL_SECONDS = 0.5


def _exact(a: np.ndarray) -> dict:
    sys.path.insert(0, str(ROOT / "tests"))
    from exact import g_function

    return g_function(a)


def _peak_mib(f) -> float:
    tracemalloc.start()
    try:
        f()
        return tracemalloc.get_traced_memory()[1] / 2**20
    finally:
        tracemalloc.stop()


def _inside(exact: np.ndarray, low: np.ndarray, high: np.ndarray) -> int:
    low, high = np.ravel(low), np.ravel(high)
    return int(np.sum((low <= exact) & (exact <= high)))


def against_scipy(settings: Settings) -> tuple[list[dict], list[dict]]:
    """Rows of the time table (netdim / scipy, ≤ 1.0 at every d), and one memory-and-sanity line per d."""
    from scipy import stats

    import audit
    from model_zoo.functions import g_function

    n, reps = settings.scipy_points, settings.scipy_replicates
    rows, details = [], []
    for d in settings.scipy_dims:
        a = np.arange(d) / 2.0

        def model(x: np.ndarray, a: np.ndarray = a) -> np.ndarray:
            return g_function(x, a)

        def scipy_run(d: int = d, model=model):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return stats.sobol_indices(
                    func=lambda x: model(x.T)[None, :], n=n, dists=[stats.uniform()] * d, random_state=1
                )

        def netdim_run(d: int = d, model=model):
            return audit.audit_function(model, "uniform", dim=d, points=n // reps, replicates=reps, seed=1,
                                        estimator="jansen")  # fmt: skip

        t0 = time.perf_counter()
        netdim_run()  # warm-up (imports, the first call's caches)
        scipy_run()
        calls = max(1, math.ceil(CALL_SECONDS / (time.perf_counter() - t0)))  # the same count for both

        def timed(f, calls: int = calls):
            def go() -> float:
                t0 = time.perf_counter()
                for _ in range(calls):
                    f()
                return (time.perf_counter() - t0) / calls

            return go

        t = paired({"netdim": timed(netdim_run), "scipy": timed(scipy_run)}, settings.steady_pairs)
        rows.append(row(f"d = {d}", t["netdim"], t["scipy"], 1.0,
                        command=f"audit_function(g, 'uniform', dim={d}, points={n // reps}, replicates={reps}, "
                                f"estimator='jansen')",
                        reference_command=f"stats.sobol_indices(func=g, n={n}, dists=[uniform]*{d})",
                        note=f"{n * (d + 2):,} evaluations each; mean of {calls} call(s) per timing"))  # fmt: skip
        ex = _exact(a)
        r = netdim_run()
        s = scipy_run()
        out = r.outputs[0]
        tot = np.array([[f.value.estimate, f.value.ci_low, f.value.ci_high] for f in out.total_index])
        first = np.array([[f.value.estimate, f.value.ci_low, f.value.ci_high] for f in out.first_order])
        boot = s.bootstrap(confidence_level=0.95, n_resamples=99)
        details.append({
            "d": d,
            "evaluations": n * (d + 2),
            "netdim_peak_mib": _peak_mib(netdim_run),
            "scipy_peak_mib": _peak_mib(scipy_run),
            "netdim_total_inside": _inside(ex["total"], tot[:, 1], tot[:, 2]),
            "netdim_first_inside": _inside(ex["first"], first[:, 1], first[:, 2]),
            "scipy_total_inside": _inside(ex["total"], *boot.total_order.confidence_interval),
            "scipy_first_inside": _inside(ex["first"], *boot.first_order.confidence_interval),
            "netdim_max_error": float(max(np.abs(tot[:, 0] - ex["total"]).max(),
                                          np.abs(first[:, 0] - ex["first"]).max())),
            "scipy_max_error": float(max(np.abs(np.ravel(s.total_order) - ex["total"]).max(),
                                         np.abs(np.ravel(s.first_order) - ex["first"]).max())),
        })  # fmt: skip
    return rows, details
