"""Open a model from a path or a Python reference: one entry point for all backends.

:func:`open_model` checks the types of its arguments (they may come from a TOML
``[model]`` table), dispatches by suffix, and turns any failure of a backend to
load a file into a :class:`~audit.errors.UserError` naming the file and the
cause, so that a model that cannot be opened never ends in a traceback.
"""

from __future__ import annotations

import numbers
import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from ..errors import UserError
from .base import Model
from .python import PythonModel, import_reference, shadow_notice
from .tensors import InputShape, input_shapes

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
        Allow what runs code from the file: unpickling a whole Torch module,
        or a ``torch.export`` program whose members Torch would unpickle or
        that holds compiled code.
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
    ref = _check_arguments(ref, dim, torch_class, torch_arguments, trust, input_shape)
    if is_python_reference(ref):
        func = import_reference(ref)
        if dim is None:
            raise UserError(
                f"The input dimension of the Python model '{ref}' is unknown: give `dim` (the "
                "number of inputs) or an input spec (`inputs`) that lists its features."
            )
        python = PythonModel(func, dim, source=ref)
        _add_notice(python, shadow_notice(ref.partition(":")[0]))
        return python
    path = Path(ref)
    if not path.exists():
        raise UserError(
            f"The model file '{ref}' does not exist. Give the path of an .onnx, .pt, .pt2 "
            "file or a Python reference 'package.module:function'."
        )
    if path.is_dir():
        raise UserError(f"'{ref}' is a folder, not a model file. Give the path of the model file itself.")
    suffix = path.suffix.lower()
    model = _open_file(path, suffix, torch_class, torch_arguments, trust, input_shape)
    if model is not None:
        if torch_class:
            _add_notice(model, shadow_notice(torch_class.partition(":")[0]))
        # how to open it again elsewhere (another process or machine): see reopen()
        model.open_args = {
            "ref": str(path.resolve()),
            "torch_class": torch_class,
            "torch_arguments": torch_arguments,
            "trust": trust,
            "input_shape": _plain_shape(input_shape),
        }
        return model
    raise UserError(
        f"netdim does not know the model format of '{ref}' (suffix '{suffix or 'none'}'). "
        "Supported: .onnx (ONNX), .pt / .pth (TorchScript or state dict), .pt2 (torch.export), "
        "or a Python reference 'package.module:function'."
    )


def _open_file(
    path: Path,
    suffix: str,
    torch_class: str | None,
    torch_arguments: Mapping[str, Any] | None,
    trust: bool,
    input_shape: InputShape | None,
) -> Any:
    """The backend's model for ``path``, or None for an unknown suffix; every failure a UserError."""
    try:
        if suffix == ".onnx":
            from .onnx import OnnxModel

            return OnnxModel(path, input_shape=input_shape)
        if suffix in (".pt", ".pth", ".pt2", ".ts", ".torchscript"):
            from .torch import open_torch

            return open_torch(
                path,
                torch_class=torch_class,
                torch_arguments=dict(torch_arguments) if torch_arguments is not None else None,
                trust=trust,
                input_shape=input_shape,
            )
    except UserError:
        raise
    except Exception as exc:  # a backend library failing on this file
        text = str(exc).strip()
        if isinstance(exc, MemoryError) or "allocate memory" in text:
            shape = f" (`input_shape` {input_shape})" if input_shape is not None else ""
            raise UserError(
                f"Opening the model file '{path}' ran out of memory while probing it with a few rows{shape}. "
                "Check the shape of one input row: the probe needs a few rows of it and of every hidden tensor "
                "in memory."
            ) from exc
        first = text.splitlines()[0][:240] if text else ""
        raise UserError(
            f"The model file '{path}' could not be opened ({type(exc).__name__}{': ' + first if first else ''}). "
            "The file may be damaged, made by a newer or incompatible exporter, or use a feature netdim does "
            "not support: save or export the model again (ONNX, TorchScript, a torch.export program or a "
            "state dict), and check that it loads in its own runtime."
        ) from exc
    return None


def _add_notice(model: Any, notice: str | None) -> None:
    if notice and notice not in model.notices:
        model.notices.append(notice)


def _check_arguments(
    ref: Any,
    dim: Any,
    torch_class: Any,
    torch_arguments: Any,
    trust: Any,
    input_shape: Any,
) -> str:
    """``ref`` as a string; a UserError for any argument of the wrong type (as a TOML table may give)."""
    if isinstance(ref, os.PathLike):
        ref = os.fspath(ref)
    if not isinstance(ref, str) or not ref:
        raise UserError(f"The model must be a path or a reference 'package.module:function', got {ref!r}.")
    if dim is not None and (isinstance(dim, bool) or not isinstance(dim, numbers.Integral) or dim < 1):
        raise UserError(f"`dim` must be a whole number of at least 1 (the number of inputs), got {dim!r}.")
    if torch_class is not None and not isinstance(torch_class, str):
        raise UserError(
            f"`torch_class` must be a string 'package.module:Class', got {torch_class!r}. In an input spec, "
            'write class = "package.module:Class" in the [model] table.'
        )
    if torch_arguments is not None and (
        not isinstance(torch_arguments, Mapping) or not all(isinstance(k, str) for k in torch_arguments)
    ):
        raise UserError(
            f"`torch_arguments` (the constructor arguments of `torch_class`) must be a table of named values, "
            f"got {torch_arguments!r}. In an input spec, write arguments = {{ hidden = 32 }} in the [model] table."
        )
    if not isinstance(trust, bool):
        raise UserError(f"`trust` must be true or false, got {trust!r}.")
    if input_shape is not None:
        bad = isinstance(input_shape, str | bytes) or not isinstance(input_shape, Mapping | Sequence)
        if bad:
            raise UserError(
                f"`input_shape` must be a list of positive whole numbers such as [1, 8, 8] (or a table of "
                f"them by input name), got {input_shape!r}."
            )
        names = list(input_shape) if isinstance(input_shape, Mapping) else ["x"]
        input_shapes(input_shape, names, ref)  # checks every shape is positive whole numbers
    return ref


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
