"""Train and export every model of the netdim zoo: ``python -m model_zoo.build``.

Runs on the CPU with fixed seeds (one Torch thread, so that reductions happen in
a fixed order) from data made by our own code (the fictional greenhouse
simulator) or bundled with scikit-learn (``load_digits``, ``load_diabetes``; no
download). For each model it writes ``NAME.onnx`` and ``NAME.pt``
(TorchScript), for ``greenhouse_v1`` also ``.pt2`` (``torch.export``) and
``.state.pt`` (state dict), checks that all files agree with the network, then
writes the input spec ``NAME.toml``, the model card ``NAME.md``, and updates
``cards.json`` (metrics), ``validation.json`` (exact answers of the validation
networks) and ``README.md``.

Usage::

    python -m model_zoo.build [--only NAME [NAME ...]] [--out DIR]
"""

from __future__ import annotations

import argparse
import difflib
import json
import math
import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import torch
from torch import nn

from . import cards, exact, export, greenhouse, nets

__all__ = [
    "MODELS",
    "SPLIT_SEED",
    "ZOO_DIR",
    "BuildResult",
    "build_all",
    "build_model",
    "main",
]

ZOO_DIR = Path(__file__).resolve().parent
SPLIT_SEED = 20240607
"""Seed of every held-out split (scikit-learn data) and of the greenhouse test inputs."""
TEST_FRACTION = 0.2
GREENHOUSE_TEST_ROWS = 4000
CHECK_ROWS = 257  # rows used to compare the exported files with the network


@dataclass
class BuildResult:
    """What building one model produced.

    Attributes
    ----------
    name : str
        Model name.
    record : dict
        Card record (also stored in ``cards.json``).
    files : list of Path
        Every file written for the model.
    seconds : float
        Wall time of training and export.
    """

    name: str
    record: dict[str, Any]
    files: list[Path] = field(default_factory=list)
    seconds: float = 0.0

    @property
    def metrics(self) -> dict[str, float]:
        return self.record["metrics"]


@contextmanager
def _deterministic(seed: int) -> Iterator[None]:
    """One Torch thread and fixed seeds; restores the thread count afterwards."""
    threads = torch.get_num_threads()
    torch.set_num_threads(1)
    torch.manual_seed(seed)
    np.random.seed(seed % 2**32)
    try:
        yield
    finally:
        torch.set_num_threads(threads)


def _r2(y: np.ndarray, pred: np.ndarray) -> np.ndarray:
    y = y.reshape(len(y), -1)
    pred = pred.reshape(len(pred), -1)
    return 1.0 - ((y - pred) ** 2).sum(0) / ((y - y.mean(0)) ** 2).sum(0)


def _predict(model: nn.Module, x: np.ndarray) -> np.ndarray:
    model.eval()
    with torch.no_grad():
        return model(torch.as_tensor(x, dtype=torch.float32)).double().numpy()


def _fit(
    model: nn.Module,
    loss_fn: Callable[[torch.Tensor], torch.Tensor],
    steps: int,
    lr: float,
    weight_decay: float = 0.0,
    lbfgs_steps: int = 0,
) -> float:
    """Full-batch Adam with a cosine learning-rate decay, then optional L-BFGS."""
    model.train()
    opt = torch.optim.Adam(model.parameters(), lr=lr, weight_decay=weight_decay)
    sched = torch.optim.lr_scheduler.CosineAnnealingLR(opt, T_max=steps)
    for _ in range(steps):
        opt.zero_grad()
        loss = loss_fn(model)
        loss.backward()
        opt.step()
        sched.step()
    if lbfgs_steps:
        lbfgs = torch.optim.LBFGS(
            model.parameters(),
            lr=1.0,
            max_iter=lbfgs_steps,
            history_size=20,
            line_search_fn="strong_wolfe",
            tolerance_grad=1e-9,
            tolerance_change=1e-12,
        )

        def closure() -> torch.Tensor:
            lbfgs.zero_grad()
            loss = loss_fn(model)
            loss.backward()
            return loss

        lbfgs.step(closure)
    model.eval()
    with torch.no_grad():
        return float(loss_fn(model))


