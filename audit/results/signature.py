"""What a model looks like from outside: its input and output tensors and probe-able layers.

``netdim layers MODEL`` shows a :class:`ModelSignature`; it is built from an opened model
by :func:`audit.studies.signature.model_signature`, so the report never touches a backend.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .base import Displayable

__all__ = ["LayerEntry", "ModelSignature", "TensorEntry"]


@dataclass(frozen=True)
class TensorEntry:
    """Name, non-batch shape and element type of one input or output tensor."""

    name: str
    shape: tuple[int, ...]
    dtype: str

    @property
    def units(self) -> int:
        return int(math.prod(self.shape)) if self.shape else 1

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "shape": list(self.shape), "dtype": self.dtype}


@dataclass(frozen=True)
class LayerEntry:
    """One hidden tensor that can be captured: its name in every format, and the format's own tensor."""

    name: str
    op: str
    shape: tuple[int, ...]
    activation: bool
    tensor: str = ""

    @property
    def units(self) -> int:
        return int(math.prod(self.shape)) if self.shape else 1

    def to_dict(self) -> dict[str, Any]:
        d = {"name": self.name, "op": self.op, "shape": list(self.shape), "activation": self.activation}
        return {**d, "tensor": self.tensor} if self.tensor else d


@dataclass(frozen=True)
class ModelSignature(Displayable):
    """A model's source, format, tensors and layers, and remarks of the backend."""

    source: str
    format: str
    inputs: list[TensorEntry]
    outputs: list[TensorEntry]
    layers: list[LayerEntry] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)

    kind = "signature"

    @property
    def features(self) -> int:
        """Number of scalar inputs d."""
        return sum(t.units for t in self.inputs)

    def to_dict(self) -> dict[str, Any]:
        return {
            "source": self.source,
            "format": self.format,
            "inputs": [t.to_dict() for t in self.inputs],
            "outputs": [t.to_dict() for t in self.outputs],
            "layers": [x.to_dict() for x in self.layers],
            "notices": list(self.notices),
        }
