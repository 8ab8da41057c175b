"""Arrays lent between the tasks of one thread (audit.buffers) change no number and are never shared in a task.

References: the same audit or comparison run inline, where nothing is lent (common
practice, no source), and a model compared with itself, whose every change is exactly zero.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

import audit
from audit import buffers

ZOO = os.path.join(os.path.dirname(audit.__file__), os.pardir, "model_zoo")
GREENHOUSE = os.path.join(ZOO, "greenhouse_v1.onnx")
RETRAINED = os.path.join(ZOO, "greenhouse_v2.onnx")  # the same layers and shapes, other weights


def test_outside_lending_every_array_is_new() -> None:
    a, b = buffers.take((4, 3), np.float32), buffers.take((4, 3), np.float32)
    assert not np.shares_memory(a, b)


def test_a_task_gets_an_array_per_call_and_the_next_task_the_same_memory() -> None:
    with buffers.lending():
        a = buffers.take((8, 5), np.float32)
        b = buffers.take((8, 5), np.float32)
        assert not np.shares_memory(a, b)
        first = (a.ctypes.data, b.ctypes.data)
    with buffers.lending():
        c = buffers.take((8, 5), np.float32)
        d = buffers.take((4, 5), np.float64)  # another type, fewer rows: still fits the kept memory
        e = buffers.take((100, 5), np.float32)  # a new third slot
        assert (c.ctypes.data, d.ctypes.data) == first
        assert c.shape == (8, 5) and d.shape == (4, 5) and d.dtype == np.float64 and e.shape == (100, 5)
        assert d.ctypes.data % np.dtype(np.float64).alignment == 0
    with buffers.lending():
        f = buffers.take((800, 5), np.float32)  # larger than the kept slot: new memory
        assert f.shape == (800, 5) and f.nbytes == 800 * 5 * 4
    g = buffers.take((8, 5), np.float32)  # after lending: new again
    assert not np.shares_memory(g, f)


@pytest.fixture
def side_by_side(monkeypatch):
    """Two tasks side by side on ONNX twins, and chunks of 64 rows, so that each thread's tasks reuse arrays."""
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 0)
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    monkeypatch.setattr("audit.models.onnx.CALL_ROWS", 64)
    lent = []
    take = buffers.take

    def spy(shape, dtype):
        array = take(shape, dtype)
        lent.append(array.ctypes.data)
        return array

    monkeypatch.setattr("audit.models.onnx_chunks.take", spy)  # a block evaluated whole
    monkeypatch.setattr("audit.streaming.take", spy)  # the outputs of a block summed call by call
    return lent


def test_an_audit_with_lent_arrays_equals_the_inline_one(monkeypatch, side_by_side) -> None:
    model = audit.open_model(GREENHOUSE)
    kwargs = dict(points=256, replicates=4, seed=3, layers="all", block=32)
    both = audit.audit_model(model, "uniform", **kwargs)
    assert len(side_by_side) > len(set(side_by_side)), "later tasks reused the arrays of earlier ones"
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 1 << 62)
    inline = audit.audit_model(audit.open_model(GREENHOUSE), "uniform", **kwargs)
    a, b = inline.to_dict(), both.to_dict()
    assert b["layers"], "the audit captured hidden layers"
    assert a["outputs"] == b["outputs"] and a["layers"] == b["layers"]


def test_a_model_compared_with_itself_side_by_side_changes_nothing(side_by_side) -> None:
    model = audit.open_model(GREENHOUSE)
    result = audit.compare_models(model, model, "uniform", points=256, replicates=4, seed=3, layers="all", block=32)
    assert len(side_by_side) > len(set(side_by_side))
    data = result.to_dict()
    assert data["layers"], "layers were compared"
    for entry in data["outputs"] + data["layers"]:  # both sides the same numbers, every change exactly zero
        assert entry["old"] == entry["new"], entry["name"]
        changes = [v["estimate"] for k, v in entry.items() if k.endswith("_change") and isinstance(v, dict)]
        assert changes and all(c == 0.0 for c in changes), entry["name"]


def test_two_models_of_the_same_shapes_in_one_task_keep_their_own_arrays(monkeypatch, side_by_side) -> None:
    """Old and new tensors of the same shapes in one task: each its own lent array, so the
    comparison equals the inline one (one shared array would give both sides the new values)."""
    kwargs = dict(points=256, replicates=4, seed=3, layers="all", block=32)
    lent = audit.compare_models(audit.open_model(GREENHOUSE), audit.open_model(RETRAINED), "uniform", **kwargs)
    assert len(side_by_side) > len(set(side_by_side))
    monkeypatch.setattr("audit.engine.OVERLAP_VALUES", 1 << 62)
    inline = audit.compare_models(audit.open_model(GREENHOUSE), audit.open_model(RETRAINED), "uniform", **kwargs)
    a, b = inline.to_dict(), lent.to_dict()
    assert b["layers"] and a["outputs"] == b["outputs"] and a["layers"] == b["layers"]
    assert any(e["old"] != e["new"] for e in b["layers"]), "the two models differ"