def _write_formats(
    name: str,
    model: nn.Module,
    example: torch.Tensor,
    check_x: np.ndarray,
    out_dir: Path,
    extra: bool = False,
    rebuild: nn.Module | None = None,
    input_name: str = "x",
    output_name: str = "y",
) -> tuple[dict[str, str], dict[str, float]]:
    files = {
        "onnx": export.export_onnx(model, example, out_dir / f"{name}.onnx", input_name, output_name),
        "torchscript": export.export_torchscript(model, example, out_dir / f"{name}.pt"),
    }
    if extra:
        files["torch-export"] = export.export_program(model, example, out_dir / f"{name}.pt2")
        files["state-dict"] = export.export_state(model, out_dir / f"{name}.state.pt")
    diffs = export.check_agreement(model, files, check_x, rebuild=rebuild)
    return {fmt: p.name for fmt, p in files.items()}, diffs


def _common_limitations() -> list[str]:
    return [
        "Small network trained in seconds for demonstrations and tests; not tuned.",
        "Inputs outside the ranges of the input spec were never seen in training.",
    ]


# --------------------------------------------------------------------------- greenhouse

VERSION_NOTES = {
    "greenhouse_v1": "first version",
    "greenhouse_v2": "retrained with 4x the data and a wider layer",
}
GREENHOUSE_VERSIONS = {
    "greenhouse_v1": {"rows": 4000, "seed": 101, "hidden": 32, "steps": 1500, "lbfgs": 300},
    "greenhouse_v2": {"rows": 16000, "seed": 202, "hidden": 64, "steps": 1500, "lbfgs": 300},
}


def greenhouse_spec(class_arguments: dict[str, Any] | None = None) -> dict[str, Any]:
    """Input spec of the greenhouse surrogates (and of the simulator itself)."""
    spec: dict[str, Any] = {
        "title": "Fictional greenhouse climate (netdim demo scenario)",
        "inputs": {
            "count": len(greenhouse.FEATURES),
            "feature": [
                {
                    "name": f.name,
                    "law": "uniform",
                    "low": f.low,
                    "high": f.high,
                    "unit": f.unit,
                    "note": f.note,
                }
                for f in greenhouse.FEATURES
            ],
        },
        "outputs": {
            "names": [n for n, _ in greenhouse.OUTPUTS],
            "units": [u for _, u in greenhouse.OUTPUTS],
        },
    }
    if class_arguments is not None:
        spec["model"] = {"class": "model_zoo.nets:GreenhouseMLP", "arguments": class_arguments}
    return spec


