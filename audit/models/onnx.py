"""ONNX models run with onnxruntime on the CPU.

The model has one or more input tensors of floats, integers or booleans that
share a first (batch) axis; the features are their elements, tensor after
tensor in the graph's input order. Symbolic non-batch dimensions are fixed by
``input_shape``. Outputs that hold no real numbers (an integer class label, a
``ZipMap`` sequence of maps) are left out with a notice.

Layers are named by the module path of their origin (:mod:`.onnx_layers`,
:mod:`.graph`) and exposed by adding their tensors as extra graph outputs
(:mod:`.onnx_graph`; the file itself is never re-exported or rewritten); the
extended session is built lazily, once per distinct set of captured tensors,
and cached.

Which axis of every output and hidden tensor holds the rows is established by
evaluating a probe in two batches (:mod:`.batch`; 2 and 5 rows, or two batches
of a fixed batch size): a tensor with its rows along another axis is read with
them moved first; a hidden tensor whose rows cannot be found is left out with a
notice; such an output, an output of one value per batch, or a model whose rows
depend on the rest of the batch is refused.

A model exported with a fixed batch size B is fed in chunks of B rows (the
last chunk padded by repeating its last row; padding is dropped from the
results). Outputs and hidden tensors keep the dtype onnxruntime returns.
"""

from __future__ import annotations

import copy
import os
import threading
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import onnxruntime as ort

from ..errors import UserError, suggest
from .base import Evaluation, LayerInfo, TensorInfo, check_rows, element_names, feature_count
from .batch import BatchAxis, Refusal, establish, make_probe
from .graph import name_layers
from .onnx_chunks import run_in_place
from .onnx_graph import check_external_data, check_file, load_proto, may_hold_external_data, value_info, with_outputs
from .onnx_session import INPUT_TYPES, kind_of, static_dims
from .onnx_session import session as make_session
from .patterns import fuse
from .tensors import (
    InputShape,
    Skipped,
    check_features,
    empty_evaluation,
    gather,
    input_shapes,
    left_out_notice,
    moved_notice,
    no_output_error,
    output_notice,
    read_rows,
    refused_output,
    split_features,
)

__all__ = ["CALL_ROWS", "TWIN_BYTES", "OnnxModel"]

#: Rows per onnxruntime call (and per call from the engine, :attr:`OnnxModel.call_rows`).
#: On 2 cores, two one-thread sessions side by side, per row: a 64-256-256-10 MLP's outputs
#: ran 0.95x one two-thread session's time in calls of 1024 rows, 1.27x in calls of 8192
#: (tensors of 8192 rows leave the cache); the digits CNN 0.97x and 1.13x; MLPs 784-512-512-10
#: and 20-1024-1024-1024-5 were within 10 % of their best at 512-1024 rows, 30-40 % slower at 8192.
CALL_ROWS = 1024


#: Guards the sessions made lazily (extended graphs, :meth:`OnnxModel.concurrent`).
_SESSIONS_LOCK = threading.RLock()
#: Largest model file given a twin for concurrent calls (its sessions copy the weights once more).
TWIN_BYTES = 256 << 20


