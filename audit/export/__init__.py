"""Write a simplified model: inputs integrated out by a Gauss rule or frozen, in the source's own format.

Modules: :mod:`~.plan` (what is integrated or frozen, the tensor-product rule,
the metadata every file records, and :class:`~.plan.ReducedModel`, the same model
in memory), :mod:`~.onnx_file` (an ONNX wrapper graph), :mod:`~.torch_file`
(a TorchScript archive or a ``torch.export`` program), :mod:`~.python_file`
(a small generated module). :func:`write_model` picks the writer by the
source's format and writes atomically. Nothing here runs an audit: the
workflow that chooses the plan and audits the file is
:mod:`audit.studies.simplify`.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Any

from ..errors import UserError, check_choice
from .plan import MAX_GRID, ExportPlan, Fixed, Integrated, ReducedModel, file_sha256, make_plan

__all__ = [
    "MAX_GRID",
    "OUTPUT_DTYPES",
    "SUFFIXES",
    "ExportPlan",
    "Fixed",
    "Integrated",
    "ReducedModel",
    "default_path",
    "file_sha256",
    "make_plan",
    "write_model",
]

#: Source format -> suffixes the simplified file may take (the first is the default).
SUFFIXES = {
    "onnx": (".onnx",),
    "torchscript": (".pt", ".ts", ".torchscript", ".pth"),
    "state-dict": (".pt", ".ts", ".torchscript", ".pth"),
    "torch-module": (".pt", ".ts", ".torchscript", ".pth"),
    "torch-export": (".pt2",),
    "python": (".py",),
}
#: ``output_dtype`` choices: the source output's type, or float64.
OUTPUT_DTYPES = ("source", "float64")


def default_path(model: Any) -> Path:
    """``<stem>-simplified<suffix>`` in the working folder, for the source's format."""
    fmt = getattr(model, "format", "")
    suffix = SUFFIXES.get(fmt, ("",))[0]
    if fmt == "python":
        stem = str(model.source).partition(":")[2] or "model"
    else:
        stem = Path(str((getattr(model, "open_args", None) or {}).get("ref", model.source))).stem
    return Path(f"{stem}-simplified{suffix}")


def _writer(fmt: str) -> Any:
    if fmt == "onnx":
        from .onnx_file import write_onnx

        return write_onnx
    if fmt == "python":
        from .python_file import write_python

        return write_python
    from .torch_file import write_torch

    return write_torch


def write_model(
    model: Any, plan: ExportPlan, path: str | Path, *, output_dtype: str = "source", replace: bool = False
) -> list[str]:
    """Write the simplified model of ``model`` to ``path``, in the source's format.

    Parameters
    ----------
    model : Model
        The source, opened by :func:`audit.models.open.open_model` (ONNX, Torch, or a Python reference).
    plan : ExportPlan
    path : str or Path
        Where to write; its suffix must suit the format (:data:`SUFFIXES`).
    output_dtype : {"source", "float64"}
        Type of the pre-integrated outputs (ONNX and Torch).
    replace : bool
        Replace an existing file (never the source itself).

    Returns
    -------
    list of str
        Notices for the user.

    Raises
    ------
    UserError
        For a format netdim cannot write, a wrong suffix, or a path it may not write.
    """
    check_choice(output_dtype, "output_dtype", OUTPUT_DTYPES)
    fmt = getattr(model, "format", "")
    if fmt not in SUFFIXES:
        raise UserError(
            f"netdim cannot write a simplified model of a '{fmt}' model ('{model.source}'). It writes ONNX, "
            "TorchScript, torch.export programs and Python functions: open the model from such a file."
        )
    path = Path(path)
    if path.suffix.lower() not in SUFFIXES[fmt]:
        raise UserError(
            f"The simplified model of the {fmt} model '{model.source}' is written as "
            f"{' or '.join(SUFFIXES[fmt])}; `path` '{path}' has another suffix."
        )
    ref = (getattr(model, "open_args", None) or {}).get("ref")
    if ref and path.exists() and path.resolve() == Path(ref).resolve():
        raise UserError(f"`path` '{path}' is the source model itself; netdim never overwrites it. Give another path.")
    if path.exists() and not replace:
        raise UserError(f"`path` '{path}' exists; netdim does not overwrite it. Give another path or `replace` it.")
    if path.is_dir():
        raise UserError(f"`path` '{path}' is a folder; give a file path.")
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    try:
        notices = _writer(fmt)(model, plan, tmp, output_dtype)
        os.replace(tmp, path)
    finally:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
    return notices