def _build_greenhouse(name: str, out_dir: Path) -> dict[str, Any]:
    cfg = GREENHOUSE_VERSIONS[name]
    arguments = {"hidden": cfg["hidden"], "depth": 2, "activation": "tanh"}
    x = greenhouse.sample_inputs(cfg["rows"], seed=cfg["seed"])
    y = greenhouse.simulate(x)
    x_test = greenhouse.sample_inputs(GREENHOUSE_TEST_ROWS, seed=SPLIT_SEED)
    y_test = greenhouse.simulate(x_test)
    lo, hi = greenhouse.lower_bounds(), greenhouse.upper_bounds()

    model = nets.GreenhouseMLP(**arguments)
    model.scale_in.set((lo + hi) / 2, (hi - lo) / 2)
    model.scale_out.set(y.mean(0), y.std(0))
    xt = torch.as_tensor(x, dtype=torch.float32)
    yt = torch.as_tensor((y - y.mean(0)) / y.std(0), dtype=torch.float32)

    def loss_fn(m: nn.Module) -> torch.Tensor:
        return ((m.body(m.scale_in(xt)) - yt) ** 2).mean()

    loss = _fit(model, loss_fn, cfg["steps"], 1e-2, lbfgs_steps=cfg["lbfgs"])
    r2 = _r2(y_test, _predict(model, x_test))
    metrics = {f"r2_{n}": float(v) for (n, _), v in zip(greenhouse.OUTPUTS, r2, strict=True)}
    formats, diffs = _write_formats(
        name,
        model,
        xt[:4],
        x_test[:CHECK_ROWS],
        out_dir,
        extra=name == "greenhouse_v1",
        rebuild=nets.GreenhouseMLP(**arguments),
    )
    spec = greenhouse_spec(arguments if name == "greenhouse_v1" else None)
    cards.write_spec(out_dir / f"{name}.toml", spec, f"netdim input spec of {name}.")
    return {
        "title": "Greenhouse climate surrogate",
        "summary": (
            f"MLP surrogate of the fictional greenhouse simulator `model_zoo.greenhouse:simulate`"
            f" ({VERSION_NOTES[name]})."
            " Takes the eight physical inputs directly and returns inside air temperature (°C)"
            " and inside relative humidity (%)."
        ),
        "task": "regression",
        "architecture": f"standardise -> Linear(8, {cfg['hidden']}) -> Tanh -> "
        f"Linear({cfg['hidden']}, {cfg['hidden']}) -> Tanh -> Linear({cfg['hidden']}, 2) "
        "-> de-standardise",
        "class": "model_zoo.nets:GreenhouseMLP",
        "arguments": arguments,
        "inputs": "8 climate values in physical units (uniform laws)",
        "input_shape": [8],
        "outputs": "inside_temperature (°C), inside_humidity (%)",
        "formats": formats,
        "training": {
            "data": (
                f"{cfg['rows']} independent uniform draws over the input ranges of "
                f"`{name}.toml`, labelled by the simulator."
            ),
            "rows": cfg["rows"],
            "seed": cfg["seed"],
            "optimiser": f"full-batch Adam {cfg['steps']} steps (lr 0.01, cosine decay), "
            f"then L-BFGS {cfg['lbfgs']} iterations, mean squared error on standardised outputs",
            "final_training_loss": loss,
        },
        "held_out": {
            "kind": "simulator",
            "rows": GREENHOUSE_TEST_ROWS,
            "seed": SPLIT_SEED,
            "description": (
                f"R² per output on {GREENHOUSE_TEST_ROWS} fresh uniform draws "
                f"(`greenhouse.sample_inputs({GREENHOUSE_TEST_ROWS}, seed={SPLIT_SEED})`)."
            ),
        },
        "metrics": metrics,
        "export_max_abs_diff": diffs,
        "intended_use": (
            "Demonstrating netdim audits, layer reports and version comparisons "
            "(compare greenhouse_v1 with greenhouse_v2) on a scenario with a known ground "
            "truth: audit the simulator itself with the same input spec."
        ),
        "limitations": [
            "The simulator is fictional: round-number coefficients, steady state, no dynamics. "
            "Neither it nor the surrogate describes any real greenhouse.",
            "The vent threshold at an opening of 0.2 is a kink that the smooth network rounds off.",
            *_common_limitations(),
        ],
    }


# --------------------------------------------------------------------------- digits


def _digits_split() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    from sklearn.datasets import load_digits
    from sklearn.model_selection import train_test_split

    data = load_digits()
    return train_test_split(
        data.data,
        data.target,
        test_size=TEST_FRACTION,
        random_state=SPLIT_SEED,
        stratify=data.target,
    )


def digits_spec() -> dict[str, Any]:
    """Input spec of the digits classifiers: 64 pixels uniform on 0..16."""
    return {
        "title": "8x8 digit images (scikit-learn bundled data), pixel values 0..16",
        "inputs": {
            "law": "uniform",
            "low": 0.0,
            "high": 16.0,
            "count": 64,
            "names": [f"pixel_{r}_{c}" for r in range(8) for c in range(8)],
        },
        "outputs": {"names": [f"digit_{k}" for k in range(10)]},
    }


