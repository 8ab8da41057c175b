"""The Markdown page of the benchmark suite (``reports/benchmarks.md``) from the measured results."""

from __future__ import annotations

import math

__all__ = ["SECTIONS", "render"]

#: Section titles, in order (the smoke test checks each is present).
SECTIONS = {
    "machine": "Machine and versions",
    "overhead": "a. Overhead against raw inference",
    "memory": "b. Peak memory against N",
    "startup": "c. Start-up",
    "advise": "d. advise against audit",
    "scipy": "e. Against scipy's stats.sobol_indices at equal evaluations",
    "dask": "f. Dask local:2 against one process",
    "gaps": "What is not measured",
}

CAUTION = (
    "Caution: an audit of a model's sensitivity is not a safety validation. Where a model informs or "
    "controls equipment, defer to the applicable codes and to qualified engineers."
)


def _num(x: float, unit: str = "") -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "–"
    return f"{x:.0f}{unit}" if unit == " MiB" else f"{x:.3g}{unit}"


def _met(r: dict) -> str:
    if r["met"] is None:
        return "no target"
    return "met" if r["met"] else "not met"


def _table(rows: list[dict], netdim: str, reference: str, ratio: str = "ratio") -> list[str]:
    lines = [
        f"| case | {netdim} | {reference} | {ratio} (median) | spread (min–max) | pairs | target | met |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        unit = " MiB" if r["unit"] == "MiB" else " s"
        target = "–" if math.isnan(r["target"]) else f"{r['target_op']} {r['target']:g}"
        lines.append(
            f"| {r['case']} | {_num(r['netdim'], unit)} | {_num(r['reference'], unit)} | {r['ratio']:.3g} | "
            f"{r['ratio_min']:.3g}–{r['ratio_max']:.3g} | {r['pairs']} | {target} | {_met(r)} |"
        )
    lines.append("")
    lines.append("Commands and settings:")
    lines.append("")
    for r in rows:
        extra = f" ({r['note']})" if r["note"] else ""
        lines.append(f"- {r['case']}: `{r['command']}` against `{r['reference_command']}`{extra}")
    lines.append("")
    return lines


def render(results: dict) -> str:
    """The whole page; ``results`` is what :func:`benchmarks.run_all` returns."""
    m, v, s = results["machine"], results["versions"], results["settings"]
    out = [
        "# netdim benchmarks",
        "",
        f"Mode: {s['name']}; {s['pairs']} paired run(s) per timing of a command and "
        f"{s.get('steady_pairs', s['pairs'])} per in-process timing (netdim and its reference one after the other, "
        "in alternating order from pair to pair); every ratio is the median of the per-pair ratios, with their "
        "min–max as the spread. Raw timings: the JSON file beside this page "
        "(`reports/bench/benchmarks.json` by default). Command: "
        f"`python tests/bench/benchmarks.py{' --quick' if s['name'] == 'quick' else ''}`; "
        f"it took {results['seconds']:.0f} s. Commands run with Python's byte-code cache on, as an installed "
        "package runs (netdim's modules compiled first).",
        "",
        f"## {SECTIONS['machine']}",
        "",
        f"- Machine: {m['cpu']}, {m['cores']} cores, {m['memory_gib']} GiB memory; load average at start "
        f"{', '.join(str(x) for x in m['load_average_at_start'])}"
        + (f" ({results['shared']})" if results.get("shared") else ""),
        f"- OS: {m['os']}; Python {m['python']}",
        "- Versions: " + ", ".join(f"{k} {val}" for k, val in v.items()),
        f"- Date: {m['date']}",
        "",
        f"## {SECTIONS['overhead']}",
        "",
        "netdim's time over the reference's: `tests/bench/raw_inference.py` (python, numpy and onnxruntime "
        "only) pushes the same rows (the audit's evaluations, N(d+2)R) through a CPU session with one thread "
        "per core, in batches as netdim calls the model (`CALL_ROWS`, 1024 rows, or a task's rows when "
        "fewer), outputs only. *Whole process*: wall time of the two commands, start-up included. "
        "*Steady state*: in one process after a warm-up, `audit_model` on an "
        "opened model against the reference's inference loop (no imports, no session creation). MLP = the "
        "64-256-256-10 ReLU MLP (torch seed 0, exported to ONNX in a temporary folder, d = 64, 10 outputs); "
        "CNN = `model_zoo/digits_cnn.onnx`. Target 1.15 outputs only, 1.5 with hidden layers (both "
        "`--layers activations` and `--layers all`). With hidden layers the target's reference is the same "
        "script on the same graph made to return the tensors netdim captures (written with `onnx`): "
        "returning a hidden tensor stops onnxruntime fusing its node with the next (a convolution or Gemm "
        "with its ReLU), which any script asking for those tensors pays. The rows *against outputs only* "
        "keep the outputs-only reference, without a target, to show what the hidden layers cost in all.",
        "",
        *_table(results["overhead"], "netdim", "raw inference"),
        f"## {SECTIONS['memory']}",
        "",
        "Peak resident memory of `netdim audit --layers all` (2 randomizations) at the large N over the small "
        "N, each the child's own `ru_maxrss` as `/usr/bin/time -f %M` reports it. The peak moves from run to "
        "run with the timing of the two tasks that run side by side (one CNN command measured 474-846 MiB), "
        "so it is paired like the timings.",
        "",
        *_table(results["memory"], "peak, large N", "peak, small N"),
        f"## {SECTIONS['startup']}",
        "",
        "Wall time of each command against `python -c \"import numpy, rich\"` in the same pairs; only "
        "`netdim --help` has a target (≤ 2×).",
        "",
        *_table(results["startup"], "command", "import numpy, rich"),
        f"## {SECTIONS['advise']}",
        "",
        "Default `netdim advise` against the default `netdim audit` (activation layers) of the same model at "
        "the same points, whole process.",
        "",
        *_table(results["advise"], "advise", "audit"),
    ]
    new = results.get("advise_new_flags") or {}
    if new:
        out += ["Options of `netdim advise` added since the suite was written (listed, not timed):", ""]
        out += [f"- `{k}`: {val}" for k, val in new.items()] + [""]
    else:
        out += ["`netdim advise --help` shows no option to limit advise (freezing only, pre-integration only, "
                "a budget) yet; only the default advise is timed.", ""]  # fmt: skip
    out += [
        f"## {SECTIONS['scipy']}",
        "",
        "g-function with a_j = (j − 1)/2 (\"About the use of rank transformation in sensitivity analysis of "
        "model output\", Reliability Engineering & System Safety, 1995, from memory), inputs uniform on "
        "[0, 1], in one process; netdim's Jansen estimator with R randomizations of N/R points against "
        "`stats.sobol_indices(n=N)`, both N(d + 2) evaluations.",
        "",
        *_table(results["scipy"], "netdim", "scipy"),
        "Peak memory (tracemalloc's peak, in separate untimed runs) and a sanity check: how many of the d "
        "exact indices (V_j = 1/(3(1 + a_j)²), product formula) each tool's 95 % intervals cover (netdim: "
        "Student-t over the randomizations; scipy: bootstrap, 99 resamples), and the largest absolute error "
        "of any index.",
        "",
        "| d | evaluations | netdim peak | scipy peak | netdim total / first covered | "
        "scipy total / first covered | netdim largest error | scipy largest error |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for x in results["scipy_details"]:
        d = x["d"]
        out.append(
            f"| {d} | {x['evaluations']:,} | {x['netdim_peak_mib']:.1f} MiB | {x['scipy_peak_mib']:.1f} MiB | "
            f"{x['netdim_total_inside']}/{d} / {x['netdim_first_inside']}/{d} | "
            f"{x['scipy_total_inside']}/{d} / {x['scipy_first_inside']}/{d} | "
            f"{x['netdim_max_error']:.3g} | {x['scipy_max_error']:.3g} |"
        )
    out += [
        "",
        f"## {SECTIONS['dask']}",
        "",
        "Speed-up = wall time of one process over that of `--cluster local:2` (higher is better). Whole "
        "process: the two commands' wall times, the cluster's start-up and close included, on a long job (one "
        "process takes tens of seconds, so that the model's inference outweighs a start-up of about a second, as "
        "in the jobs a cluster is for) and on a short one (no target). Steady state: in one process, the "
        "cluster started once.",
        "",
        *_table(results["dask"], "local:2", "one process", ratio="speed-up"),
        f"## {SECTIONS['gaps']}",
        "",
        *[f"- {g}" for g in results["gaps"]],
        "",
        CAUTION,
        "",
    ]
    return "\n".join(out)
