"""Cost of an audit against raw inference of the same rows (a benchmark, not a timed test).

For each model, times (best of several repeats, in one run):
- raw: onnxruntime inference of the same number of rows, in the same batch sizes, outputs only;
- audit, outputs only (``--layers none``), and with every activation layer captured.
Targets (DESIGN.md §5): ratio ≤ 1.15 outputs only, ≤ 1.5 with activation layers.
Also checks that the fast ν estimator's cost does not grow with d. Writes ``reports/bench/speed.json``.

    python tests/bench/bench_speed.py
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

import numpy as np
import onnxruntime as ort

from audit import audit_function, audit_model, load_spec
from audit.models.open import open_model
from audit.studies import prepare

ROOT = Path(__file__).resolve().parents[2]
ZOO = ROOT / "model_zoo"
REPEATS = 5


def best(f) -> float:
    times = []
    for _ in range(REPEATS):
        t = time.perf_counter()
        f()
        times.append(time.perf_counter() - t)
    return min(times)


def raw_inference(path: Path, rows: int, batch: int, d_shape) -> float:
    opts = ort.SessionOptions()
    opts.intra_op_num_threads = os.cpu_count() or 1
    sess = ort.InferenceSession(str(path), opts, providers=["CPUExecutionProvider"])
    name = sess.get_inputs()[0].name
    x = np.random.default_rng(0).random((batch, *d_shape), dtype=np.float32)
    calls = rows // batch

    def go():
        for _ in range(calls):
            sess.run(None, {name: x})

    return best(go)


def bench(name: str, points: int = 2048, replicates: int = 4) -> dict:
    spec = load_spec(ZOO / f"{name}.toml")
    model = open_model(str(ZOO / f"{name}.onnx"))
    setup = prepare(model, spec, points=points, replicates=replicates, seed=1, layers="none")
    d = setup.design.d
    rows_per_task = setup.block * (d + 2)
    raw = raw_inference(ZOO / f"{name}.onnx", setup.evaluations, rows_per_task, model.inputs[0].shape)
    plain = best(lambda: audit_model(model, spec, points=points, replicates=replicates, seed=1, layers="none"))
    layered = best(lambda: audit_model(model, spec, points=points, replicates=replicates, seed=1))
    res = {
        "evaluations": setup.evaluations,
        "raw_s": raw,
        "audit_outputs_s": plain,
        "audit_layers_s": layered,
        "ratio_outputs": plain / raw,
        "ratio_layers": layered / raw,
    }
    print(
        f"{name:14s} {setup.evaluations:>9,} rows: raw {raw:.3f} s, audit {plain:.3f} s "
        f"({plain / raw:.2f}×), with activation layers {layered:.3f} s ({layered / raw:.2f}×)"
    )
    return res


def fast_scaling() -> dict:
    out = {}
    for d in (8, 64, 512):

        def f(x):
            return np.tanh(x).sum(axis=1)

        t = best(lambda d=d: audit_function(f, "normal", dim=d, points=4096, replicates=4, seed=1, estimator="fast"))
        out[d] = t
        print(f"fast ν estimator, d = {d:4d}: {t:.3f} s (2N evaluations per randomization)")
    return out


def main() -> None:
    results = {name: bench(name) for name in ("greenhouse_v1", "digits_mlp", "digits_cnn")}
    results["fast_seconds_by_d"] = fast_scaling()
    out = ROOT / "reports" / "bench" / "speed.json"
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