def _build_digits(name: str, out_dir: Path) -> dict[str, Any]:
    x_tr, x_te, y_tr, y_te = _digits_split()
    cnn = name == "digits_cnn"
    shape = (-1, 1, 8, 8) if cnn else (-1, 64)
    if cnn:
        arguments: dict[str, Any] = {"channels": 8}
        model: nn.Module = nets.DigitsCNN(**arguments)
        model.scale_in.set([x_tr.mean()], [x_tr.std()])
        steps, lr, wd = 400, 1e-2, 1e-4
    else:
        arguments = {"hidden": 64}
        model = nets.DigitsMLP(**arguments)
        model.scale_in.set(np.full(64, x_tr.mean()), np.full(64, x_tr.std()))
        steps, lr, wd = 300, 1e-2, 1e-4
    xt = torch.as_tensor(x_tr.reshape(shape), dtype=torch.float32)
    yt = torch.as_tensor(y_tr, dtype=torch.long)

    def loss_fn(m: nn.Module) -> torch.Tensor:
        return nn.functional.cross_entropy(m(xt), yt)

    loss = _fit(model, loss_fn, steps, lr, weight_decay=wd)
    logits = _predict(model, x_te.reshape(shape))
    accuracy = float((logits.argmax(1) == y_te).mean())
    rebuild = type(model)(**arguments)
    formats, diffs = _write_formats(
        name,
        model,
        xt[:4],
        x_te.reshape(shape)[:CHECK_ROWS],
        out_dir,
        rebuild=rebuild,
        input_name="image" if cnn else "pixels",
        output_name="logits",
    )
    cards.write_spec(out_dir / f"{name}.toml", digits_spec(), f"netdim input spec of {name}.")
    arch = (
        "standardise -> Conv2d(1, 8, 3, pad 1) -> ReLU -> Conv2d(8, 8, 3, stride 2, pad 1) -> "
        "ReLU -> Flatten -> Linear(128, 10)"
        if cnn
        else "standardise -> Linear(64, 64) -> ReLU -> Linear(64, 10)"
    )
    return {
        "title": "Digits classifier",
        "summary": (
            "Classifier of the 8x8 grey-level digit images bundled with scikit-learn "
            "(`sklearn.datasets.load_digits`). Takes raw pixel values 0..16 "
            + ("as a (batch, 1, 8, 8) image" if cnn else "as 64 values in row-major order")
            + " and returns 10 logits (digit_0..digit_9)."
        ),
        "task": "classification",
        "architecture": arch,
        "class": f"model_zoo.nets:{type(model).__name__}",
        "arguments": arguments,
        "inputs": "64 pixels 0..16" + (" as (1, 8, 8)" if cnn else ""),
        "input_shape": [1, 8, 8] if cnn else [64],
        "outputs": "10 logits digit_0..digit_9",
        "formats": formats,
        "training": {
            "data": (
                f"`load_digits()` (1797 images), stratified split "
                f"`train_test_split(test_size={TEST_FRACTION}, random_state={SPLIT_SEED})`; "
                f"{len(y_tr)} training images."
            ),
            "rows": len(y_tr),
            "seed": SPLIT_SEED,
            "optimiser": f"full-batch Adam {steps} steps (lr {lr}, cosine decay, weight decay {wd}), cross-entropy",
            "final_training_loss": loss,
        },
        "held_out": {
            "kind": "split",
            "fraction": TEST_FRACTION,
            "seed": SPLIT_SEED,
            "stratified": True,
            "rows": len(y_te),
            "description": f"Accuracy on the {len(y_te)} held-out images of the stratified split.",
        },
        "metrics": {"accuracy": accuracy},
        "export_max_abs_diff": diffs,
        "intended_use": "Demonstrating layer-by-layer audits of a classifier with many inputs.",
        "limitations": [
            "The input spec's independent uniform pixels are far from real digit images: an "
            "audit describes the network on that law, not on handwriting.",
            "Logits, not probabilities, are the outputs.",
            *_common_limitations(),
        ],
    }


# --------------------------------------------------------------------------- diabetes


