"""Reading an ONNX file: checks, the graph, external data, and the hidden tensors it offers.

Nothing here runs the model. :func:`load_proto` parses the file without its
external data; :func:`check_external_data` refuses external data outside the
model's folder; :func:`value_info` reads what ONNX shape inference knows of the
hidden tensors; :func:`with_outputs` makes the serialized model that also returns given hidden
tensors (the file itself is never rewritten).
"""

from __future__ import annotations

import functools
import mmap
import os
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..errors import UserError

if TYPE_CHECKING:  # onnx itself is imported only where a graph is read (not for outputs alone)
    import onnx

__all__ = [
    "check_external_data",
    "check_file",
    "float_types",
    "load_proto",
    "may_hold_external_data",
    "value_info",
    "with_outputs",
]


@functools.cache
def float_types() -> dict[int, type]:
    """numpy dtypes of the ONNX tensor element types netdim can capture."""
    import onnx

    tp = onnx.TensorProto
    return {tp.FLOAT: np.float32, tp.DOUBLE: np.float64, tp.FLOAT16: np.float16}


def may_hold_external_data(path: Path) -> bool:
    """False only when ``path`` cannot reference external data: every external tensor names its
    file under the key ``location``, which protobuf stores verbatim, so a file without those bytes
    has none (a cheap scan that spares importing onnx for a model run for its outputs alone)."""
    with open(path, "rb") as f, mmap.mmap(f.fileno(), 0, access=mmap.ACCESS_READ) as data:
        return data.find(b"location") >= 0


def check_file(path: Path) -> None:
    """A UserError unless ``path`` is a non-empty file."""
    if not path.exists():
        raise UserError(
            f"The ONNX model file '{path}' does not exist. Check the path (and the current folder) and try again."
        )
    if path.is_dir():
        raise UserError(f"'{path}' is a folder, not an ONNX model file. Give the path of the .onnx file itself.")
    if path.stat().st_size == 0:
        raise UserError(
            f"The ONNX model file '{path}' is empty (0 bytes). It was probably not written "
            "completely: export or copy the model again."
        )


def load_proto(path: Path) -> onnx.ModelProto:
    """Parse the model without its external data, turning parse failures into UserErrors."""
    import onnx

    try:
        proto = onnx.load(str(path), load_external_data=False)
    except Exception as exc:  # protobuf DecodeError and friends
        raise UserError(
            f"'{path}' could not be read as an ONNX model ({type(exc).__name__}: {exc}). The "
            "file is truncated, damaged or not an ONNX file: export or copy the model again."
        ) from exc
    if not proto.HasField("graph") or not proto.graph.node:
        raise UserError(
            f"'{path}' holds no ONNX graph (no nodes). It is truncated or not an ONNX model: "
            "export or copy the model again."
        )
    return proto


def _external_tensors(graph: onnx.GraphProto) -> list[onnx.TensorProto]:
    """Tensors of ``graph`` and of its subgraphs (If / Loop bodies) kept in external files."""
    import onnx

    tensors = list(graph.initializer)
    for node in graph.node:
        for attribute in node.attribute:
            if attribute.HasField("t"):
                tensors.append(attribute.t)
            tensors.extend(attribute.tensors)
            subgraphs = [attribute.g] if attribute.HasField("g") else []
            for sub in [*subgraphs, *attribute.graphs]:
                tensors.extend(_external_tensors(sub))
    return [t for t in tensors if t.data_location == onnx.TensorProto.EXTERNAL]


def check_external_data(proto: onnx.ModelProto, path: Path) -> bool:
    """Refuse external data outside the model's folder; return True if there is any."""
    folder = path.parent.resolve()
    tensors = _external_tensors(proto.graph)
    for tensor in tensors:
        location = next((e.value for e in tensor.external_data if e.key == "location"), "")
        target = (folder / location).resolve()
        if not location or os.path.isabs(location) or not target.is_relative_to(folder):
            raise UserError(
                f"The ONNX model '{path}' stores tensor '{tensor.name}' in external data at "
                f"'{location}', outside the model's folder '{folder}'. netdim only reads external "
                "data files that sit in the model's own folder (or below it); move the data file "
                "there and re-save the model with a relative location."
            )
        if not target.is_file():
            raise UserError(
                f"The ONNX model '{path}' keeps tensor '{tensor.name}' in the external data file "
                f"'{location}', which does not exist in '{folder}'. Copy the data file next to "
                "the model."
            )
    return bool(tensors)


def with_outputs(proto: onnx.ModelProto, names: Sequence[str], path: Path, external: bool) -> bytes:
    """The serialized model whose graph also returns the tensors ``names``."""
    import onnx

    extended = onnx.ModelProto()
    extended.CopyFrom(proto)
    if external:
        onnx.load_external_data_for_model(extended, str(path.parent))
    extended.graph.output.extend(onnx.ValueInfoProto(name=name) for name in names)
    return extended.SerializeToString()


def value_info(proto: onnx.ModelProto) -> dict[str, onnx.ValueInfoProto]:
    """What ONNX shape inference knows of the hidden tensors (types and shapes), by name.

    Inference is a convenience: when it fails, the probe run tells the rest.
    """
    import onnx

    try:
        inferred = onnx.shape_inference.infer_shapes(proto, strict_mode=False).graph
    except Exception:  # inference is a convenience; a probe run fills the gaps
        return {}
    return {v.name: v for v in inferred.value_info}
