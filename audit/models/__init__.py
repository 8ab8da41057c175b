"""Model backends behind one interface (:class:`Model`).

``open_model`` opens a file or a Python reference. Every public name below is
loaded on first use (module ``__getattr__``), so ``import audit.models`` loads
neither onnx, onnxruntime nor Torch; a backend is imported when its class or
``open_model`` first needs it.

Modules
-------
base
    The interface (:class:`Model`, :class:`TensorInfo`, :class:`LayerInfo`,
    :class:`Evaluation`) and helpers every backend and study uses.
open
    ``open_model`` and ``reopen``: the one entry point (backends never import it).
onnx
    ONNX files run with onnxruntime.
torch
    TorchScript archives, ``torch.export`` programs, state dicts, trusted pickles.
python
    Plain Python callables ``package.module:function``.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .base import Evaluation, LayerInfo, Model, TensorInfo, feature_count, index_names, row_dtype
    from .onnx import OnnxModel
    from .open import is_python_reference, open_model, reopen
    from .python import PythonModel, import_reference
    from .torch import TorchModel, open_torch

#: Public name -> submodule that defines it.
_EXPORTS = {
    "Evaluation": "base",
    "LayerInfo": "base",
    "Model": "base",
    "TensorInfo": "base",
    "feature_count": "base",
    "row_dtype": "base",
    "index_names": "base",
    "OnnxModel": "onnx",
    "is_python_reference": "open",
    "open_model": "open",
    "reopen": "open",
    "PythonModel": "python",
    "import_reference": "python",
    "TorchModel": "torch",
    "open_torch": "torch",
}

__all__ = [
    "Evaluation",
    "LayerInfo",
    "Model",
    "OnnxModel",
    "PythonModel",
    "TensorInfo",
    "TorchModel",
    "feature_count",
    "import_reference",
    "index_names",
    "is_python_reference",
    "open_model",
    "open_torch",
    "reopen",
    "row_dtype",
]


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{_EXPORTS[name]}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *_EXPORTS])
