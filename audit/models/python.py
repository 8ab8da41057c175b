"""Plain Python callables as models: ``package.module:function``.

The callable takes an (n, d) float64 array and returns an array of shape
(n,) or (n, k). It has one input tensor ``x`` of d features, no hidden layers,
and its outputs are returned as float64 (whatever dtype the rows came in).

References are imported with the working folder at the *end* of the module
search path, so a file of the working folder never shadows an installed
package (a stray ``rich.py`` or ``numpy.py`` does not run); a reference whose
module exists both there and installed gets the installed one, and
:func:`shadow_notice` says so.
"""

from __future__ import annotations

import importlib
import os
import sys
from collections.abc import Callable, Sequence
from pathlib import Path

import numpy as np

from ..errors import UserError, suggest
from .base import Evaluation, LayerInfo, TensorInfo, index_names

__all__ = ["PythonModel", "import_reference", "shadow_notice"]


def _on_path_end() -> None:
    """Put the working folder on the module search path, after everything installed."""
    cwd = os.getcwd()
    if cwd not in sys.path and "" not in sys.path:  # the console script does not put it there
        sys.path.append(cwd)


def shadow_notice(module_name: str) -> str | None:
    """A notice when the working folder holds a module of the name that Python took from elsewhere."""
    top = module_name.split(".")[0]
    cwd = Path.cwd()
    if not ((cwd / f"{top}.py").is_file() or (cwd / top / "__init__.py").is_file()):
        return None
    origin = getattr(sys.modules.get(top), "__file__", None)
    if not origin or Path(origin).resolve().is_relative_to(cwd.resolve()):
        return None
    return (
        f"The working folder holds a module '{top}', but '{top}' is also installed ({origin}) and netdim "
        "imported the installed one, because the working folder never shadows installed packages. Rename "
        "your file, or install your package, if you meant yours."
    )


def import_reference(ref: str, what: str = "Python reference") -> object:
    """Import ``package.module:attribute`` and return the attribute."""
    module_name, sep, attr = ref.partition(":")
    if not sep or not module_name or not attr:
        raise UserError(
            f"The {what} '{ref}' is not of the form 'package.module:name'. Write the "
            "importable module, a colon, then the attribute, e.g. 'model_zoo.greenhouse:simulate'."
        )
    _on_path_end()
    try:
        module = importlib.import_module(module_name)
    except Exception as exc:  # any import failure is the user's module
        raise UserError(
            f"The {what} '{ref}' could not be imported: importing module '{module_name}' "
            f"failed with {type(exc).__name__}: {exc}. Check the spelling and that the module "
            "is on the Python path (run from its folder or install its package)."
        ) from exc
    obj = module
    for part in attr.split("."):
        if not hasattr(obj, part):
            names = [n for n in dir(module) if not n.startswith("_")]
            shadowed = shadow_notice(module_name)
            raise UserError(
                f"The {what} '{ref}': module '{module_name}' has no attribute '{attr}'."
                + suggest(part, names)
                + (f" {shadowed}" if shadowed else "")
            )
        obj = getattr(obj, part)
    return obj


class PythonModel:
    """A Python callable seen through the :class:`~audit.models.base.Model` interface.

    Parameters
    ----------
    func : callable
        Maps an (n, d) float64 array to (n,) or (n, k).
    dim : int
        Number of input features d.
    source : str
        Where it came from (for reports).

    Attributes
    ----------
    inputs : list of TensorInfo
        One float64 tensor ``x`` of shape (d,).
    outputs : list of TensorInfo
        One float64 tensor ``y``, of shape () or (k,).
    notices : list of str
        Always empty.
    """

    format = "python"

    def __init__(self, func: Callable[[np.ndarray], np.ndarray], dim: int, source: str = "") -> None:
        if not callable(func):
            raise UserError(
                f"'{source or func!r}' is not callable: a Python model must be a function "
                "taking an (n, d) float64 array and returning (n,) or (n, k) values."
            )
        if int(dim) < 1:
            raise UserError(f"The input dimension of '{source}' must be at least 1, got {dim}.")
        self.func = func
        self.source = source or getattr(func, "__qualname__", repr(func))
        self.inputs = [TensorInfo("x", (int(dim),), "float64")]
        self.notices: list[str] = []
        probe = self._call(np.full((2, int(dim)), 0.5))
        self.outputs = [TensorInfo("y", probe.shape[1:] if probe.ndim == 2 else (), "float64")]

    def _call(self, x: np.ndarray) -> np.ndarray:
        try:
            y = self.func(x)
        except UserError:
            raise
        except Exception as exc:
            raise UserError(
                f"The Python model '{self.source}' failed on a batch of shape {x.shape}: "
                f"{type(exc).__name__}: {exc}. It must accept an (n, d) float64 array."
            ) from exc
        y = np.asarray(y)
        if y.dtype.kind not in "fiub":
            raise UserError(
                f"The Python model '{self.source}' returned values of type {y.dtype}; it must return real numbers."
            )
        if y.ndim not in (1, 2) or y.shape[0] != x.shape[0]:
            raise UserError(
                f"The Python model '{self.source}' returned shape {y.shape} for {x.shape[0]} "
                f"rows; expected ({x.shape[0]},) or ({x.shape[0]}, k)."
            )
        return y.astype(np.float64, copy=False)

    def layers(self) -> list[LayerInfo]:
        return []

    def feature_names(self) -> list[str]:
        return index_names("x", self.inputs[0].shape)

    def output_names(self) -> list[str]:
        shape = self.outputs[0].shape
        return ["y"] if not shape else index_names("y", shape)

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        if capture:
            raise UserError("A Python model has no hidden layers to capture; set `layers` to none.")
        y = self._call(np.ascontiguousarray(x, dtype=np.float64))
        return Evaluation(outputs=y.reshape(len(x), -1))
