"""Measures a and b: overhead against raw inference, and peak memory against N.

The 64-256-256-10 ReLU MLP is built here from code (fixed torch seed) and exported
to ONNX into a temporary folder; the digits CNN is the bundled
``model_zoo/digits_cnn.onnx``. The reference is :mod:`raw_inference`: the same number
of rows (the audit's ``design["evaluations"]``, N(d+2)R for the Jansen estimator)
through the same kind of onnxruntime session, in batches of the rows netdim feeds per
call (``audit.models.onnx.CALL_ROWS``, or a task's rows, ``design["block"]`` points ×
rows per point, when fewer), outputs only.

With hidden layers there are two references. Returning a hidden tensor changes the
inference itself: onnxruntime can no longer fuse the node that makes it with the next
one (a convolution with its ReLU, a Gemm with its ReLU), so a plain script that asks
for the same tensors pays for that too. The target (≤ 1.5×) is taken against that
script, the same graph with the tensors netdim captures as extra outputs (written
with ``onnx`` into a temporary folder, run by the same :mod:`raw_inference`), so that
it measures what netdim adds; the ratio against outputs-only inference is shown
beside it without a target, to say what the hidden layers cost in all.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from cases_common import HERE, ZOO, Settings, child, netdim_cmd, paired, row

__all__ = ["LAYER_CASES", "build_mlp", "memory", "overhead"]

#: (label, --layers value, target): outputs only ≤ 1.15×, hidden layers ≤ 1.5× (issue 19).
LAYER_CASES = (
    ("outputs only", "none", 1.15),
    ("activation layers", "activations", 1.5),
    ("every layer", "all", 1.5),
)


def build_mlp(folder: Path) -> Path:
    """A 64-256-256-10 ReLU MLP with torch seed 0, exported to ``folder/mlp_64_256_256_10.onnx``."""
    import torch

    sys.path.insert(0, str(ZOO.parent))
    from model_zoo.export import export_onnx

    torch.manual_seed(0)
    net = torch.nn.Sequential(
        torch.nn.Linear(64, 256),
        torch.nn.ReLU(),
        torch.nn.Linear(256, 256),
        torch.nn.ReLU(),
        torch.nn.Linear(256, 10),
    )
    return export_onnx(net, torch.zeros(4, 64), folder / "mlp_64_256_256_10.onnx")


def _audit_args(path: Path, layers: str, points: int, replicates: int) -> list[str]:
    return [
        "audit", str(path), "--law", "uniform", "--points", str(points), "--replicates", str(replicates),
        "--seed", "1", "--layers", layers, "--no-save", "-q",
    ]  # fmt: skip


def _sizes(settings: Settings, model: str, layers: str) -> tuple[int, int]:
    if model == "mlp":
        return settings.mlp_none if layers == "none" else settings.mlp_layers
    return settings.cnn_none if layers == "none" else settings.cnn_layers


def with_captured(model, layers: str, folder: Path) -> tuple[Path, int]:
    """The model's graph with the tensors ``layers`` captures as extra outputs, written into ``folder``; and
    how many they are."""
    from audit.models.onnx_graph import with_outputs
    from audit.studies.setup import select_layers

    tensors = tuple(sorted(dict.fromkeys(la.tensor for la in select_layers(model, layers))))
    out = folder / f"{model.path.stem}.{layers}.onnx"
    out.write_bytes(with_outputs(model._proto, tensors, model.path, False))
    return out, len(tensors)


def _steady(path: Path, layers: str, points: int, replicates: int, pairs: int, folder: Path) -> tuple[dict, dict]:
    """In one process, after a warm-up: ``audit_model`` on an opened model against the raw loop (and, with
    hidden layers, against the raw loop of the graph that returns the same tensors: ``same``)."""
    from raw_inference import RawRunner

    import audit

    model = audit.open_model(str(path))
    same_path, tensors = with_captured(model, layers, folder) if layers != "none" else (None, 0)
    audit.audit_model(model, "uniform", points=min(points, 64), replicates=2, seed=1, layers=layers)
    state: dict = {}

    def netdim() -> float:
        import time

        t0 = time.perf_counter()
        r = audit.audit_model(model, "uniform", points=points, replicates=replicates, seed=1, layers=layers)
        state["design"] = r.design
        return time.perf_counter() - t0

    def raw() -> float:
        d = state["design"]
        batch = d["block"] * d["evaluations"] // (d["points"] * d["replicates"])
        from audit.models.onnx import CALL_ROWS  # netdim's rows per onnxruntime call: the same here

        batch = min(batch, CALL_ROWS)
        if state.get("batch") != batch:
            state["runner"], state["batch"] = RawRunner(str(path), batch), batch
            state["runner"].run(batch)  # warm-up of the reference's session
            if same_path is not None:
                state["same"] = RawRunner(str(same_path), batch)
                state["same"].run(batch)
        return state["runner"].run(d["evaluations"])

    runs = {"netdim": netdim, "raw": raw}
    if same_path is not None:
        runs["same"] = lambda: state["same"].run(state["design"]["evaluations"])
    times = paired(runs, pairs)
    return times, {"evaluations": state["design"]["evaluations"], "batch": state["batch"], "same": same_path,
                   "tensors": tensors}


def overhead(settings: Settings, models: dict[str, Path]) -> list[dict]:
    """Whole-process and steady-state ratios netdim / raw inference for every model and layer case."""
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for key, path in models.items():
            for label, layers, target in LAYER_CASES:
                if (key, layers) in settings.overhead_cases:
                    rows += _case(settings, key, path, label, layers, target, Path(tmp))
    return rows


def _case(settings: Settings, key: str, path: Path, label: str, layers: str, target: float, tmp: Path) -> list[dict]:
    points, replicates = _sizes(settings, key, layers)
    times, info = _steady(path, layers, points, replicates, settings.steady_pairs, tmp)
    rel = path.relative_to(path.parents[1]) if key == "cnn" else path.name
    cmd = netdim_cmd(*_audit_args(path, layers, points, replicates))
    tail = [str(info["evaluations"]), str(info["batch"])]
    runs = {"netdim": lambda: child(cmd)[0],
            "raw": lambda: child([sys.executable, str(HERE / "raw_inference.py"), str(path), *tail])[0]}
    if info["same"] is not None:
        runs["same"] = lambda: child([sys.executable, str(HERE / "raw_inference.py"), str(info["same"]), *tail])[0]
    whole = paired(runs, settings.pairs)
    args = " ".join(_audit_args(Path(str(rel)), layers, points, replicates))
    ref = f"raw_inference.py {rel} {' '.join(tail)}"
    note = f"{info['evaluations']:,} rows in batches of {info['batch']:,}"
    rows = []
    for mode, t in (("whole process", whole), ("steady state", times)):
        command = f"netdim {args}" if mode == "whole process" else f"audit_model(layers={layers!r})"
        if info["same"] is None:
            rows.append(row(f"{key.upper()} · {label} · {mode}", t["netdim"], t["raw"], target, command=command,
                            reference_command=ref, note=note))
            continue
        rows.append(row(f"{key.upper()} · {label} · {mode}", t["netdim"], t["same"], target, command=command,
                        reference_command=f"raw_inference.py {info['same'].name} {' '.join(tail)}",
                        note=f"{note}; the reference's graph also returns the {info['tensors']} tensors "
                             "netdim captures"))
        rows.append(row(f"{key.upper()} · {label} · {mode} · against outputs only", t["netdim"], t["raw"],
                        float("nan"), command=command, reference_command=ref,
                        note=f"{note}; no target: what the hidden layers cost in all, fusion lost included"))
    return rows  # fmt: skip


def memory(settings: Settings, models: dict[str, Path]) -> list[dict]:
    """Peak RSS (own rusage of each child) of ``netdim audit --layers all`` at the large N against the small N."""
    small, large = settings.memory_points
    rows = []
    # the peak moves with the timing of the two side-by-side tasks (474-846 MiB measured for one CNN command)
    pairs = settings.pairs
    for key, path in models.items():
        if key not in settings.memory_models:
            continue
        runs = {
            n: (lambda n=n, path=path: child(netdim_cmd(*_audit_args(path, "all", n, 2)))[1]) for n in (large, small)
        }
        peaks = paired(runs, pairs)
        rel = path.relative_to(path.parents[1]) if key == "cnn" else path.name
        rows.append(
            row(f"{key.upper()} · every layer · N = 2^{large.bit_length() - 1} / 2^{small.bit_length() - 1}",
                peaks[large], peaks[small], 1.1, unit="MiB",
                command=" ".join(_audit_args(Path(str(rel)), "all", large, 2)),
                reference_command=f"the same with --points {small}",
                note="peak RSS of the child, /usr/bin/time -f %M")
        )  # fmt: skip
    return rows
