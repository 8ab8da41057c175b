"""Every registered estimator of nu against the others at equal cost (a benchmark, not a timed test).

For each validation case and estimator, R independent randomizations give R values of nu
(the variance-weighted nu over the outputs for the digits network); from them:

* ``work`` = var(nu) x evaluations per randomization, relative to the Jansen estimator's
  (below 1: fewer evaluations for the same precision);
* ``rqmc gain`` = var(nu) with plain Monte Carlo points / var(nu) with scrambled Sobol'
  points, same estimator and N (equal cost);
* the bias against the exact nu (or, for the digits network, against the Jansen estimator
  at a large N) in standard errors.

Every estimator gets about the Jansen estimator's evaluations at N = BUDGET_POINTS (its N rounded
down to a power of two, at least 64). Exact values: tests/exact.py (Hermite expansion of the Phi
ridge, the g-function's product formula, Ishigami's variance terms); the ReLU ridge's Hermite
expansion summed to all orders in closed form (see tests/validation/test_estimator_coverage.py:
tests/exact.py stops at order 60, about 0.003 too high here); a sum of one-input terms has nu = 1
and prod_{j<4} (x_j^2 - 1)/sqrt(2) of normal inputs is one ANOVA term of four inputs, nu = 4
(common practice, no source). The estimators kept for comparison only (``REFERENCE_ESTIMATORS``)
are measured beside the registered ones.

A second table counts the coverage of each estimator's 95 % interval of nu over 80 fixed seeds,
on the cases and at the settings of tests/validation/test_estimator_coverage.py (which asks for
at least 0.9). Writes ``reports/bench/estimators.json`` and ``reports/bench/estimators.md``.

    python tests/bench/bench_estimators.py [--replicates 64] [--points 1024] [--coverage-seeds 80]
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np
from scipy.special import ndtr

ROOT = Path(__file__).resolve().parents[2]
sys.path[:0] = [str(ROOT / "tests"), str(ROOT / "tests" / "validation"), str(ROOT)]

import test_estimator_coverage as coverage  # noqa: E402
from exact import g_function, ishigami, ridge_indices  # noqa: E402

from audit.design import Design  # noqa: E402
from audit.engine import Group, Job, run  # noqa: E402
from audit.estimators import ESTIMATORS, REFERENCE_ESTIMATORS, make_estimator  # noqa: E402
from audit.inputs import Law, load_spec  # noqa: E402
from model_zoo import functions as fz  # noqa: E402

OUT = ROOT / "reports" / "bench"
THETA = np.linspace(1.0, 3.0, 50)
G_A = np.arange(20) / 2


def relu_ridge_nu(theta: np.ndarray) -> float:
    """Exact nu of max(0, theta^T x / |theta|), x standard normal (Mehler's formula, the arc-cosine form)."""
    rho = 1 - theta**2 / np.sum(theta**2)
    second = (np.sqrt(1 - rho**2) + rho * (np.pi - np.arccos(rho))) / (2 * np.pi)
    return float(np.sum(0.5 - second) / (0.5 - 1 / (2 * np.pi)))


def _prod4(x):
    return np.prod((x[:, :4] ** 2 - 1) / np.sqrt(2), axis=1)


def _digits():
    from audit.models.open import open_model
    from audit.studies.evaluators import ModelEvaluator

    model = open_model(str(ROOT / "model_zoo" / "digits_mlp.onnx"))
    _, laws = load_spec(ROOT / "model_zoo" / "digits_mlp.toml").resolve(64, model.feature_names())
    ev = ModelEvaluator(model, [])
    return (lambda x: ev(x.astype(np.float32))["outputs"]), laws


def cases() -> dict:
    """name -> (f: (n, d) -> (n,) or (n, k), laws, exact nu or None)."""
    normal, uniform = Law("normal"), Law("uniform")
    pi = Law("uniform", {"low": -np.pi, "high": np.pi})
    digits, digit_laws = _digits()
    return {
        "additive (d=10)": (fz.additive, [normal] * 10, 1.0),
        "product of 4 heavy-tailed factors (d=30)": (_prod4, [normal] * 30, 4.0),
        "ReLU ridge (d=50)": (lambda x: fz.relu_ridge(x, THETA), [normal] * 50, relu_ridge_nu(THETA)),
        "Phi ridge (d=50)": (lambda x: fz.phi_ridge(x, THETA), [normal] * 50, float(ridge_indices(ndtr, THETA)["nu"])),
        "g-function (d=20)": (lambda x: fz.g_function(x, G_A), [uniform] * 20, float(g_function(G_A)["nu"])),
        "Ishigami (d=3)": (fz.ishigami, [pi] * 3, float(ishigami()["nu"])),
        "digits MLP logits (d=64)": (digits, digit_laws, None),
    }


def points_for(name: str, d: int, budget_points: int) -> int:
    rows = make_estimator(name, d=d, points=max(d, 64)).rows_per_point()
    n = budget_points * (d + 2) // rows
    return max(64, 1 << (n.bit_length() - 1))


def nu_values(name, f, laws, points, replicates, seed, sampler):
    """nu per randomization (variance-weighted over the outputs) and the evaluations per randomization."""
    est = make_estimator(name, d=len(laws), points=points)
    design = Design(laws, points, replicates, seed, sampler, copies=est.copies)

    def evaluator(x):
        y = np.asarray(f(x), dtype=np.float64)
        return {"y": y.reshape(len(x), -1)}

    units = np.asarray(f(design.block(0, 0, 2).A)).reshape(2, -1).shape[1]
    job = Job(name, evaluator, design, est, [Group("y", units, False)])
    reps = [s.finish(design.ddof) for s in run(job)["y"]]
    nu = np.array([r.total_sum.sum() / r.variance.sum() for r in reps])
    return nu, points * est.rows_per_point()


def bench(replicates: int, budget_points: int, seed: int = 20260) -> dict:
    results = {}
    for case, (f, laws, exact) in cases().items():
        d = len(laws)
        rows = {}
        t_case = time.perf_counter()
        if exact is None:  # the Jansen estimator at a large N: the reference for the bias only
            ref, _ = nu_values("jansen", f, laws, 16 * budget_points, 8, seed + 7, "sobol")
            exact_value, exact_se, exact_kind = float(ref.mean()), float(ref.std(ddof=1) / np.sqrt(len(ref))), "jansen"
        else:
            exact_value, exact_se, exact_kind = exact, 0.0, "exact"
        for name in [*ESTIMATORS, *REFERENCE_ESTIMATORS]:
            n = points_for(name, d, budget_points)
            t = time.perf_counter()
            qmc, cost = nu_values(name, f, laws, n, replicates, seed, "sobol")
            mc, _ = nu_values(name, f, laws, n, replicates, seed + 1, "mc")
            se = float(qmc.std(ddof=1) / np.sqrt(replicates))
            rows[name] = {
                "points": n,
                "evaluations": int(cost),
                "nu": float(qmc.mean()),
                "std_error": se,
                "bias_in_se": float((qmc.mean() - exact_value) / np.hypot(se, exact_se)),
                "variance": float(qmc.var(ddof=1)),
                "variance_mc": float(mc.var(ddof=1)),
                "rqmc_gain": float(mc.var(ddof=1) / qmc.var(ddof=1)),
                "seconds": round(time.perf_counter() - t, 2),
            }
        base = rows["jansen"]["variance"] * rows["jansen"]["evaluations"]
        for r in rows.values():
            r["work_vs_jansen"] = r["variance"] * r["evaluations"] / base
        results[case] = {"d": d, "reference": exact_value, "reference_kind": exact_kind, "estimators": rows}
        print(f"{case}: {time.perf_counter() - t_case:.1f} s", flush=True)
    return results


def coverage_table(seeds: int) -> dict:
    """case -> estimator -> {points, replicates, coverage} over ``seeds`` fixed seeds."""
    out: dict = {}
    for case in coverage._cases():
        for name in [*ESTIMATORS, *REFERENCE_ESTIMATORS]:
            hits, n = coverage._coverage(name, case, range(seeds), 0.95)
            out.setdefault(case, {})[name] = {
                "points": n,
                "replicates": coverage.replicates_for(name),
                "coverage": float(np.mean(hits)),
            }
        print(f"coverage on {case} done", flush=True)
    return out


def _label(name: str) -> str:
    return f"{name} (comparison only)" if name in REFERENCE_ESTIMATORS else name


#: The coverage cases' keys in tests/validation/test_estimator_coverage.py, as the table names them.
COVERAGE_CASES = {
    "g20": "g-function (d=20)",
    "relu50": "ReLU ridge (d=50)",
    "prod4": "product of 4 heavy-tailed factors (d=30)",
}


def coverage_markdown(table: dict, seeds: int) -> list[str]:
    names = list(next(iter(table.values())))
    lines = [
        "",
        f"## Coverage of the 95 % interval of ν over {seeds} fixed seeds",
        "",
        "Settings of `tests/validation/test_estimator_coverage.py` (its docstring gives the cases and exact values): "
        "equal evaluations, R = 10 randomizations or the estimator's own default where larger. With "
        f"{seeds} seeds a coverage has a standard error of about "
        f"{np.sqrt(0.05 * 0.95 / seeds):.3f} around 0.95; the test asks for at least 0.9.",
        "",
        "| estimator | R | " + " | ".join(f"{COVERAGE_CASES.get(case, case)}: coverage (N)" for case in table) + " |",
        "| --- | ---: | " + " | ".join("---:" for _ in table) + " |",
    ]
    for name in names:
        cells = [f"{table[case][name]['coverage']:.3f} ({table[case][name]['points']})" for case in table]
        r = next(iter(table.values()))[name]["replicates"]
        lines.append(f"| {_label(name)} | {r} | " + " | ".join(cells) + " |")
    return lines


def markdown(results: dict, replicates: int, budget_points: int) -> str:
    lines = [
        "## Estimators of the mean dimension at equal cost",
        "",
        f"R = {replicates} randomizations per entry; every estimator gets about the evaluations of the Jansen "
        f"estimator at N = {budget_points}. *work*: var(ν) × evaluations per randomization, relative to the "
        "Jansen estimator (below 1 is better). *RQMC gain*: var(ν) with plain Monte Carlo / var(ν) with "
        "scrambled Sobol' points, same estimator and N. *bias*: (mean ν − reference) / standard error.",
        "",
        f"Precision: a variance from R = {replicates} normal replicates is within about "
        f"±{np.sqrt(2 / (replicates - 1)):.0%} (one standard deviation), so a ratio of two variances is within "
        f"a factor of about {np.exp(2 * np.sqrt(4 / (replicates - 1))):.1f} (two standard deviations); far less "
        "precise for the heavy-tailed product, whose replicates are far from normal.",
        "",
        "| case | estimator | N | evaluations | ν (reference) | bias / se | work vs Jansen | RQMC gain |",
        "| --- | --- | ---: | ---: | --- | ---: | ---: | ---: |",
    ]
    for case, res in results.items():
        ref = f"{res['reference']:.4f}" + (" (Jansen, large N)" if res["reference_kind"] == "jansen" else "")
        for name, r in res["estimators"].items():
            lines.append(
                f"| {case} | {_label(name)} | {r['points']} | {r['evaluations']:,} | {r['nu']:.4f} ({ref}) | "
                f"{r['bias_in_se']:+.2f} | {r['work_vs_jansen']:.3g} | {r['rqmc_gain']:.2f} |"
            )
    lines += [
        "",
        "Lowest work per case (estimators a user can choose): "
        + "; ".join(
            f"{case}: {min(ESTIMATORS, key=lambda n: res['estimators'][n]['work_vs_jansen'])}"
            for case, res in results.items()
        )
        + ".",
    ]
    return "\n".join(lines) + "\n"


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--replicates", type=int, default=64)
    p.add_argument("--points", type=int, default=1024, help="the Jansen estimator's N (the budget)")
    p.add_argument("--coverage-seeds", type=int, default=80, help="seeds of the coverage table (0: none)")
    args = p.parse_args()
    t = time.perf_counter()
    results = bench(args.replicates, args.points)
    covered = coverage_table(args.coverage_seeds) if args.coverage_seeds else {}
    OUT.mkdir(parents=True, exist_ok=True)
    payload = {
        "replicates": args.replicates,
        "budget_points": args.points,
        "seconds": round(time.perf_counter() - t, 1),
        "cases": results,
        "coverage_seeds": args.coverage_seeds,
        "coverage": covered,
    }
    (OUT / "estimators.json").write_text(json.dumps(payload, indent=2) + "\n", encoding="utf-8")
    text = markdown(results, args.replicates, args.points)
    if covered:
        text += "\n".join(coverage_markdown(covered, args.coverage_seeds)) + "\n"
    (OUT / "estimators.md").write_text(text, encoding="utf-8")
    print(text)


if __name__ == "__main__":
    main()
