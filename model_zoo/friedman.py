"""A surrogate of Friedman's test function #1 and the table of its training inputs, made by code.

The function ("Multivariate adaptive regression splines", Annals of Statistics, 1991)::

    f(x) = 10 sin(π x1 x2) + 20 (x3 − 0.5)² + 10 x4 + 5 x5,   x ~ U[0, 1]^10,

of which x6..x10 are noise inputs the function ignores. The training inputs
come from :func:`sklearn.datasets.make_friedman1` (generated, no download) with a
fixed seed and no noise; the surrogate is a small scikit-learn MLP, converted
to ONNX with skl2onnx. Nothing here is bundled: ``python -m model_zoo.friedman DIR``
writes ``DIR/friedman_train.csv`` (the training inputs, a header x1..x10) and
``DIR/friedman_mlp.onnx`` in under a minute, for the README's walk from a
training table to an audit.
"""

from __future__ import annotations

import argparse
import csv
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

__all__ = ["NAMES", "SEED", "friedman1", "main", "to_onnx", "train", "training_data", "write_table"]

#: Seed of the training data and of the network's initial weights.
SEED = 20240607
#: Training rows.
ROWS = 2000
#: Iterations of the L-BFGS fit.
MAX_ITER = 200
NAMES = [f"x{j}" for j in range(1, 11)]


def friedman1(x: np.ndarray) -> np.ndarray:
    """The function itself, on (n, 10) rows."""
    x = np.asarray(x, dtype=np.float64)
    return 10 * np.sin(np.pi * x[:, 0] * x[:, 1]) + 20 * (x[:, 2] - 0.5) ** 2 + 10 * x[:, 3] + 5 * x[:, 4]


def training_data(rows: int = ROWS, seed: int = SEED) -> tuple[np.ndarray, np.ndarray]:
    """Training inputs and targets from :func:`sklearn.datasets.make_friedman1` (no noise)."""
    from sklearn.datasets import make_friedman1

    x, y = make_friedman1(n_samples=rows, n_features=10, noise=0.0, random_state=seed)
    return x, y


def train(x: np.ndarray, y: np.ndarray, seed: int = SEED) -> Any:
    """A small MLP fitted to (x, y): inputs standardised, two hidden tanh layers of 32, L-BFGS."""
    from sklearn.exceptions import ConvergenceWarning
    from sklearn.neural_network import MLPRegressor
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    net = MLPRegressor(
        hidden_layer_sizes=(32, 32),
        activation="tanh",
        solver="lbfgs",
        alpha=1e-4,
        max_iter=MAX_ITER,
        random_state=seed,
    )
    with warnings.catch_warnings():  # a fixed iteration budget, whatever L-BFGS would still gain
        warnings.simplefilter("ignore", ConvergenceWarning)
        return make_pipeline(StandardScaler(), net).fit(x, y)


def to_onnx(model: Any, path: str | Path) -> Path:
    """The fitted model as an ONNX file (float32 input ``x`` of 10 features)."""
    from skl2onnx import to_onnx as convert

    onx = convert(model, np.zeros((1, 10), dtype=np.float32), target_opset=17)
    path = Path(path)
    path.write_bytes(onx.SerializeToString())
    return path


def write_table(x: np.ndarray, path: str | Path, names: Sequence[str] = NAMES) -> Path:
    """The training inputs as CSV with a header (numbers written to round-trip exactly)."""
    path = Path(path)
    with path.open("w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(names)
        w.writerows([repr(float(v)) for v in row] for row in x)
    return path


def main(argv: Sequence[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m model_zoo.friedman", description=__doc__.splitlines()[0])
    p.add_argument("folder", help="where to write friedman_train.csv and friedman_mlp.onnx")
    args = p.parse_args(argv)
    out = Path(args.folder)
    out.mkdir(parents=True, exist_ok=True)
    x, y = training_data()
    model = train(x, y)
    write_table(x, out / "friedman_train.csv")
    to_onnx(model, out / "friedman_mlp.onnx")
    print(f"wrote {out / 'friedman_train.csv'} and {out / 'friedman_mlp.onnx'} (training R² {model.score(x, y):.4f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