def _diabetes_split() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, list[str]]:
    from sklearn.datasets import load_diabetes
    from sklearn.model_selection import train_test_split

    data = load_diabetes()
    parts = train_test_split(data.data, data.target, test_size=TEST_FRACTION, random_state=SPLIT_SEED)
    return (*parts, list(data.feature_names))


DIABETES_NOTES = {
    "age": "age in years (centred, scaled)",
    "sex": "sex (two values in the data; centred, scaled)",
    "bmi": "body mass index (centred, scaled)",
    "bp": "average blood pressure (centred, scaled)",
    "s1": "total serum cholesterol (centred, scaled)",
    "s2": "low-density lipoproteins (centred, scaled)",
    "s3": "high-density lipoproteins (centred, scaled)",
    "s4": "total cholesterol / HDL (centred, scaled)",
    "s5": "log of serum triglycerides level, possibly (centred, scaled)",
    "s6": "blood sugar level (centred, scaled)",
}


def diabetes_spec() -> dict[str, Any]:
    """Input spec of the diabetes regressor: normal laws with each feature's mean and sd."""
    from sklearn.datasets import load_diabetes

    data = load_diabetes()
    mean, sd = data.data.mean(0), data.data.std(0, ddof=1)
    return {
        "title": "Diabetes progression (scikit-learn bundled data, scaled features)",
        "inputs": {
            "count": 10,
            "feature": [
                {
                    "name": n,
                    "law": "normal",
                    "mean": round(float(m), 10) + 0.0,
                    "sd": round(float(s), 10),
                    "note": DIABETES_NOTES[n],
                }
                for n, m, s in zip(data.feature_names, mean, sd, strict=True)
            ],
        },
        "outputs": {"names": ["progression"]},
    }


def _build_diabetes(name: str, out_dir: Path) -> dict[str, Any]:
    x_tr, x_te, y_tr, y_te, _ = _diabetes_split()
    arguments = {"hidden": 16, "depth": 1, "activation": "tanh"}
    model = nets.DiabetesMLP(**arguments)
    model.scale_in.set(x_tr.mean(0), x_tr.std(0))
    model.scale_out.set([y_tr.mean()], [y_tr.std()])
    xt = torch.as_tensor(x_tr, dtype=torch.float32)
    yt = torch.as_tensor((y_tr - y_tr.mean()) / y_tr.std(), dtype=torch.float32).reshape(-1, 1)
    steps, lr, wd = 400, 1e-2, 1e-2

    def loss_fn(m: nn.Module) -> torch.Tensor:
        return ((m.body(m.scale_in(xt)) - yt) ** 2).mean()

    loss = _fit(model, loss_fn, steps, lr, weight_decay=wd)
    r2 = float(_r2(y_te, _predict(model, x_te))[0])
    formats, diffs = _write_formats(
        name,
        model,
        xt[:4],
        x_te[:CHECK_ROWS],
        out_dir,
        rebuild=nets.DiabetesMLP(**arguments),
    )
    cards.write_spec(out_dir / f"{name}.toml", diabetes_spec(), f"netdim input spec of {name}.")
    return {
        "title": "Diabetes progression regressor",
        "summary": (
            "Regressor of a disease-progression score one year after baseline from ten "
            "baseline features of the diabetes data bundled with scikit-learn "
            "(`sklearn.datasets.load_diabetes`, scaled features as shipped)."
        ),
        "task": "regression",
        "architecture": "standardise -> Linear(10, 16) -> Tanh -> Linear(16, 1) -> de-standardise",
        "class": "model_zoo.nets:DiabetesMLP",
        "arguments": arguments,
        "inputs": "10 scaled clinical features (normal laws)",
        "input_shape": [10],
        "outputs": "progression score",
        "formats": formats,
        "training": {
            "data": (
                f"`load_diabetes()` (442 patients), split `train_test_split(test_size="
                f"{TEST_FRACTION}, random_state={SPLIT_SEED})`; {len(y_tr)} training rows."
            ),
            "rows": len(y_tr),
            "seed": SPLIT_SEED,
            "optimiser": f"full-batch Adam {steps} steps (lr {lr}, cosine decay, "
            f"weight decay {wd}), mean squared error on the standardised target",
            "final_training_loss": loss,
        },
        "held_out": {
            "kind": "split",
            "fraction": TEST_FRACTION,
            "seed": SPLIT_SEED,
            "stratified": False,
            "rows": len(y_te),
            "description": (
                f"R² on the {len(y_te)} held-out patients. The data explain only part of the "
                "progression; a modest R² is expected."
            ),
        },
        "metrics": {"r2": r2},
        "export_max_abs_diff": diffs,
        "intended_use": "Demonstrating audits of a small tabular regressor with normal input laws.",
        "limitations": [
            "Not a clinical tool. Trained on 353 patients; its predictions must not inform care.",
            "The input spec treats features as independent normals; in the data they are "
            "correlated and `sex` takes two values only.",
            *_common_limitations(),
        ],
    }


