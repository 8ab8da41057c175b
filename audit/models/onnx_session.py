"""onnxruntime sessions for ONNX models: options, loading errors in words, and tensor types.

:func:`session` builds a CPU session (warnings off, one thread per core) and turns
every failure of onnxruntime to load a model into a :class:`~audit.errors.UserError`
saying why and what to do; :data:`INPUT_TYPES` names the input types rows can be
fed as.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import onnxruntime as ort

from ..errors import UserError

__all__ = ["INPUT_TYPES", "kind_of", "session", "session_options", "static_dims"]

# onnxruntime input types rows can be fed as, and their numpy dtype names.
INPUT_TYPES = {
    f"tensor({kind})": name
    for kind, name in (
        ("float", "float32"), ("double", "float64"), ("float16", "float16"), ("bool", "bool"),
        ("int8", "int8"), ("int16", "int16"), ("int32", "int32"), ("int64", "int64"),
        ("uint8", "uint8"), ("uint16", "uint16"), ("uint32", "uint32"), ("uint64", "uint64"),
    )
}  # fmt: skip


def session_options(spinning: bool = True, threads: int | None = None) -> ort.SessionOptions:
    """One thread per core (or ``threads``); errors only in the log; ``spinning=False``: idle threads sleep at once."""
    options = ort.SessionOptions()
    options.intra_op_num_threads = threads or os.cpu_count() or 1
    options.log_severity_level = 3  # errors only: no warnings on the user's terminal
    if not spinning:
        options.add_session_config_entry("session.intra_op.allow_spinning", "0")
    return options


def session(model: str | bytes, where: Path, spinning: bool = True, threads: int | None = None) -> ort.InferenceSession:
    """An onnxruntime CPU session of ``model``; its errors become one-paragraph :class:`UserError`s.

    ``spinning=False`` for sessions that capture hidden layers: their large blocks are summed
    on a helper thread beside the inference, and threads that spin while waiting take its core
    (measured 5-12 % faster all-layer audits of a 64-256-256-10 MLP on 2 cores). ``threads``:
    intra-op threads (default one per core), fewer for sessions that run several calls at once.
    """
    try:
        options = session_options(spinning, threads)
        return ort.InferenceSession(model, sess_options=options, providers=["CPUExecutionProvider"])
    except Exception as exc:  # onnxruntime raises its own classes (Fail, InvalidGraph, ...)
        kind = type(exc).__name__
        text = str(exc)
        unsupported = ("not a registered function/op", "Could not find an implementation")
        if kind == "NotImplemented" or any(marker in text for marker in unsupported):
            why = f"it uses an operator (or operator version) that onnxruntime {ort.__version__} cannot run on the CPU"
            fix = "re-export the model with a supported opset or without custom operators"
        elif kind in ("InvalidProtobuf", "InvalidGraph", "Fail", "InvalidArgument"):
            why = "onnxruntime found it invalid or damaged"
            fix = "export or copy the model again and check it with onnx.checker"
        else:
            why = "onnxruntime could not load it"
            fix = "export or copy the model again"
        first_line = text.strip().splitlines()[0] if text.strip() else kind
        raise UserError(f"The ONNX model '{where}' cannot be used: {why} ({first_line}). To fix: {fix}.") from exc


def static_dims(dims: Sequence[object]) -> tuple[int, ...] | None:
    """Non-batch dims as ints, or None if any is symbolic or unknown."""
    out = []
    for dim in dims:
        if not isinstance(dim, int) or dim < 0:
            return None
        out.append(dim)
    return tuple(out)


def kind_of(ort_type: str) -> str:
    """What a non-tensor output holds, in words."""
    if ort_type.startswith("seq(map"):
        return "a sequence of maps"
    if ort_type.startswith("map"):
        return "a map"
    return "a sequence" if ort_type.startswith("seq") else ort_type
