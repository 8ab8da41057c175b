"""Measure f: ``--cluster local:2`` against one process: whole-process wall times of ``netdim audit``, and
the steady state (in this process, a cluster started once and warmed up, against the same audit here).

The whole-process target is taken on a long job (the simulator's ``dask_long`` steps per row: one process
takes tens of seconds), where the model's inference outweighs the cluster's start-up and close (about a
second: dask's import, two spawned workers, their shutdown), as in the jobs a cluster serves; the short job
is shown without a target, to say what the start-up costs.

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
    """Speed-up = one process / local:2: the ODE simulator on a long job (target ≥ 1.8×) and on a short one,
    and the ONNX MLP (no target); then the simulator in one process with the cluster started once."""
    points, replicates, steps = settings.dask_ode
    long_steps, long_pairs = settings.dask_long
    mp, mr = settings.dask_mlp
    ode = ["--law", "uniform", "--dim", "6", "--points", str(points), "--replicates", str(replicates)]
    startup = "the cluster's start-up and close weigh the more, the shorter the job"
    cases = []
    if long_steps:
        cases.append((f"inference-bound Python simulator (cases_ode, 6 inputs), long job: {long_steps} steps a row",
                      "cases_ode:simulate", ode, 1.8, f"{long_steps} Euler steps per row", long_steps, long_pairs))
    cases.append((f"the same simulator, short job: {steps} steps a row", "cases_ode:simulate", ode,
                  float("nan") if long_steps else 1.8, f"{steps} Euler steps per row; {startup}", steps,
                  settings.pairs))
    if settings.dask_onnx:
        cases.append(("ONNX 64-256-256-10 MLP, outputs only", str(mlp),
                      ["--law", "uniform", "--points", str(mp), "--replicates", str(mr), "--layers", "none"],
                      float("nan"), "no target: onnxruntime already uses both cores in one process", steps,
                      settings.pairs))
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for label, model, args, target, note, case_steps, pairs in cases:
            env = {"PYTHONPATH": str(HERE), "NETDIM_BENCH_STEPS": str(case_steps)}
            base = ["audit", model, *args, "--seed", "1", "-q"]
            one = [*base, "--json", f"{tmp}/one.json"]
            two = [*base, "--cluster", "local:2", "--json", f"{tmp}/two.json"]
            t = paired({"two": lambda c=two, e=env: child(netdim_cmd(*c), e)[0],
                        "one": lambda c=one, e=env: child(netdim_cmd(*c), e)[0]}, pairs)  # fmt: skip
            diff = largest_difference(Path(tmp, "one.json"), Path(tmp, "two.json"))
            shown = " ".join(base).replace(str(mlp), mlp.name)
            rows.append(row(label, t["two"], t["one"], target, higher_is_better=True,
                            command=f"netdim {shown} --cluster local:2", reference_command=f"netdim {shown}",
                            note=f"{note}; results differ by at most {diff:.1e} (relative)"))  # fmt: skip
            rows[-1]["largest_relative_difference"] = diff
    rows.append(_steady(settings, points, replicates, steps))
    return rows


def _steady(settings: Settings, points: int, replicates: int, steps: int) -> dict:
    """The simulator audited in this process, on a local cluster started once, against no cluster."""
    import importlib
    import os
    import sys
    import time

    os.environ["NETDIM_BENCH_STEPS"] = str(steps)  # read by cases_ode here and in the workers
    os.environ["PYTHONPATH"] = os.pathsep.join(filter(None, [str(HERE), os.environ.get("PYTHONPATH", "")]))
    if str(HERE) not in sys.path:
        sys.path.insert(0, str(HERE))
    import cases_ode

    importlib.reload(cases_ode)
    import audit
    from audit.cluster import close, connect

    kw = {"dim": 6, "points": points, "replicates": replicates, "seed": 1}

    def timed(**extra) -> float:
        t0 = time.perf_counter()
        audit.audit_function(cases_ode.simulate, "uniform", **kw, **extra)
        return time.perf_counter() - t0

    t0 = time.perf_counter()
    client = connect("local:2")
    started = time.perf_counter() - t0
    try:
        audit.audit_function(cases_ode.simulate, "uniform", **{**kw, "points": 64}, cluster=client)  # warm-up
        t = paired({"two": lambda: timed(cluster=client), "one": timed}, settings.pairs)
    finally:
        t0 = time.perf_counter()
        close(client)
        closed = time.perf_counter() - t0
    shown = f"audit_function(cases_ode.simulate, 'uniform', dim=6, points={points}, replicates={replicates})"
    return row("inference-bound Python simulator, steady state (cluster started once)", t["two"], t["one"], 1.8,
               higher_is_better=True, command=f"{shown} with cluster=<local:2 client>", reference_command=shown,
               note=f"{steps} Euler steps per row; the cluster's start-up left out (here {started:.2f} s to start it "
                    f"in this process, dask already imported, and {closed:.2f} s to close it)")  # fmt: skip