# --------------------------------------------------------------------------- validation

VALIDATION_NETS: dict[str, dict[str, Any]] = {
    "ridge_phi": {
        "kind": "ridge",
        "link": "phi",
        "theta": [0.5, 0.625, -0.125, 0.375, 0.25, -0.375],
        "scale": 2.0,
        "shift": 0.5,
        "formula": "y = Φ(s θᵀx − t), Φ the standard normal distribution function",
    },
    "ridge_relu": {
        "kind": "ridge",
        "link": "relu",
        "theta": [0.625, -0.5, 0.375, 0.375, -0.25, 0.125],
        "scale": 1.0,
        "shift": -0.25,
        "formula": "y = max(0, θᵀx + b), b = −t = 0.25",
    },
    "additive": {
        "kind": "additive",
        "inner_weight": [
            [1.5, 0.5],
            [1.0, -2.0],
            [0.75, 0.25],
            [2.0, 1.0],
            [0.5, 0.5],
            [0.25, -1.0],
        ],
        "inner_bias": [[0.0, 1.0], [0.5, 0.0], [-0.5, 0.25], [0.0, -1.0], [0.25, 0.0], [0.0, 0.5]],
        "outer_weight": [
            [2.0, -1.0],
            [1.0, 0.5],
            [1.5, 1.0],
            [0.75, 0.75],
            [0.5, 0.25],
            [0.25, 0.5],
        ],
        "outer_bias": 0.5,
        "formula": "y = Σ_j Σ_i a_ji tanh(w_ji x_j + c_ji) + b (block-diagonal first layer)",
    },
}
VALIDATION_DIM = 6


def validation_network(name: str) -> tuple[nn.Module, dict[str, Any], exact.ExactAnova]:
    """The hand-set validation network ``name``, its constructor arguments and exact ANOVA.

    Parameters
    ----------
    name : {"ridge_phi", "ridge_relu", "additive"}

    Returns
    -------
    (nn.Module, dict, ExactAnova)
    """
    if name not in VALIDATION_NETS:
        raise ValueError(f"name must be one of {sorted(VALIDATION_NETS)}, got {name!r}")
    p = VALIDATION_NETS[name]
    if p["kind"] == "ridge":
        arguments = {
            "theta": p["theta"],
            "scale": p["scale"],
            "shift": p["shift"],
            "activation": p["link"],
        }
        model: nn.Module = nets.RidgeNet(**arguments)
        answer = exact.ridge_exact(p["theta"], p["scale"], p["shift"], p["link"])
    else:
        arguments = {k: p[k] for k in ("inner_weight", "inner_bias", "outer_weight", "outer_bias")}
        model = nets.AdditiveNet(**arguments)
        answer = exact.additive_exact(**arguments)
    return model.eval(), arguments, answer


def validation_spec() -> dict[str, Any]:
    """Input spec of the validation networks: six independent N(0, 1) inputs."""
    return {
        "title": "Validation network: independent standard normal inputs",
        "inputs": {
            "law": "normal",
            "mean": 0.0,
            "sd": 1.0,
            "count": VALIDATION_DIM,
            "names": [f"x{j + 1}" for j in range(VALIDATION_DIM)],
        },
        "outputs": {"names": ["y"]},
    }


