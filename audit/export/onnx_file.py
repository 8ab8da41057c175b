"""The simplified model as an ONNX file: a wrapper graph around the source graph.

The written graph takes the kept inputs (each input tensor under its own
name: unchanged tensors keep their shape, a tensor that lost elements takes
its remaining elements as a (batch, k) matrix) and, in the source's own opset:

1. repeats every row over the M points of the rule (``Reshape`` and ``Expand``);
2. inserts the integrated inputs' nodes and the frozen values (initializers
   in the tensor's element type, ``Expand`` to the rows, ``Concat``) and puts
   every column back in its place (``Gather`` along the columns), then
   reshapes to the source tensor's shape;
3. runs the source graph, inlined with every name prefixed ``source/``;
4. sums each output over the rule with the weights (a float64 ``MatMul``),
   and returns it in the source output's type (or float64).

Only copies touch the inputs, so a frozen export computes bit for bit what the
source computes on the same rows. The file records the plan in its
``metadata_props`` (``netdim.plan``: JSON; ``netdim.version``,
``netdim.source_sha256``, ``netdim.kind``) and passes ``onnx.checker``.

References
----------
.. [1] ONNX operator specifications (Expand, Gather, Concat, MatMul), the
   ONNX project, https://onnx.ai/onnx/operators/.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import onnx
from onnx import TensorProto, helper, numpy_helper

from ..errors import UserError
from ..models.base import TensorInfo
from .plan import ExportPlan

__all__ = ["MIN_OPSET", "PREFIX", "build_onnx", "write_onnx"]

#: Oldest default-domain opset the wrapper's operators (Expand) exist in.
MIN_OPSET = 8
#: Prefix of every name of the source graph inside the written one.
PREFIX = "source/"
_OWN = "netdim/"

_FLOAT = {"float16": TensorProto.FLOAT16, "float32": TensorProto.FLOAT, "float64": TensorProto.DOUBLE}


class _Graph:
    """Nodes and initializers of the wrapper, with fresh names."""

    def __init__(self) -> None:
        self.nodes: list[onnx.NodeProto] = []
        self.inits: list[onnx.TensorProto] = []
        self._count = 0

    def name(self, what: str) -> str:
        self._count += 1
        return f"{_OWN}{what}_{self._count}"

    def const(self, array: np.ndarray, what: str) -> str:
        name = self.name(what)
        self.inits.append(numpy_helper.from_array(np.asarray(array), name))
        return name

    def op(self, kind: str, inputs: list[str], what: str, output: str | None = None, **attrs: Any) -> str:
        out = output or self.name(what)
        self.nodes.append(helper.make_node(kind, inputs, [out], name=self.name(kind.lower()), **attrs))
        return out

    def shape(self, dims: list[int]) -> str:
        return self.const(np.array(dims, dtype=np.int64), "shape")


def _check(model: Any, plan: ExportPlan, proto: onnx.ModelProto) -> int:
    """The default-domain opset, after refusing what the wrapper cannot do."""
    opset = next((o.version for o in proto.opset_import if o.domain in ("", "ai.onnx")), None)
    if opset is None or opset < MIN_OPSET:
        raise UserError(
            f"The ONNX model '{model.source}' uses opset {opset}; the simplified model needs opset "
            f"{MIN_OPSET} or later. Convert it first (onnx.version_converter) or re-export it."
        )
    if plan.integrated and getattr(model, "batch_size", None) is not None:
        raise UserError(
            f"The ONNX model '{model.source}' has a fixed batch size of {model.batch_size}, but integrating "
            "an input out runs it on every row times the Gauss nodes. Re-export it with a dynamic batch axis."
        )
    return int(opset)


def _input_columns(model: Any, plan: ExportPlan) -> list[tuple[TensorInfo, int, list[int]]]:
    """Per source input tensor: its info, its first feature position, and its kept positions."""
    kept, out, start = set(plan.kept), [], 0
    for t in model.inputs:
        out.append((t, start, [j for j in range(start, start + t.units) if j in kept]))
        start += t.units
    return out


def _value_info(name: str, dtype: int, dims: list[Any]) -> onnx.ValueInfoProto:
    return helper.make_tensor_value_info(name, dtype, dims)


def _elem(t: TensorInfo, model: Any) -> int:
    if t.dtype not in _FLOAT:
        raise UserError(
            f"The input '{t.name}' of '{model.source}' holds {t.dtype} values; netdim integrates out or freezes "
            "real-valued inputs only. Keep that tensor's elements (`integrate`, `freeze`)."
        )
    return _FLOAT[t.dtype]


def build_onnx(
    model: Any, plan: ExportPlan, output_dtype: str = "source", notices: list[str] | None = None
) -> onnx.ModelProto:
    """The simplified model's ONNX graph (see the module docstring).

    Parameters
    ----------
    model : OnnxModel
        The source, opened by :class:`~audit.models.onnx.OnnxModel`.
    plan : ExportPlan
    output_dtype : {"source", "float64"}
        Type of the integrated outputs: the source output's, or float64.
    notices : list of str, optional
        Remarks for the user are appended here (outputs left out).

    Returns
    -------
    onnx.ModelProto
        Checked with :func:`onnx.checker.check_model`.
    """
    if output_dtype not in ("source", "float64"):
        raise ValueError(f"output_dtype must be 'source' or 'float64', got {output_dtype!r}.")
    proto = onnx.load(str(model.path))  # with its external data, if any
    opset = _check(model, plan, proto)
    source = onnx.compose.add_prefix(proto, PREFIX)
    notices = notices if notices is not None else []
    g = _Graph()
    grid, weights = plan.grid()
    m = len(weights)
    batch_dim: Any = getattr(model, "batch_size", None) or "batch"
    position = {i.index: k for k, i in enumerate(plan.integrated)}
    frozen = {f.index: f.value for f in plan.frozen}
    inputs, batch = [], None
    columns = _input_columns(model, plan)
    for t, _, kept in columns:
        if kept:
            dims = [batch_dim, *t.shape] if len(kept) == t.units else [batch_dim, len(kept)]
            elem = _FLOAT.get(t.dtype) or helper.np_dtype_to_tensor_dtype(np.dtype(t.dtype))
            inputs.append(_value_info(t.name, elem, dims))
            if batch is None:
                batch = g.op("Gather", [g.op("Shape", [t.name], "shape"), g.shape([0])], "batch", axis=0)
    assert batch is not None  # make_plan keeps at least one input
    rows = g.op("Mul", [batch, g.shape([m])], "rows") if m > 1 else batch

    def repeat(name: str, width: int) -> str:
        """(batch, width) rows, each repeated over the M points of the rule."""
        flat = g.op("Reshape", [name, g.shape([-1, width])], "flat")
        if m == 1:
            return flat
        wide = g.op("Expand", [g.op("Reshape", [flat, g.shape([-1, 1, width])], "r"), g.shape([1, m, 1])], "r")
        return g.op("Reshape", [wide, g.shape([-1, width])], "r")

    for t, start, kept in columns:
        if len(kept) == t.units:
            x = repeat(t.name, t.units)
        else:
            dtype = helper.tensor_dtype_to_np_dtype(_elem(t, model))
            parts = [repeat(t.name, len(kept))] if kept else []
            mine = [j for j in range(start, start + t.units) if j in position]
            fixed = [j for j in range(start, start + t.units) if j in frozen]
            if mine:
                z = grid[:, [position[j] for j in mine]].astype(dtype).reshape(1, m, len(mine))
                to = g.op("Concat", [batch, g.shape([1, 1])], "s", axis=0)
                wide = g.op("Expand", [g.const(z, "nodes"), to], "z")
                parts.append(g.op("Reshape", [wide, g.shape([-1, len(mine)])], "z"))
            if fixed:
                c = np.array([frozen[j] for j in fixed], dtype=dtype).reshape(1, len(fixed))
                to = g.op("Concat", [rows, g.shape([1])], "s", axis=0)
                parts.append(g.op("Expand", [g.const(c, "values"), to], "c"))
            order = [*kept, *mine, *fixed]
            perm = np.array([order.index(j) for j in range(start, start + t.units)], dtype=np.int64)
            joined = parts[0] if len(parts) == 1 else g.op("Concat", parts, "cols", axis=1)
            x = g.op("Gather", [joined, g.const(perm, "perm")], "cols", axis=1)
        g.op("Reshape", [x, g.shape([-1, *t.shape])], "in", output=PREFIX + t.name)
    pre = list(g.nodes)
    g.nodes.clear()
    outputs = _outputs(g, model, proto, weights, output_dtype, notices)
    graph = helper.make_graph(
        [*pre, *source.graph.node, *g.nodes],
        "netdim_simplified",
        inputs,
        outputs,
        initializer=[*g.inits, *source.graph.initializer],
        value_info=list(source.graph.value_info),
    )
    graph.sparse_initializer.extend(source.graph.sparse_initializer)
    if proto.ir_version < 4:  # initializers were graph inputs then
        names = {i.name for i in source.graph.initializer}
        graph.input.extend(i for i in source.graph.input if i.name in names)
    out = helper.make_model(graph, opset_imports=list(proto.opset_import), ir_version=proto.ir_version)
    out.functions.extend(source.functions)
    out.producer_name, out.producer_version = "netdim", str(plan.metadata()["version"])
    out.doc_string = _doc(plan)
    _metadata(out, plan)
    try:
        onnx.checker.check_model(out)
    except onnx.checker.ValidationError as exc:  # a wrapper the checker refuses is netdim's bug
        raise RuntimeError(f"the simplified ONNX graph does not pass onnx.checker (opset {opset}): {exc}") from exc
    return out


def _outputs(
    g: _Graph, model: Any, proto: onnx.ModelProto, weights: np.ndarray, output_dtype: str, notices: list[str]
) -> list[onnx.ValueInfoProto]:
    """The graph's outputs: each source output summed over the rule, or every output passed on when M = 1."""
    m = len(weights)
    if m == 1:
        outs = []
        for o in proto.graph.output:
            g.op("Identity", [PREFIX + o.name], "y", output=o.name)
            outs.append(o)
        return outs
    axes = getattr(model, "_output_axes", [None] * len(model.outputs))
    w = g.const(weights.reshape(1, m).astype(np.float64), "weights")
    kept = {t.name for t in model.outputs}
    left = [o.name for o in proto.graph.output if o.name not in kept]
    if left:
        notices.append(
            f"Outputs that hold no real numbers are left out of the pre-integrated model: {', '.join(left)} "
            "(an average of labels or maps means nothing)."
        )
    outs = []
    for t, axis in zip(model.outputs, axes, strict=True):
        if axis is not None and axis.moved:
            raise UserError(
                f"The output '{t.name}' of '{model.source}' holds its rows along axis {axis.axis}, not the first; "
                "netdim sums pre-integrated outputs over rows first. Re-export the model with the batch axis first."
            )
        elem = _FLOAT.get(t.dtype, TensorProto.FLOAT)
        y = g.op("Reshape", [PREFIX + t.name, g.shape([-1, m, t.units])], "y")
        if elem != TensorProto.DOUBLE:
            y = g.op("Cast", [y], "y", to=TensorProto.DOUBLE)
        mean = g.op("MatMul", [w, y], "mean")
        target = TensorProto.DOUBLE if output_dtype == "float64" else elem
        if target == TensorProto.DOUBLE:
            g.op("Reshape", [mean, g.shape([-1, *t.shape])], "y", output=t.name)
        else:
            mean = g.op("Reshape", [mean, g.shape([-1, *t.shape])], "y")
            g.op("Cast", [mean], "y", output=t.name, to=target)
        outs.append(_value_info(t.name, target, ["batch", *t.shape]))
    return outs


def _doc(plan: ExportPlan) -> str:
    parts = [f"{i.feature} integrated out ({i.count} Gauss nodes, {i.law.describe()})" for i in plan.integrated]
    parts += [f"{f.feature} frozen at {f.value:.9g} ({f.chosen})" for f in plan.frozen]
    return f"netdim simplified model of {plan.source.get('path', '')}: " + "; ".join(parts) + "."


def _metadata(out: onnx.ModelProto, plan: ExportPlan) -> None:
    meta = plan.metadata()
    helper.set_model_props(
        out,
        {
            "netdim.kind": meta["kind"],
            "netdim.version": meta["version"],
            "netdim.source": str(meta["source"].get("path", "")),
            "netdim.source_sha256": str(meta["source"].get("sha256", "")),
            "netdim.inputs": ",".join(plan.kept_names),
            "netdim.plan": json.dumps(meta, default=float),
        },
    )


def write_onnx(model: Any, plan: ExportPlan, path: str | Path, output_dtype: str = "source") -> list[str]:
    """Build the simplified model's graph (:func:`build_onnx`), save it to ``path``; return the notices."""
    notices: list[str] = []
    out = build_onnx(model, plan, output_dtype, notices)
    onnx.save(out, str(path))
    return notices
