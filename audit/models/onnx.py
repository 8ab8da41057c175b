"""ONNX models run with onnxruntime on the CPU.

The model has one floating-point input tensor whose first axis is the batch
axis. Hidden tensors are exposed by adding them as extra graph outputs with the
``onnx`` package (the file itself is never re-exported or rewritten); the
extended session is built lazily, once per distinct set of captured tensors,
and cached. Shapes of hidden tensors come from ONNX shape inference, completed
by one small probe run where inference leaves a dimension unknown.

A model exported with a fixed batch size B is fed in chunks of B rows (the
last chunk padded by repeating its last row; padding is dropped from the
results).
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import onnx
import onnxruntime as ort

from ..errors import UserError, suggest
from .base import Evaluation, LayerInfo, TensorInfo, check_rows, index_names, integer_output_error

__all__ = ["ACTIVATION_OPS", "OnnxModel"]

#: ONNX operator types whose output counts as an activation (captured by default).
ACTIVATION_OPS = frozenset(
    {
        "Relu", "LeakyRelu", "PRelu", "Elu", "Selu", "Celu", "Gelu", "Tanh", "Sigmoid",
        "HardSigmoid", "HardSwish", "Softplus", "Softsign", "Softmax", "LogSoftmax", "Erf",
        "Mish",
    }
)  # fmt: skip

# numpy dtypes of the ONNX tensor element types netdim can feed or capture.
_FLOAT_TYPES = {
    onnx.TensorProto.FLOAT: np.float32,
    onnx.TensorProto.DOUBLE: np.float64,
    onnx.TensorProto.FLOAT16: np.float16,
}
_ORT_INPUT_TYPES = {
    "tensor(float)": np.float32,
    "tensor(double)": np.float64,
    "tensor(float16)": np.float16,
}
# Operators whose outputs are never worth probing (shape arithmetic, constants).
_SKIP_OPS = frozenset({"Constant", "ConstantOfShape", "Shape", "Size", "Identity"})
_PROBE_ROWS = 3


def _session_options() -> ort.SessionOptions:
    options = ort.SessionOptions()
    options.intra_op_num_threads = os.cpu_count() or 1
    options.log_severity_level = 3  # errors only: no warnings on the user's terminal
    return options


def _check_file(path: Path) -> None:
    if not path.exists():
        raise UserError(
            f"The ONNX model file '{path}' does not exist. Check the path (and the current "
            "folder) and try again."
        )
    if path.is_dir():
        raise UserError(
            f"'{path}' is a folder, not an ONNX model file. Give the path of the .onnx file itself."
        )
    if path.stat().st_size == 0:
        raise UserError(
            f"The ONNX model file '{path}' is empty (0 bytes). It was probably not written "
            "completely: export or copy the model again."
        )


def _load_proto(path: Path) -> onnx.ModelProto:
    """Parse the model without its external data, turning parse failures into UserErrors."""
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


def _check_external_data(proto: onnx.ModelProto, path: Path) -> bool:
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


def _session(model: str | bytes, where: Path) -> ort.InferenceSession:
    try:
        return ort.InferenceSession(
            model, sess_options=_session_options(), providers=["CPUExecutionProvider"]
        )
    except Exception as exc:  # onnxruntime raises its own classes (Fail, InvalidGraph, ...)
        kind = type(exc).__name__
        text = str(exc)
        unsupported = ("not a registered function/op", "Could not find an implementation")
        if kind == "NotImplemented" or any(marker in text for marker in unsupported):
            why = (
                "it uses an operator (or operator version) that onnxruntime "
                f"{ort.__version__} cannot run on the CPU"
            )
            fix = "re-export the model with a supported opset or without custom operators"
        elif kind in ("InvalidProtobuf", "InvalidGraph", "Fail", "InvalidArgument"):
            why = "onnxruntime found it invalid or damaged"
            fix = "export or copy the model again and check it with onnx.checker"
        else:
            why = "onnxruntime could not load it"
            fix = "export or copy the model again"
        first_line = text.strip().splitlines()[0] if text.strip() else kind
        raise UserError(
            f"The ONNX model '{where}' cannot be used: {why} ({first_line}). To fix: {fix}."
        ) from exc


def _static_dims(dims: Sequence[object]) -> tuple[int, ...] | None:
    """Non-batch dims as ints, or None if any is symbolic or unknown."""
    out = []
    for dim in dims:
        if not isinstance(dim, int) or dim < 0:
            return None
        out.append(dim)
    return tuple(out)


class OnnxModel:
    """An ONNX file seen through the :class:`~audit.models.base.Model` interface.

    Parameters
    ----------
    path : str or Path
        The ``.onnx`` file. External data files must sit in its folder.
    input_shape : tuple of int, optional
        Non-batch shape of the input, needed only when the file leaves some
        non-batch input dimension symbolic.

    Attributes
    ----------
    notices : list of str
        Remarks for the user (for instance a batch size fixed at 1).
    batch_size : int or None
        The fixed batch size of the model, or None for a dynamic batch axis.
    """

    format = "onnx"

    def __init__(self, path: str | os.PathLike[str], *, input_shape: Sequence[int] | None = None):
        self.path = Path(path)
        self.source = str(path)
        self.notices: list[str] = []
        _check_file(self.path)
        self._proto = _load_proto(self.path)
        self._has_external = _check_external_data(self._proto, self.path)
        self._session = _session(str(self.path), self.path)
        self._sessions: dict[tuple[str, ...], ort.InferenceSession] = {}
        self._layers: list[LayerInfo] | None = None
        self._read_input(input_shape)
        self._read_outputs()

    # -- signature -----------------------------------------------------------------------

    def _read_input(self, input_shape: Sequence[int] | None) -> None:
        inputs = self._session.get_inputs()
        if len(inputs) != 1:
            names = ", ".join(f"'{i.name}'" for i in inputs)
            raise UserError(
                f"The ONNX model '{self.path}' has {len(inputs)} input tensors ({names}); netdim "
                "supports models with exactly one floating-point input tensor. Wrap the model so "
                "that all features arrive in one tensor, or fix the other inputs as constants."
            )
        meta = inputs[0]
        if meta.type not in _ORT_INPUT_TYPES:
            raise UserError(
                f"The input '{meta.name}' of the ONNX model '{self.path}' has type {meta.type}; "
                "netdim feeds real-valued features and supports float, double and float16 inputs. "
                "Export the model with a floating-point input (cast inside the model if needed)."
            )
        self._dtype = np.dtype(_ORT_INPUT_TYPES[meta.type])
        if not meta.shape:
            raise UserError(
                f"The input '{meta.name}' of the ONNX model '{self.path}' is a scalar; netdim "
                "needs a batch axis first. Re-export the model with input shape (batch, ...)."
            )
        batch, *rest = meta.shape
        self.batch_size: int | None = batch if isinstance(batch, int) and batch > 0 else None
        if self.batch_size == 1:
            self.notices.append(
                f"The model '{self.path.name}' has a fixed batch size of 1, so netdim evaluates "
                "it one row at a time, which is slow. Re-export it with a dynamic batch axis."
            )
        shape = _static_dims(rest)
        if input_shape is not None:
            wanted = tuple(int(s) for s in input_shape)
            if shape is not None and wanted != shape:
                raise UserError(
                    f"The input shape {wanted} given for '{self.path}' does not match the "
                    f"model's own input shape {shape}. Leave --input-shape out for this model."
                )
            shape = wanted
        if shape is None:
            raise UserError(
                f"The input '{meta.name}' of the ONNX model '{self.path}' has shape {meta.shape} "
                "with symbolic non-batch dimensions. Give the shape of one input row, e.g. "
                "--input-shape 1,8,8."
            )
        dtype_name = str(self._dtype)
        self.input = TensorInfo(meta.name, shape, dtype_name)
        self._input_name = meta.name

    def _read_outputs(self) -> None:
        metas = [o for o in self._session.get_outputs() if o.type.startswith("tensor(")]
        skipped = [o.name for o in self._session.get_outputs() if not o.type.startswith("tensor(")]
        if skipped:
            self.notices.append(
                "Outputs that are not tensors (sequences or maps) are left out: "
                + ", ".join(skipped)
                + "."
            )
        if not metas:
            raise UserError(
                f"The ONNX model '{self.path}' has no tensor outputs netdim can audit. Export it "
                "so that it returns numeric tensors."
            )
        self._output_names = [o.name for o in metas]
        probe = self._run(self._session, self._output_names, self._probe_rows())
        self.outputs = []
        for meta, value in zip(metas, probe, strict=True):
            value = np.asarray(value)
            if value.dtype.kind not in "fiub" or value.ndim == 0:
                raise UserError(
                    f"The output '{meta.name}' of the ONNX model '{self.path}' has type "
                    f"{value.dtype} and shape {value.shape}; netdim needs numeric outputs with a "
                    "batch axis first."
                )
            if value.dtype.kind in "iu":
                raise UserError(integer_output_error(str(self.path), meta.name, str(value.dtype)))
            self.outputs.append(TensorInfo(meta.name, tuple(value.shape[1:]), str(value.dtype)))

    def _probe_rows(self) -> np.ndarray:
        rows = self.batch_size or _PROBE_ROWS
        return np.zeros((rows, self.input.units))

    # -- names ---------------------------------------------------------------------------

    def feature_names(self) -> list[str]:
        return index_names(self.input.name or "x", self.input.shape)

    def output_names(self) -> list[str]:
        names: list[str] = []
        for info in self.outputs:
            names.extend(index_names(info.name, info.shape))
        return names

    # -- layers --------------------------------------------------------------------------

    def layers(self) -> list[LayerInfo]:
        """Float tensors computed from the input, with a known non-batch shape, in graph order."""
        if self._layers is None:
            self._layers = self._discover_layers()
        return list(self._layers)

    def _discover_layers(self) -> list[LayerInfo]:
        graph = self._proto.graph
        try:
            inferred = onnx.shape_inference.infer_shapes(self._proto, strict_mode=False).graph
            value_info = {v.name: v for v in inferred.value_info}
        except Exception:  # inference is a convenience; the probe below fills the gaps
            value_info = {}
        outputs = {o.name for o in graph.output}
        dynamic = {self._input_name}
        candidates: list[tuple[str, str]] = []  # (tensor name, op type)
        for node in graph.node:
            if not any(name in dynamic for name in node.input):
                continue
            dynamic.update(o for o in node.output if o)
            if node.op_type in _SKIP_OPS:
                continue
            candidates.extend((o, node.op_type) for o in node.output if o and o not in outputs)

        shapes: dict[str, tuple[int, ...]] = {}
        unknown: list[str] = []
        for name, _ in candidates:
            info = value_info.get(name)
            if info is None or not info.type.HasField("tensor_type"):
                unknown.append(name)
                continue
            tensor = info.type.tensor_type
            if tensor.elem_type and tensor.elem_type not in _FLOAT_TYPES:
                continue
            dims = tensor.shape.dim if tensor.HasField("shape") else None
            if not dims or not tensor.elem_type:
                unknown.append(name)
                continue
            first = dims[0]
            if first.HasField("dim_value") and first.dim_value != (self.batch_size or -1):
                continue  # a fixed leading size that is not the batch: not per-row
            rest = [d.dim_value if d.HasField("dim_value") else None for d in dims[1:]]
            if all(r is not None and r > 0 for r in rest):
                shapes[name] = tuple(rest)  # type: ignore[arg-type]
            else:
                unknown.append(name)
        if unknown:
            shapes.update(self._probe_shapes(unknown))
        return [
            LayerInfo(name, op, shapes[name], op in ACTIVATION_OPS)
            for name, op in candidates
            if name in shapes
        ]

    def _probe_shapes(self, names: list[str]) -> dict[str, tuple[int, ...]]:
        x = self._probe_rows()
        try:
            session = self._extended(tuple(names))
            values = self._run(session, list(names), x)
        except UserError:
            return {}
        shapes = {}
        for name, value in zip(names, values, strict=True):
            value = np.asarray(value)
            if value.dtype.kind == "f" and value.ndim >= 1 and value.shape[0] == len(x):
                shapes[name] = tuple(value.shape[1:])
        return shapes

    def _extended(self, names: tuple[str, ...]) -> ort.InferenceSession:
        """A session whose graph also returns the tensors ``names`` (built once per set)."""
        key = tuple(sorted(names))
        if key not in self._sessions:
            proto = onnx.ModelProto()
            proto.CopyFrom(self._proto)
            if self._has_external:
                onnx.load_external_data_for_model(proto, str(self.path.parent))
            proto.graph.output.extend(onnx.ValueInfoProto(name=name) for name in key)
            self._sessions[key] = _session(proto.SerializeToString(), self.path)
        return self._sessions[key]

    # -- evaluation ----------------------------------------------------------------------

    def _run(
        self, session: ort.InferenceSession, names: list[str], x: np.ndarray
    ) -> list[np.ndarray]:
        """Run ``session`` on rows ``x`` (n, d), chunking for a fixed batch size."""
        n = len(x)
        feed = x.astype(self._dtype, copy=False).reshape((n, *self.input.shape))
        batch = self.batch_size
        try:
            if batch is None:
                return session.run(names, {self._input_name: feed})
            parts: list[list[np.ndarray]] = []
            for start in range(0, n, batch):
                chunk = feed[start : start + batch]
                if len(chunk) < batch:
                    pad = np.repeat(chunk[-1:], batch - len(chunk), axis=0)
                    chunk = np.concatenate([chunk, pad])
                parts.append(session.run(names, {self._input_name: chunk}))
            return [np.concatenate([p[i] for p in parts])[:n] for i in range(len(names))]
        except UserError:
            raise
        except Exception as exc:
            first_line = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
            raise UserError(
                f"The ONNX model '{self.path}' failed on a batch of {n} rows of shape "
                f"{self.input.shape} ({type(exc).__name__}: {first_line}). Check that the input "
                "shape is right (--input-shape) and that the model runs in onnxruntime."
            ) from exc

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x``.

        Parameters
        ----------
        x : ndarray, shape (n, d)
            Input rows, float64; cast to the model's own precision.
        capture : sequence of str
            Names of hidden tensors (from :meth:`layers`) to return as well.

        Returns
        -------
        Evaluation
            Outputs (n, k) and the captured tensors (n, units), float64.
        """
        x = check_rows(x, self.input.units)
        n = len(x)
        capture = tuple(dict.fromkeys(capture))
        if capture:
            self._check_capture(capture)
            names = self._output_names + list(capture)
            values = self._run(self._extended(capture), names, x)
        else:
            names = self._output_names
            values = self._run(self._session, names, x)
        k = len(self._output_names)
        outs = values[:k]
        if k == 1:
            outputs = outs[0].reshape(n, -1).astype(np.float64)
        else:
            outputs = np.concatenate([o.reshape(n, -1) for o in outs], axis=1, dtype=np.float64)
        hidden = {
            name: value.reshape(n, -1).astype(np.float64)
            for name, value in zip(capture, values[k:], strict=True)
        }
        return Evaluation(outputs=outputs, hidden=hidden)

    def _check_capture(self, capture: Sequence[str]) -> None:
        known = {layer.name for layer in self.layers()}
        for name in capture:
            if name not in known:
                raise UserError(
                    f"The ONNX model '{self.path.name}' has no probe-able layer '{name}'."
                    + suggest(name, known)
                    + f" Run 'netdim layers {self.source}' to list the layer names."
                )