def _build_validation(name: str, out_dir: Path) -> dict[str, Any]:
    model, arguments, answer = validation_network(name)
    p = VALIDATION_NETS[name]
    rng = np.random.default_rng(SPLIT_SEED)
    check_x = rng.standard_normal((CHECK_ROWS, VALIDATION_DIM))
    example = torch.as_tensor(check_x[:4], dtype=torch.float32)
    formats, diffs = _write_formats(
        name,
        model,
        example,
        check_x,
        out_dir,
        rebuild=type(model)(**arguments),
    )
    cards.write_spec(out_dir / f"{name}.toml", validation_spec(), f"netdim input spec of {name}.")
    parameters = {k: v for k, v in p.items() if k not in ("formula",)}
    if p["kind"] == "ridge":
        link = "Φ via Erf" if p["link"] == "phi" else "ReLU"
        arch = f"Linear(6, 1) with weight s·θ and bias −t -> {link}"
        hidden = "the Linear unit is linear in x: mean dimension exactly 1"
    else:
        arch = "Linear(6, 12) block-diagonal (2 units per input) -> Tanh -> Linear(12, 1)"
        hidden = "every hidden unit depends on one input only: mean dimension exactly 1"
    return {
        "title": "Validation network",
        "summary": (
            f"Hand-set network with exactly known ANOVA structure: {p['formula']}, "
            "inputs independent N(0, 1), d = 6. Nothing is trained."
        ),
        "task": "validation",
        "architecture": arch,
        "class": f"model_zoo.nets:{type(model).__name__}",
        "arguments": arguments,
        "inputs": "6 independent N(0, 1)",
        "input_shape": [VALIDATION_DIM],
        "outputs": "y",
        "formats": formats,
        "training": {"data": "None: the weights are set by hand (see Exact ANOVA below)."},
        "held_out": {
            "kind": "exact",
            "description": "Mean dimension of the output under independent N(0, 1) inputs, exact.",
        },
        "metrics": {"mean_dimension": answer.mean_dimension},
        "parameters": parameters,
        "formula": p["formula"],
        "exact": answer.to_dict(),
        "hidden_units": hidden,
        "export_max_abs_diff": diffs,
        "intended_use": (
            "Checking estimators against exact answers (total and first-order Sobol' indices, "
            "mean dimension) computed in `model_zoo/exact.py`."
        ),
        "limitations": [
            "Stored in float32: the network's weights are exact binary fractions, but its "
            "arithmetic rounds at about 1e-7 relative, far below any Monte Carlo error.",
            "Only meaningful under the N(0, 1) input law of its spec.",
        ],
    }


# --------------------------------------------------------------------------- driver

MODELS: dict[str, Callable[[str, Path], dict[str, Any]]] = {
    "greenhouse_v1": _build_greenhouse,
    "greenhouse_v2": _build_greenhouse,
    "digits_mlp": _build_digits,
    "digits_cnn": _build_digits,
    "diabetes_mlp": _build_diabetes,
    "ridge_phi": _build_validation,
    "ridge_relu": _build_validation,
    "additive": _build_validation,
}
"""Every zoo model and the function that builds it."""

_SEEDS = {name: 1000 + i for i, name in enumerate(MODELS)}


def build_model(name: str, out_dir: Path | str = ZOO_DIR) -> BuildResult:
    """Train (if needed), export, check, and write the spec and card of one model.

    Parameters
    ----------
    name : str
        One of :data:`MODELS`.
    out_dir : path
        Folder for the files (created if missing).

    Returns
    -------
    BuildResult
    """
    if name not in MODELS:
        close = difflib.get_close_matches(name, list(MODELS), n=1)
        hint = f" Did you mean {close[0]!r}?" if close else ""
        raise ValueError(f"unknown model {name!r}; choose from {list(MODELS)}.{hint}")
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    start = time.perf_counter()
    with _deterministic(_SEEDS[name]):
        record = MODELS[name](name, out)
    record["torch_seed"] = _SEEDS[name]
    cards.write_card(out / f"{name}.md", name, record)
    files = sorted(out.glob(f"{name}.*"))
    return BuildResult(name, record, files, time.perf_counter() - start)


