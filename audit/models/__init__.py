"""Model backends behind one interface (:class:`Model`).

``open_model`` opens a file or a Python reference. The ONNX and Torch backends
are imported on first use only, so importing this package (or ``.base``) does
not load onnxruntime or Torch.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .base import Evaluation, LayerInfo, Model, TensorInfo, index_names
from .open import is_python_reference, open_model
from .python_model import PythonModel, import_reference

if TYPE_CHECKING:
    from .onnx_model import OnnxModel
    from .torch_model import TorchModel, open_torch

__all__ = [
    "Evaluation",
    "LayerInfo",
    "Model",
    "OnnxModel",
    "PythonModel",
    "TensorInfo",
    "TorchModel",
    "import_reference",
    "index_names",
    "is_python_reference",
    "open_model",
    "open_torch",
]

_LAZY = {"OnnxModel": "onnx_model", "TorchModel": "torch_model", "open_torch": "torch_model"}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        module = importlib.import_module(f".{_LAZY[name]}", __name__)
        return getattr(module, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
