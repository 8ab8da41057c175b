"""Export a zoo network to its shipped formats and check that they agree.

Formats: ONNX (``torch.onnx.export`` with the TorchScript-based exporter, which
works offline without extra packages; opset 17; dynamic batch axis),
TorchScript (``torch.jit.trace``), ``torch.export`` programs (``.pt2``) and
plain state dicts. :func:`check_agreement` runs every written file on the same
batch and compares it with the in-memory network.
"""

from __future__ import annotations

import json
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import torch
from torch import nn

__all__ = [
    "FORMATS",
    "OPSET",
    "TORCHSCRIPT_META",
    "check_agreement",
    "export_onnx",
    "export_program",
    "export_state",
    "export_torchscript",
    "run_file",
]

OPSET = 17
FORMATS = ("onnx", "torchscript", "torch-export", "state-dict")


@contextmanager
def _quiet() -> Iterator[None]:
    """Silence the deprecation notices of the legacy exporters (they still work)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        warnings.simplefilter("ignore", FutureWarning)
        warnings.simplefilter("ignore", UserWarning)
        yield


def export_onnx(
    model: nn.Module,
    example: torch.Tensor,
    path: Path,
    input_name: str = "x",
    output_name: str = "y",
) -> Path:
    """Write ``model`` as ONNX (opset :data:`OPSET`) with a dynamic batch axis.

    Parameters
    ----------
    model : nn.Module
        Network in eval mode.
    example : Tensor
        Example batch (its first axis is the batch axis).
    path : Path
        Target file.
    input_name, output_name : str
        Graph input and output names.

    Returns
    -------
    Path
    """
    import onnx

    model.eval()
    with _quiet(), torch.no_grad():
        torch.onnx.export(
            model,
            (example,),
            str(path),
            dynamo=False,
            opset_version=OPSET,
            input_names=[input_name],
            output_names=[output_name],
            dynamic_axes={input_name: {0: "batch"}, output_name: {0: "batch"}},
            do_constant_folding=True,
        )
    onnx.checker.check_model(onnx.load(str(path)))
    return path


TORCHSCRIPT_META = "netdim.json"
"""Name of the extra file in shipped TorchScript archives that records the input shape."""


def export_torchscript(model: nn.Module, example: torch.Tensor, path: Path) -> Path:
    """Write ``model`` as TorchScript traced on ``example``.

    TorchScript does not record input shapes, so the archive carries an extra
    file :data:`TORCHSCRIPT_META` with ``{"input_shape": [...], "dtype": "float32"}``
    (the shape of one row, without the batch axis). Read it with
    ``torch.jit.load(path, _extra_files={"netdim.json": ""})``.
    """
    model.eval()
    meta = {"input_shape": list(example.shape[1:]), "dtype": str(example.dtype).split(".")[-1]}
    with _quiet(), torch.no_grad():
        traced = torch.jit.trace(model, (example,))
        torch.jit.save(traced, str(path), _extra_files={TORCHSCRIPT_META: json.dumps(meta)})
    return path


def export_program(model: nn.Module, example: torch.Tensor, path: Path) -> Path:
    """Write ``model`` as a ``torch.export`` program (``.pt2``) with a dynamic batch axis."""
    model.eval()
    batch = torch.export.Dim("batch", min=1)
    with _quiet():
        program = torch.export.export(model, (example,), dynamic_shapes=({0: batch},))
        torch.export.save(program, str(path))
    return path


def export_state(model: nn.Module, path: Path) -> Path:
    """Write ``model.state_dict()`` (tensors only; loads with ``weights_only=True``)."""
    torch.save(model.state_dict(), str(path))
    return path


def run_file(path: Path, x: np.ndarray, fmt: str, rebuild: nn.Module | None = None) -> np.ndarray:
    """Evaluate a shipped file on a float32 batch ``x`` and return float64 outputs.

    Parameters
    ----------
    path : Path
        The file.
    x : ndarray
        Input batch with the model's input shape.
    fmt : {"onnx", "torchscript", "torch-export", "state-dict"}
        File format.
    rebuild : nn.Module, optional
        An instance of the network class, required for ``"state-dict"``.

    Returns
    -------
    ndarray
    """
    xt = np.ascontiguousarray(x, dtype=np.float32)
    if fmt == "onnx":
        import onnxruntime as ort

        session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
        name = session.get_inputs()[0].name
        return np.asarray(session.run(None, {name: xt})[0], dtype=np.float64)
    with torch.no_grad():
        if fmt == "torchscript":
            module = torch.jit.load(str(path))
        elif fmt == "torch-export":
            module = torch.export.load(str(path)).module()
        elif fmt == "state-dict":
            if rebuild is None:
                raise ValueError("a state dict needs `rebuild`, an instance of its network class")
            rebuild.load_state_dict(torch.load(str(path), weights_only=True))
            module = rebuild.eval()
        else:
            raise ValueError(f"fmt must be one of {list(FORMATS)}, got {fmt!r}")
        return module(torch.from_numpy(xt)).double().numpy()


def check_agreement(
    model: nn.Module,
    files: dict[str, Path],
    x: np.ndarray,
    rebuild: nn.Module | None = None,
    rtol: float = 1e-5,
) -> dict[str, float]:
    """Check that every file reproduces ``model`` on ``x``.

    The tolerance is ``rtol`` relative to each value, with an absolute floor of
    ``rtol`` times the largest output magnitude (outputs near zero).

    Parameters
    ----------
    model : nn.Module
        The in-memory network.
    files : dict of str to Path
        Format name -> file.
    x : ndarray
        Input batch.
    rebuild : nn.Module, optional
        Fresh instance of the network class, for state dicts.
    rtol : float
        Relative tolerance.

    Returns
    -------
    dict of str to float
        Largest absolute difference per format.

    Raises
    ------
    AssertionError
        If a file disagrees.
    """
    model.eval()
    with torch.no_grad():
        ref = model(torch.from_numpy(np.ascontiguousarray(x, dtype=np.float32))).double().numpy()
    floor = rtol * max(float(np.max(np.abs(ref))), 1e-30)
    diffs = {}
    for fmt, path in files.items():
        out = run_file(path, x, fmt, rebuild=rebuild)
        np.testing.assert_allclose(out, ref, rtol=rtol, atol=floor, err_msg=f"{fmt}: {path}")
        diffs[fmt] = float(np.max(np.abs(out - ref)))
    return diffs
