"""Hidden tensors of many rows run in chunks and written in place (audit.models.onnx_chunks).

The reference is onnxruntime itself: the same graph run on all the rows in one call
(common practice, no source). The chunks must give those values, in the tensors'
own element types, for one input tensor or several; tensors whose rows are not on
their first axis, and chunks whose tensors change shape, go the ordinary way.
"""

from __future__ import annotations

from pathlib import Path

import netbuild
import numpy as np
import onnxruntime as ort
import pytest
from onnx import TensorProto, helper

from audit.models import feature_count
from audit.models.onnx import OnnxModel
from audit.models.onnx_chunks import run_in_place

ROWS = 37  # 4 chunks of 8 rows and one of 5


def _chunked(model: OnnxModel, x: np.ndarray, capture: list[str], monkeypatch) -> tuple[object, list[int]]:
    monkeypatch.setattr("audit.models.onnx.CALL_ROWS", 8)
    calls: list[int] = []
    run = model._raw
    monkeypatch.setattr(model, "_raw", lambda s, names, rows: calls.append(len(rows)) or run(s, names, rows))
    result = model.evaluate(x, capture)
    monkeypatch.undo()
    return result, calls


def _same(a, b) -> None:
    assert a.outputs.dtype == b.outputs.dtype
    np.testing.assert_allclose(a.outputs, b.outputs, rtol=1e-6, atol=1e-7)
    assert a.hidden.keys() == b.hidden.keys()
    for name in a.hidden:
        assert a.hidden[name].dtype == b.hidden[name].dtype, name
        np.testing.assert_allclose(a.hidden[name], b.hidden[name], rtol=1e-6, atol=1e-7, err_msg=name)


def test_every_layer_of_a_graph_in_chunks_gives_the_values_of_one_call(monkeypatch, tmp_path: Path) -> None:
    model = OnnxModel(netbuild.ops_graph(tmp_path / "ops.onnx"))
    x = np.random.default_rng(1).normal(size=(ROWS, feature_count(model))).astype(np.float32)
    names = [la.name for la in model.layers()]
    whole = model.evaluate(x, names)
    chunked, calls = _chunked(model, x, names, monkeypatch)
    assert calls == [8]  # the first chunk as usual; the others bound in place
    _same(chunked, whole)
    assert all(v.shape[0] == ROWS and v.flags.c_contiguous for v in chunked.hidden.values())


@pytest.mark.parametrize("elem_type", [TensorProto.DOUBLE, TensorProto.FLOAT16])
def test_chunks_keep_the_element_type_of_each_tensor(elem_type: int, monkeypatch, tmp_path: Path) -> None:
    model = OnnxModel(netbuild.typed_graph(tmp_path / "typed.onnx", elem_type))
    x = np.random.default_rng(2).normal(size=(ROWS, 3))
    names = [la.name for la in model.layers()]
    assert names, "the typed graph has a hidden Relu"
    whole = model.evaluate(x, names)
    chunked, calls = _chunked(model, x, names, monkeypatch)
    assert calls == [8]
    _same(chunked, whole)


def test_several_input_tensors_are_bound_chunk_by_chunk(monkeypatch, tmp_path: Path) -> None:
    graph = helper.make_graph(
        [helper.make_node("Add", ["a", "b"], ["s"]), helper.make_node("Tanh", ["s"], ["t"]),
         helper.make_node("Neg", ["t"], ["y"])],
        "two_inputs",
        [helper.make_tensor_value_info("a", TensorProto.FLOAT, ["N", 3]),
         helper.make_tensor_value_info("b", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
    )  # fmt: skip
    model = OnnxModel(netbuild.save_onnx(graph, tmp_path / "two.onnx"))
    x = np.random.default_rng(3).normal(size=(ROWS, 6))
    names = [la.name for la in model.layers()]
    whole = model.evaluate(x, names)
    chunked, calls = _chunked(model, x, names, monkeypatch)
    assert calls == [8]
    _same(chunked, whole)
    a, b = x[:, :3], x[:, 3:]  # the exact answer, by numpy
    np.testing.assert_allclose(chunked.outputs, -np.tanh(a + b), rtol=1e-6)


def test_tensors_with_their_rows_elsewhere_run_the_ordinary_way(monkeypatch, tmp_path: Path) -> None:
    model = OnnxModel(netbuild.rows_last_graph(tmp_path / "rows_last.onnx"))
    x = np.random.default_rng(4).normal(size=(ROWS, 3))
    names = [la.name for la in model.layers()]
    whole = model.evaluate(x, names)
    chunked, calls = _chunked(model, x, names, monkeypatch)
    assert calls == [ROWS]
    _same(chunked, whole)


class _FailingBinding:
    def bind_cpu_input(self, *args) -> None: ...

    def bind_output(self, *args) -> None: ...


class _FailingSession:
    """A session whose bound calls fail, so that every chunk after the first goes to ``run``."""

    def io_binding(self) -> _FailingBinding:
        return _FailingBinding()

    def run_with_iobinding(self, binding) -> None:
        raise RuntimeError("bound call failed")


def test_a_failed_bound_call_is_run_again_and_a_changed_shape_is_handed_back() -> None:
    x = np.arange(20.0).reshape(10, 2)
    same = run_in_place(_FailingSession(), ["x"], lambda r: [r], ["y"], x, 4, lambda r: [2 * r])
    assert same is not None
    np.testing.assert_array_equal(same[0], 2 * x)
    widths = iter([2, 3, 3])
    changed = run_in_place(_FailingSession(), ["x"], lambda r: [r], ["y"], x, 4,
                           lambda r: [np.zeros((len(r), next(widths)))])  # fmt: skip
    assert changed is None


def test_a_real_session_fills_every_row(tmp_path: Path) -> None:
    path = netbuild.linear_graph(tmp_path / "linear.onnx")
    session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
    x = np.random.default_rng(5).normal(size=(ROWS, 3)).astype(np.float32)
    out = run_in_place(session, ["x"], lambda r: [np.ascontiguousarray(r)], ["y"], x, 8,
                       lambda r: session.run(["y"], {"x": r}))  # fmt: skip
    a = np.arange(1, 7, dtype=np.float32).reshape(3, 2)  # the graph's own algebra: y = x A + c
    np.testing.assert_allclose(out[0], x @ a + np.array([0.5, -1.0], np.float32), rtol=1e-5, atol=1e-5)
