"""The reference of the overhead measures: raw onnxruntime inference of a number of rows, outputs only.

Imports numpy and onnxruntime only (never netdim), so that as a child process
its wall time is the least any tool must pay to push those rows through the
model: one CPU session with one thread per core (as netdim opens it), one batch
of uniform rows in the model's input dtype made once, then ``rows // batch``
calls of that batch and one call of the remainder.

    python tests/bench/raw_inference.py MODEL.onnx ROWS BATCH

prints the seconds of the inference loop alone.
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np
import onnxruntime as ort

__all__ = ["RawRunner"]

_DTYPES = {"tensor(float)": np.float32, "tensor(double)": np.float64, "tensor(float16)": np.float16}


class RawRunner:
    """One onnxruntime session of ``path`` and a batch of rows for it.

    Parameters
    ----------
    path : str
        ONNX file with one input tensor whose first axis is the batch axis.
    batch : int
        Rows per call.
    """

    def __init__(self, path: str, batch: int) -> None:
        options = ort.SessionOptions()
        options.intra_op_num_threads = os.cpu_count() or 1
        options.log_severity_level = 3
        self.session = ort.InferenceSession(path, sess_options=options, providers=["CPUExecutionProvider"])
        meta = self.session.get_inputs()[0]
        shape = [d if isinstance(d, int) and d > 0 else 1 for d in meta.shape[1:]]
        self.name = meta.name
        self.batch = batch
        rng = np.random.default_rng(0)
        self.x = rng.random((batch, *shape)).astype(_DTYPES.get(meta.type, np.float32))

    def run(self, rows: int) -> float:
        """Push ``rows`` rows through the session in batches; return the seconds taken."""
        t0 = time.perf_counter()
        for _ in range(rows // self.batch):
            self.session.run(None, {self.name: self.x})
        rest = rows % self.batch
        if rest:
            self.session.run(None, {self.name: self.x[:rest]})
        return time.perf_counter() - t0


def main(argv: list[str]) -> None:
    path, rows, batch = argv[0], int(argv[1]), int(argv[2])
    print(f"{RawRunner(path, batch).run(rows):.6f}")


if __name__ == "__main__":
    main(sys.argv[1:])
