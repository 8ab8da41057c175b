"""Open a model from a path or a Python reference: one entry point for all backends."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from ..errors import UserError
from .base import Model
from .python import PythonModel, import_reference
from .tensors import InputShape

__all__ = ["is_python_reference", "open_model"]

MODEL_SUFFIXES = (".onnx", ".pt", ".pth", ".pt2", ".ts", ".torchscript")


def is_python_reference(ref: str) -> bool:
    """True for ``package.module:function`` (and not an existing file path)."""
    if Path(ref).exists() or ref.lower().endswith(MODEL_SUFFIXES):
        return False
    module, sep, attr = ref.partition(":")
    return bool(sep) and bool(attr) and "/" not in module and "\\" not in module


def open_model(
    ref: str,
    *,
    dim: int | None = None,
    torch_class: str | None = None,
    torch_arguments: dict[str, Any] | None = None,
    trust: bool = False,
    input_shape: InputShape | None = None,
) -> Model:
    """Open a model file or a Python callable.

    Parameters
    ----------
    ref : str
        A path (``.onnx``, TorchScript ``.pt``, ``.pt2``, a state dict with
        ``torch_class``) or a Python reference ``package.module:function``.
    dim : int, optional
        Input dimension of a Python callable (model files know their own).
    torch_class : str, optional
        ``package.module:Class`` to rebuild a network from a state dict.
    torch_arguments : dict, optional
        Keyword arguments for ``torch_class``.
    trust : bool
        Allow unpickling a whole Torch module (runs code from the file).
    input_shape : sequence of int, or dict of str to sequence of int, optional
        Non-batch shape of a model file's input tensor, e.g. ``(1, 8, 8)``, or
        for a model with several input tensors one shape per tensor name,
        ``{"a": (3,), "b": (1, 8, 8)}``. Torch files other than ``.pt2``
        programs do not store it (for one input it is inferred when the
        network starts with a ``Linear`` layer); ONNX files need it only when
        a non-batch input dimension is symbolic.

    Returns
    -------
    Model
    """
    if is_python_reference(ref):
        func = import_reference(ref)
        if dim is None:
            raise UserError(
                f"The input dimension of the Python model '{ref}' is unknown: give --dim D "
                "or an input spec file (--inputs SPEC.toml) that lists its features."
            )
        return PythonModel(func, dim, source=ref)
    path = Path(ref)
    if not path.exists():
        raise UserError(
            f"The model file '{ref}' does not exist. Give the path of an .onnx, .pt, .pt2 "
            "file or a Python reference 'package.module:function'."
        )
    if path.is_dir():
        raise UserError(f"'{ref}' is a folder, not a model file. Give the path of the model file itself.")
    suffix = path.suffix.lower()
    if suffix == ".onnx":
        from .onnx import OnnxModel

        model: Any = OnnxModel(path, input_shape=input_shape)
    elif suffix in (".pt", ".pth", ".pt2", ".ts", ".torchscript"):
        from .torch import open_torch

        model = open_torch(
            path,
            torch_class=torch_class,
            torch_arguments=torch_arguments,
            trust=trust,
            input_shape=input_shape,
        )
    else:
        model = None
    if model is not None:
        # how to open it again elsewhere (another process or machine): see reopen()
        model.open_args = {
            "ref": str(path.resolve()), "torch_class": torch_class, "torch_arguments": torch_arguments,
            "trust": trust, "input_shape": _plain_shape(input_shape),
        }
        return model
    raise UserError(
        f"netdim does not know the model format of '{ref}' (suffix '{suffix or 'none'}'). "
        "Supported: .onnx (ONNX), .pt / .pth (TorchScript or state dict), .pt2 (torch.export), "
        "or a Python reference 'package.module:function'."
    )


def _plain_shape(input_shape: InputShape | None) -> Any:
    """``input_shape`` as plain tuples (or a dict of them), to travel with the open arguments."""
    if input_shape is None:
        return None
    if isinstance(input_shape, Mapping):
        return {str(name): tuple(shape) for name, shape in input_shape.items()}
    return tuple(input_shape)


def reopen(open_args: dict[str, Any]) -> Model:
    """Open a model file again from the arguments it was first opened with.

    Models travel to the processes of a ``dask.distributed`` cluster as a call to this
    function (see :mod:`audit.cluster`), so that each process opens its own session
    (sessions themselves do not pickle).
    """
    args = dict(open_args)
    return open_model(args.pop("ref"), **args)