def _update_json(path: Path, update: dict[str, Any], key: str) -> dict[str, Any]:
    data = json.loads(path.read_text(encoding="utf-8")) if path.exists() else {}
    data.setdefault(key, {})
    data[key].update(update)
    data[key] = {k: data[key][k] for k in MODELS if k in data[key]}
    return data


def build_all(only: Sequence[str] | None = None, out_dir: Path | str = ZOO_DIR) -> list[BuildResult]:
    """Build the named models (all by default) and update ``cards.json``,
    ``validation.json`` and ``README.md`` in ``out_dir``.

    Parameters
    ----------
    only : sequence of str, optional
        Model names; every model when omitted.
    out_dir : path
        Target folder.

    Returns
    -------
    list of BuildResult
    """
    out = Path(out_dir)
    names = list(only) if only else list(MODELS)
    results = [build_model(n, out) for n in names]

    data = _update_json(out / "cards.json", {r.name: r.record for r in results}, "models")
    data.update(
        {
            "split_seed": SPLIT_SEED,
            "test_fraction": TEST_FRACTION,
            "greenhouse_test_rows": GREENHOUSE_TEST_ROWS,
            "caution": cards.CAUTION,
        }
    )
    data = {k: data[k] for k in ("split_seed", "test_fraction", "greenhouse_test_rows", "caution", "models")}
    (out / "cards.json").write_text(json.dumps(data, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    val = {
        r.name: {
            "formula": r.record["formula"],
            "law": "independent N(0, 1)",
            "dimension": VALIDATION_DIM,
            "parameters": r.record["parameters"],
            "exact": r.record["exact"],
            "hidden_units": r.record["hidden_units"],
        }
        for r in results
        if r.record["task"] == "validation"
    }
    if val or not (out / "validation.json").exists():
        vdata = _update_json(out / "validation.json", val, "models")
        vdata["method"] = (
            "Exact values from one-dimensional quadrature of closed-form conditional means; "
            "see model_zoo/exact.py. Indices are normalised by the variance."
        )
        vdata = {"method": vdata["method"], "models": vdata["models"]}
        (out / "validation.json").write_text(json.dumps(vdata, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    cards.write_readme(out / "README.md", data)
    return results


def _size(paths: Sequence[Path]) -> int:
    return sum(p.stat().st_size for p in paths)


def main(argv: Sequence[str] | None = None) -> int:
    """Command line: ``python -m model_zoo.build [--only NAME ...] [--out DIR]``."""
    parser = argparse.ArgumentParser(prog="python -m model_zoo.build", description=__doc__.split("\n")[0])
    parser.add_argument(
        "--only",
        nargs="+",
        choices=list(MODELS),
        metavar="NAME",
        help=f"build only these models (choices: {', '.join(MODELS)})",
    )
    parser.add_argument("--out", type=Path, default=ZOO_DIR, help="target folder (default: the zoo)")
    args = parser.parse_args(argv)
    start = time.perf_counter()
    results = build_all(args.only, args.out)
    for r in results:
        metric = ", ".join(f"{k}={v:.4f}" for k, v in r.metrics.items())
        print(f"{r.name:14s} {r.seconds:6.1f} s  {_size(r.files) / 1024:7.1f} KiB  {metric}")
    shipped = [p for p in Path(args.out).iterdir() if p.is_file() and p.suffix != ".py"]
    total = time.perf_counter() - start
    print(f"total {total:.1f} s; zoo data files {_size(shipped) / 1024:.1f} KiB")
    return 0 if all(math.isfinite(v) for r in results for v in r.metrics.values()) else 1


if __name__ == "__main__":
    raise SystemExit(main())
