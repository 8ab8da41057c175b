"""The model zoo's shipped files, read with their own runtimes (test helpers, no netdim code).

Shared by the zoo's unit tests (tests/unit/test_model_zoo.py) and its exact checks
(tests/validation/test_zoo_exact.py).
"""

from __future__ import annotations

import importlib
import json
import tomllib
from pathlib import Path

import numpy as np
import onnxruntime as ort
import torch

ZOO = Path(__file__).resolve().parents[1] / "model_zoo"
CARDS = json.loads((ZOO / "cards.json").read_text(encoding="utf-8"))
VALIDATION = json.loads((ZOO / "validation.json").read_text(encoding="utf-8"))
MODELS = CARDS["models"]
TRAINED = [n for n, r in MODELS.items() if r["task"] != "validation"]
VALIDATION_NETS = list(VALIDATION["models"])


def read_spec(name: str) -> dict:
    return tomllib.loads((ZOO / f"{name}.toml").read_text(encoding="utf-8"))


def sample_spec(name: str, n: int, seed: int) -> np.ndarray:
    """Draw n rows from the input spec of ``name`` (independent laws), read with tomllib."""
    spec = read_spec(name)["inputs"]
    rng = np.random.default_rng(seed)
    entries = spec.get("feature") or [{}] * spec["count"]
    cols = []
    for e in entries:
        law = {k: v for k, v in spec.items() if k not in ("count", "names", "feature")}
        law.update(e)
        if law["law"] == "uniform":
            cols.append(rng.uniform(law["low"], law["high"], n))
        elif law["law"] == "normal":
            cols.append(rng.normal(law["mean"], law["sd"], n))
        else:
            raise AssertionError(f"unexpected law {law['law']} in {name}.toml")
    return np.column_stack(cols)


def shaped(name: str, x: np.ndarray) -> np.ndarray:
    return x.reshape(-1, *MODELS[name]["input_shape"]).astype(np.float32)


def run_file(name: str, fmt: str, x: np.ndarray) -> np.ndarray:
    """Run one shipped file with its own runtime (no zoo code)."""
    rec = MODELS[name]
    path = ZOO / rec["formats"][fmt]
    xs = shaped(name, x)
    if fmt == "onnx":
        session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
        return session.run(None, {session.get_inputs()[0].name: xs})[0].astype(np.float64)
    with torch.no_grad():
        if fmt == "torchscript":
            module = torch.jit.load(str(path))
        elif fmt == "torch-export":
            module = torch.export.load(str(path)).module()
        elif fmt == "state-dict":
            module_name, _, cls_name = rec["class"].partition(":")
            cls = getattr(importlib.import_module(module_name), cls_name)
            module = cls(**rec["arguments"])
            module.load_state_dict(torch.load(str(path), weights_only=True))
            module.eval()
        else:
            raise AssertionError(fmt)
        return module(torch.from_numpy(xs)).double().numpy()
