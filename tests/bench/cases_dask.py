"""Measure f: ``--cluster local:2`` against one process, whole-process wall times of ``netdim audit``.

The inference-bound case is :mod:`cases_ode` (single-threaded, its per-row cost
dominates); the ONNX case is the 64-256-256-10 MLP, whose onnxruntime session already
uses both cores in one process, so two workers can only share the same two cores (and
each pays its own start-up). Both runs write their JSON report; the numbers of every
output (and layer) are compared and the largest relative difference is reported.
"""

from __future__ import annotations

import json
import math
import tempfile
from pathlib import Path

from cases_common import HERE, Settings, child, netdim_cmd, paired, row

__all__ = ["dask_cases", "largest_difference"]


def _numbers(obj, path: str = "") -> dict[str, float]:
    out: dict[str, float] = {}
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.update(_numbers(v, f"{path}/{k}"))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            out.update(_numbers(v, f"{path}/{i}"))
    elif isinstance(obj, int | float) and not isinstance(obj, bool):
        out[path] = float(obj)
    return out


def largest_difference(a: Path, b: Path) -> float:
    """Largest relative difference between the numbers of the ``outputs`` and ``layers`` of two JSON reports."""
    da, db = (json.loads(Path(p).read_text()) for p in (a, b))
    worst = 0.0
    for key in ("outputs", "layers"):
        na, nb = _numbers(da.get(key)), _numbers(db.get(key))
        if na.keys() != nb.keys():
            return math.inf
        for k, x in na.items():
            y = nb[k]
            worst = max(worst, abs(x - y) / max(abs(x), abs(y), 1e-300) if x != y else 0.0)
    return worst


def dask_cases(settings: Settings, mlp: Path) -> list[dict]:
    """The ODE simulator (target ≥ 1.8×) and the ONNX MLP (no target), speed-up = one process / local:2."""
    points, replicates, steps = settings.dask_ode
    mp, mr = settings.dask_mlp
    env = {"PYTHONPATH": str(HERE), "NETDIM_BENCH_STEPS": str(steps)}
    cases = (
        ("inference-bound Python simulator (cases_ode, 6 inputs)", "cases_ode:simulate",
         ["--law", "uniform", "--dim", "6", "--points", str(points), "--replicates", str(replicates)], 1.8,
         f"{steps} Euler steps per row"),
        ("ONNX 64-256-256-10 MLP, outputs only", str(mlp),
         ["--law", "uniform", "--points", str(mp), "--replicates", str(mr), "--layers", "none"], float("nan"),
         "no target: onnxruntime already uses both cores in one process"),
    )  # fmt: skip
    if not settings.dask_onnx:
        cases = cases[:1]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for label, model, args, target, note in cases:
            base = ["audit", model, *args, "--seed", "1", "-q"]
            one = [*base, "--json", f"{tmp}/one.json"]
            two = [*base, "--cluster", "local:2", "--json", f"{tmp}/two.json"]
            t = paired({"two": lambda c=two: child(netdim_cmd(*c), env)[0],
                        "one": lambda c=one: child(netdim_cmd(*c), env)[0]}, settings.pairs)  # fmt: skip
            diff = largest_difference(Path(tmp, "one.json"), Path(tmp, "two.json"))
            shown = " ".join(base).replace(str(mlp), mlp.name)
            rows.append(row(label, t["two"], t["one"], target, higher_is_better=True,
                            command=f"netdim {shown} --cluster local:2", reference_command=f"netdim {shown}",
                            note=f"{note}; results differ by at most {diff:.1e} (relative)"))  # fmt: skip
            rows[-1]["largest_relative_difference"] = diff
    return rows
