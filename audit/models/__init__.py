"""Model backends behind one interface (:class:`Model`).

``open_model`` opens a file or a Python reference. Every public name below is
loaded on first use (module ``__getattr__``), so ``import audit.models`` loads
neither onnx, onnxruntime nor Torch; a backend is imported when its class or
``open_model`` first needs it.

Modules
-------
base
    The interface (:class:`Model`, :class:`TensorInfo`, :class:`LayerInfo`,
    :class:`Evaluation`) and helpers every backend and study uses
    (``output_units`` selects outputs by name).
batch
    Which axis of a tensor holds the rows, from a probe evaluated in two batches.
graph, patterns
    One layer name across formats: backend-neutral graph nodes, the naming rule,
    and activations that exporters split into several nodes.
tensors
    Between rows and tensors, and the words for what the probe finds.
open
    ``open_model`` and ``reopen``: the one entry point (backends never import it).
onnx, onnx_graph, onnx_layers, onnx_session
    ONNX files run with onnxruntime: the model, the file, its nodes' module
    paths, the sessions.
torch
    TorchScript archives, ``torch.export`` programs, state dicts, trusted pickles.
python
    Plain Python callables ``package.module:function``.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .base import Evaluation, LayerInfo, Model, TensorInfo, feature_count, index_names, output_units, row_dtype
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
    "output_units": "base",
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
    "output_units",
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