class OnnxModel:
    """An ONNX file seen through the :class:`~audit.models.base.Model` interface.

    Parameters
    ----------
    path : str or Path
        The ``.onnx`` file. External data files must sit in its folder.
    input_shape : tuple of int or dict of str to tuple of int, optional
        Non-batch shapes of input tensors, needed only where the file leaves
        some non-batch input dimension symbolic: one shape for a model with
        one input, else ``{tensor name: shape}``.

    Attributes
    ----------
    inputs : list of TensorInfo
        The input tensors, in the graph's order.
    outputs : list of TensorInfo
        The float output tensors (others are left out, see ``notices``), with
        their non-batch shapes once the rows come first.
    notices : list of str
        Remarks for the user (outputs left out, a batch size fixed at 1,
        hidden tensors left out).
    batch_size : int or None
        The fixed batch size of the model, or None for a dynamic batch axis.
    """

    format = "onnx"

    def __init__(self, path: str | os.PathLike[str], *, input_shape: InputShape | None = None):
        self.path = Path(path)
        self.source = str(path)
        self.notices: list[str] = []
        check_file(self.path)
        self._graph: Any = None
        self._has_external = may_hold_external_data(self.path) and check_external_data(self._proto, self.path)
        try:
            self._session = make_session(str(self.path), self.path)
        except UserError:
            load_proto(self.path)  # a file onnx cannot parse either is described in those words
            raise
        self._sessions: dict[tuple[str, ...], ort.InferenceSession] = {}
        self._threads: int | None = None  # intra-op threads of this model's sessions (None: one per core)
        self._twins: dict[int, OnnxModel] = {}
        self._layers: list[LayerInfo] | None = None
        self._found: dict[str, tuple[str, BatchAxis]] = {}
        self._read_inputs(input_shape)
        check_features(self.inputs, self.source)
        size = self.batch_size
        self._probe = make_probe(feature_count(self), size or 1, size)
        self._read_outputs()

    @property
    def _proto(self) -> Any:
        """The parsed graph (without external data), read on first use: outputs alone need only the session."""
        if self._graph is None:
            self._graph = load_proto(self.path)
        return self._graph

    # -- signature -----------------------------------------------------------------------
    def _read_inputs(self, input_shape: InputShape | None) -> None:
        metas = self._session.get_inputs()
        names = [meta.name for meta in metas]
        given = input_shapes(input_shape, names, self.source)
        batches: set[int] = set()
        self.inputs: list[TensorInfo] = []
        for meta in metas:
            if meta.type not in INPUT_TYPES:
                raise UserError(
                    f"The input '{meta.name}' of the ONNX model '{self.path}' has type {meta.type}; "
                    "netdim feeds real-valued features and supports float, double, float16, integer "
                    "and boolean inputs. Export the model with a numeric input (cast inside the model "
                    "if needed)."
                )
            if not meta.shape:
                raise UserError(
                    f"The input '{meta.name}' of the ONNX model '{self.path}' is a scalar; netdim "
                    "needs a batch axis first. Re-export the model with input shape (batch, ...)."
                )
            batch, *rest = meta.shape
            symbolic_later = any(not (isinstance(x, int) and x > 0) for x in rest)
            if isinstance(batch, int) and batch > 0 and symbolic_later and meta.name not in given:
                raise UserError(
                    f"The input '{meta.name}' of the ONNX model '{self.path}' has shape {meta.shape}: its first "
                    "axis is fixed and a later one is symbolic, as when the batch axis is not first (a "
                    "sequence-first RNN, batch_first=False). netdim feeds rows along the first axis: export the "
                    "model with the batch axis first (batch_first=True, or a wrapper that transposes its input "
                    "before the network), or give the shape of one row with `input_shape` if the first axis "
                    "really is a fixed batch."
                )
            if isinstance(batch, int) and batch > 0:
                batches.add(batch)
            self.inputs.append(TensorInfo(meta.name, self._shape(meta, rest, given, len(metas)),
                                          INPUT_TYPES[meta.type]))  # fmt: skip
        if len(batches) > 1:
            raise UserError(
                f"The input tensors of the ONNX model '{self.path}' have different fixed batch sizes "
                f"({', '.join(map(str, sorted(batches)))}); netdim feeds the same rows to every input. "
                "Re-export the model with one (preferably dynamic) batch axis."
            )
        self.batch_size: int | None = batches.pop() if batches else None
        if self.batch_size == 1:
            self.notices.append(
                f"The model '{self.path.name}' has a fixed batch size of 1, so netdim evaluates "
                "it one row at a time, which is slow. Re-export it with a dynamic batch axis."
            )
        self._input_names = names

    def _shape(
        self, meta: ort.NodeArg, rest: list[object], given: dict[str, tuple[int, ...]], count: int
    ) -> tuple[int, ...]:
        shape = static_dims(rest)
        wanted = given.get(meta.name)
        if wanted is not None:
            if shape is not None and wanted != shape:
                raise UserError(
                    f"The input shape {wanted} given for '{meta.name}' of '{self.path}' does not match "
                    f"the model's own input shape {shape}. Leave `input_shape` out for this model."
                )
            return wanted
        if shape is None:
            example = "`input_shape` 1,8,8" if count == 1 else f"input_shape={{'{meta.name}': (1, 8, 8), ...}}"
            raise UserError(
                f"The input '{meta.name}' of the ONNX model '{self.path}' has shape {meta.shape} "
                f"with symbolic non-batch dimensions. Give the shape of one input row, e.g. {example}."
            )
        return shape

    def _read_outputs(self) -> None:
        metas = self._session.get_outputs()
        skipped: list[Skipped] = [(o.name, kind_of(o.type)) for o in metas if not o.type.startswith("tensor(")]
        tensors = [o.name for o in metas if o.type.startswith("tensor(")]
        small, large, again = self._probe_all(self._session, tensors) if tensors else ([], [], [])
        self.outputs: list[TensorInfo] = []
        self._output_axes: list[BatchAxis] = []
        moved = []
        n = len(self._probe.large)
        for name, s, lg, a in zip(tensors, small, large, again, strict=True):
            if lg.dtype.kind != "f":
                meta = next(o for o in metas if o.name == name)
                skipped.append((name, str(lg.dtype) if lg.dtype.kind in "iub" else meta.type))
                continue
            axis = establish(s, lg, self._probe, a)
            if isinstance(axis, Refusal):
                raise refused_output(self.source, name, axis, self._probe)
            if axis.factor != 1:
                raise refused_output(self.source, name, Refusal("shape", f"its rows are merged with another "
                                     f"axis ({axis.describe()})"), self._probe)  # fmt: skip
            if axis.moved:
                moved.append((name, axis))
            self.outputs.append(TensorInfo(name, axis.shape(lg, n), str(lg.dtype)))
            self._output_axes.append(axis)
        order = [o.name for o in metas]
        skipped.sort(key=lambda item: order.index(item[0]))
        if not self.outputs:
            raise no_output_error(self.source, skipped)
        self.skipped_outputs = dict(skipped)  # name -> what it holds, for messages naming it
        if skipped:
            self.notices.append(output_notice(skipped))
        if moved:
            self.notices.append(moved_notice(moved))
        self._output_names = [o.name for o in self.outputs]

    def _probe_all(
        self, session: ort.InferenceSession, names: list[str]
    ) -> tuple[list[np.ndarray], list[np.ndarray], list[np.ndarray]]:
        """Tensors ``names`` on the small probe batch, the large one, and the large one again."""
        probe = self._probe
        runs = [self._raw(session, names, x) for x in (probe.small, probe.large, probe.large)]
        return tuple([np.asarray(v) for v in run] for run in runs)  # type: ignore[return-value]

    @property
    def call_rows(self) -> int:
        """Rows the engine hands over per call: :data:`CALL_ROWS` (a multiple of a fixed batch size)."""
        b = self.batch_size
        return max(1, CALL_ROWS // b) * b if b else CALL_ROWS

    # -- names ---------------------------------------------------------------------------

    def feature_names(self) -> list[str]:
        return element_names(self.inputs)

    def output_names(self) -> list[str]:
        return element_names(self.outputs)

    # -- layers --------------------------------------------------------------------------

    def layers(self) -> list[LayerInfo]:
        """Float tensors computed from the inputs whose rows the probe finds, in graph order."""
        if self._layers is None:
            from .onnx_layers import graph_nodes

            nodes, returned = graph_nodes(self._proto, self._input_names, value_info(self._proto))
            named = name_layers(fuse(nodes, returned), returned)
            self._layers = []
            if named:
                self._discover([(layer.name, layer.key, layer.op, layer.activation) for layer in named])
        return list(self._layers)

    def _discover(self, named: list[tuple[str, str, str, bool]]) -> None:
        keys = tuple(dict.fromkeys(key for _, key, _, _ in named))
        try:
            small, large, again = self._probe_all(self._extended(keys), list(keys))
        except UserError as exc:
            self.notices.append(f"Hidden tensors could not be probed, so no layer is offered: {exc.message}")
            return
        finally:
            self._sessions.pop(tuple(sorted(keys)), None)
        values = {key: (s, lg, a) for key, s, lg, a in zip(keys, small, large, again, strict=True)}
        n = len(self._probe.large)
        refused = []
        assert self._layers is not None
        for name, key, op, activation in named:
            s, lg, a = values[key]
            if lg.dtype.kind != "f":
                continue
            axis = establish(s, lg, self._probe, a)
            if isinstance(axis, Refusal):
                if axis.kind != "constant":
                    refused.append((name, axis))
                continue
            self._found[name] = (key, axis)
            self._layers.append(LayerInfo(name, op, axis.shape(lg, n), activation, key))
        if refused:
            self.notices.append(left_out_notice(refused))

    def _extended(self, names: tuple[str, ...]) -> ort.InferenceSession:
        """A session whose graph also returns the tensors ``names`` (built once per set)."""
        key = tuple(sorted(names))
        with _SESSIONS_LOCK:  # calls from several threads (:meth:`concurrent`) make it once
            if key not in self._sessions:
                model = with_outputs(self._proto, key, self.path, self._has_external)
                self._sessions[key] = make_session(model, self.path, spinning=False, threads=self._threads)
            return self._sessions[key]

    def concurrent(self, calls: int) -> OnnxModel | None:
        """This model for ``calls`` evaluations at once, from as many threads (None: not worth it).

        Its sessions split the cores between the calls (``cores // calls`` intra-op
        threads each; onnxruntime runs one session's calls concurrently). On 2 cores two
        one-thread calls on two blocks ran 0.91-0.93x the time of one two-thread call after
        the other, and left the summing of hidden layers no core to wait for. Made once
        per ``calls`` and kept; the same layers, the same values. Its sessions hold a second
        copy of the weights, so models above :data:`TWIN_BYTES` (or with external data) get none.
        """
        calls = max(1, int(calls))
        if calls == 1:
            return self
        if self._has_external or self.path.stat().st_size > TWIN_BYTES:
            return None
        with _SESSIONS_LOCK:
            twin = self._twins.get(calls)
            if twin is None:
                twin = copy.copy(self)
                twin._threads = max(1, (os.cpu_count() or 1) // calls)
                twin._session = make_session(str(self.path), self.path, threads=twin._threads)
                twin._sessions, twin._twins = {}, {}
                self._twins[calls] = twin
        return twin

    # -- evaluation ----------------------------------------------------------------------

    def _failure(self, exc: Exception, n: int) -> UserError:
        first_line = str(exc).strip().splitlines()[0] if str(exc).strip() else ""
        shapes = ", ".join(f"{t.name} {t.shape}" for t in self.inputs)
        return UserError(
            f"The ONNX model '{self.path}' failed on a batch of {n} rows of input shape "
            f"{shapes} ({type(exc).__name__}: {first_line}). Check that the input shape is "
            "right (`input_shape`) and that the model runs in onnxruntime."
        )

    def _raw(self, session: ort.InferenceSession, names: list[str], x: np.ndarray) -> list[np.ndarray]:
        """Run ``session`` on one batch of rows ``x`` (n, d), as the graph returns the tensors."""
        feeds = split_features(x, self.inputs)
        try:
            return session.run(names, dict(zip(self._input_names, feeds, strict=True)))
        except Exception as exc:
            raise self._failure(exc, len(x)) from exc

    def _run(
        self,
        session: ort.InferenceSession,
        names: list[str],
        x: np.ndarray,
        axes: list[BatchAxis],
        units: list[tuple[str, int]],
    ) -> list[np.ndarray]:
        """Tensors ``names`` on rows ``x`` (n, d) as (n, units) rows, chunking for a fixed batch size.

        ``units`` gives each tensor's name for messages and its values per row. Rows are run
        in calls of at most :data:`CALL_ROWS`: outputs alone joined afterwards (their few
        values cost little to copy), hidden tensors written in place when every tensor has its
        rows along the first axis (else, and for a fixed batch size, as before).
        """
        n = len(x)
        hidden = len(names) > len(self._output_names)
        distinct = len(set(names)) == len(names)  # a tensor bound twice would fill one array only
        if hidden and distinct and not self.batch_size and n > CALL_ROWS and not any(a.moved for a in axes):
            values = run_in_place(
                session, self._input_names, lambda rows: split_features(rows, self.inputs), names, x, CALL_ROWS,
                lambda rows: self._raw(session, names, rows),
            )  # fmt: skip
            if values is not None:
                return [
                    read_rows(axis, v, n, size, label, self.source)
                    for axis, v, (label, size) in zip(axes, values, units, strict=True)
                ]  # fmt: skip
        batch = self.batch_size or (n if hidden else min(n, CALL_ROWS))
        parts: list[list[np.ndarray]] = []
        for start in range(0, n, batch):
            chunk = x[start : start + batch]
            real = len(chunk)
            if real < batch and self.batch_size:  # a fixed batch size: pad the last chunk
                chunk = np.concatenate([chunk, np.repeat(chunk[-1:], batch - real, axis=0)])
            values = self._raw(session, names, chunk)
            parts.append([
                read_rows(axis, v, len(chunk), size, label, self.source)[:real]
                for axis, v, (label, size) in zip(axes, values, units, strict=True)
            ])  # fmt: skip
        if len(parts) == 1:
            return parts[0]
        return [np.concatenate([p[i] for p in parts]) for i in range(len(names))]

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        """Evaluate rows ``x``.

        Parameters
        ----------
        x : ndarray, shape (n, d)
            Input rows, any float dtype; each tensor's columns are cast to its
            element type (integers: rounded to the nearest first).
        capture : sequence of str
            Names of layers (from :meth:`layers`) to return as well.

        Returns
        -------
        Evaluation
            Outputs (n, k) and the captured layers (n, units), in the dtypes
            onnxruntime returns.
        """
        x = check_rows(x, feature_count(self))
        n = len(x)
        capture = tuple(dict.fromkeys(capture))
        if capture:
            self._check_capture(capture)
        if n == 0:
            chosen = [la for la in self.layers() if la.name in capture]
            return empty_evaluation(self.outputs, chosen, self.outputs[0].dtype)
        keys = [self._found[name][0] for name in capture]
        session = self._extended(tuple(dict.fromkeys(keys))) if capture else self._session
        axes = [*self._output_axes, *(self._found[name][1] for name in capture)]
        sizes = [(t.name, t.units) for t in self.outputs]
        if capture:
            per_row = {la.name: la.units for la in self.layers()}
            sizes += [(name, per_row[name]) for name in capture]
        values = self._run(session, [*self._output_names, *keys], x, axes, sizes)
        k = len(self._output_names)
        hidden = dict(zip(capture, values[k:], strict=True))
        return Evaluation(outputs=gather(values[:k], n), hidden=hidden)

    def _check_capture(self, capture: Sequence[str]) -> None:
        known = {layer.name for layer in self.layers()}
        for name in capture:
            if name not in known:
                raise UserError(
                    f"The ONNX model '{self.path.name}' has no probe-able layer '{name}'."
                    + suggest(name, known)
                    + f" Run 'netdim layers {self.source}' to list the layer names."
                )
