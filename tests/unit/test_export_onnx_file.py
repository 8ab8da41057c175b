"""The ONNX wrapper graph: checked by onnx, metadata, several input tensors, and what it refuses.

References: ONNX operator specifications (the ONNX project); the model built
here with two input tensors is made with onnx.helper for the test.
"""

import json
from pathlib import Path

import numpy as np
import onnx
import onnxruntime as ort
import pytest
from onnx import TensorProto, helper

from audit.errors import UserError
from audit.export import ReducedModel, make_plan
from audit.export.onnx_file import build_onnx, write_onnx
from audit.inputs import Law, load_spec
from audit.models.open import open_model

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def two_tensor_model(path: Path, opset: int = 17) -> Path:
    """y = sum(a) * b[0] + b[1] for a (batch, 2, 2) and b (batch, 2)."""
    nodes = [
        helper.make_node("ReduceSum", ["a", "axes"], ["s"], keepdims=0),
        helper.make_node("Gather", ["b", "i0"], ["b0"], axis=1),
        helper.make_node("Gather", ["b", "i1"], ["b1"], axis=1),
        helper.make_node("Mul", ["s", "b0"], ["p"]),
        helper.make_node("Add", ["p", "b1"], ["y"]),
    ]
    inits = [
        helper.make_tensor("axes", TensorProto.INT64, [2], [1, 2]),
        helper.make_tensor("i0", TensorProto.INT64, [], [0]),
        helper.make_tensor("i1", TensorProto.INT64, [], [1]),
    ]
    graph = helper.make_graph(
        nodes, "two", [helper.make_tensor_value_info("a", TensorProto.FLOAT, ["n", 2, 2]),
                       helper.make_tensor_value_info("b", TensorProto.FLOAT, ["n", 2])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["n"])], initializer=inits,
    )  # fmt: skip
    onnx.save(helper.make_model(graph, opset_imports=[helper.make_opsetid("", opset)]), str(path))
    return path


def test_greenhouse_graph_passes_the_full_check_and_records_the_plan(tmp_path):
    spec = load_spec(ZOO / "greenhouse_v1.toml")
    model = open_model(str(ZOO / "greenhouse_v1.onnx"))
    plan = make_plan(model, spec.names, spec.laws, integrate={1: 6, 3: 3}, freeze={7: 4.0})
    proto = build_onnx(model, plan)
    onnx.checker.check_model(proto, full_check=True)
    meta = {p.key: p.value for p in proto.metadata_props}
    assert meta["netdim.kind"] == "preintegrated+frozen" and len(meta["netdim.source_sha256"]) == 64
    assert json.loads(meta["netdim.plan"])["evaluations_per_row"] == 18
    assert [i.name for i in proto.graph.input] == ["x"] and [o.name for o in proto.graph.output] == ["y"]


def test_several_input_tensors_keep_their_names(tmp_path):
    source = open_model(str(two_tensor_model(tmp_path / "two.onnx")))
    laws = [Law("normal")] * 6
    names = source.feature_names()  # a[0,0] a[0,1] a[1,0] a[1,1] b[0] b[1]
    plan = make_plan(source, names, laws, integrate={2: 3}, freeze={5: 0.25})
    out = tmp_path / "two-simplified.onnx"
    write_onnx(source, plan, out)
    session = ort.InferenceSession(str(out))
    assert [(i.name, i.shape) for i in session.get_inputs()] == [("a", ["batch", 3]), ("b", ["batch", 1])]
    x = np.random.default_rng(2).normal(size=(7, 4))
    y = session.run(None, {"a": x[:, :3].astype(np.float32), "b": x[:, 3:].astype(np.float32)})[0]
    assert np.allclose(y, ReducedModel(source, plan).evaluate(x).outputs[:, 0], rtol=1e-6, atol=1e-6)


def test_old_opsets_and_integer_inputs_are_refused(tmp_path):
    source = open_model(str(two_tensor_model(tmp_path / "two.onnx")))
    plan = make_plan(source, source.feature_names(), [Law("normal")] * 6, freeze={0: 1.0})
    source.inputs[0] = type(source.inputs[0])("a", (2, 2), "int64")  # as if the tensor held integers
    with pytest.raises(UserError, match="int64"):
        build_onnx(source, plan)
    old = open_model(str(ZOO / "greenhouse_v1.onnx"))
    proto = onnx.load(str(ZOO / "greenhouse_v1.onnx"))
    proto.opset_import[0].version = 7
    onnx.save(proto, str(tmp_path / "old.onnx"))
    old.path = tmp_path / "old.onnx"
    spec = load_spec(ZOO / "greenhouse_v1.toml")
    with pytest.raises(UserError, match="opset 7"):
        build_onnx(old, make_plan(old, spec.names, spec.laws, freeze={0: 1.0}))
