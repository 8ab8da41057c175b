"""ONNX backend: loading, layer discovery, evaluation against numpy, batching, refusals.

Reference values come from independent numpy code written from the ONNX
operator definitions (ONNX Operators specification, onnx.ai, opset 17) or from
the Torch network the file was exported from; nothing is copied from netdim's
own output. Bad files are built here (common practice, no source): the
assertions check the error type and the words a user needs to fix the problem.
"""

from __future__ import annotations

import io
from pathlib import Path

import netbuild
import numpy as np
import onnxruntime as ort
import pytest
import torch
from onnx import TensorProto, helper, numpy_helper
from rich.console import Console

from audit.errors import UserError
from audit.models import Model, OnnxModel, feature_count, open_model, row_dtype
from audit.report.signature import render_signature
from audit.studies import model_signature

RNG = np.random.default_rng(20240611)


@pytest.fixture(scope="module")
def ops_model(tmp_path_factory: pytest.TempPathFactory) -> OnnxModel:
    path = netbuild.ops_graph(tmp_path_factory.mktemp("ops") / "ops.onnx")
    return OnnxModel(path)


@pytest.fixture(scope="module")
def cnn_files(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict]:
    net = netbuild.seeded(netbuild.TinyCNN, seed=3)
    folder = tmp_path_factory.mktemp("cnn")
    return net, netbuild.export_all(net, torch.zeros(4, 1, 8, 8), folder, "cnn")


def test_ops_graph_signature(ops_model: OnnxModel) -> None:
    assert isinstance(ops_model, Model)
    assert ops_model.format == "onnx"
    assert ops_model.inputs[0].shape == (1, 4, 4) and ops_model.inputs[0].units == 16
    assert ops_model.batch_size is None
    assert [o.name for o in ops_model.outputs] == ["y"]
    assert ops_model.output_names() == ["y[0]", "y[1]", "y[2]"]
    assert ops_model.feature_names()[:2] == ["x[0,0,0]", "x[0,0,1]"]
    assert ops_model.feature_names()[-1] == "x[0,3,3]"


def test_ops_graph_matches_numpy(ops_model: OnnxModel) -> None:
    # reference: numpy re-implementation of the ONNX operator definitions (onnx.ai operator docs)
    x = RNG.normal(size=(37, 16))
    names = [layer.name for layer in ops_model.layers()]
    ev = ops_model.evaluate(x, capture=names)
    ref = netbuild.ops_reference(x)
    assert ev.outputs.dtype == np.float32 and ev.outputs.shape == (37, 3)  # the runtime's own dtype
    # float32 model against float64 numpy: agreement to float32 rounding
    np.testing.assert_allclose(ev.outputs, ref["y"], rtol=1e-5, atol=1e-6)
    for name in names:
        assert ev.hidden[name].dtype == np.float32
        np.testing.assert_allclose(ev.hidden[name], ref[name], rtol=1e-4, atol=1e-5)


def test_capture_subsets_are_cached_and_independent(ops_model: OnnxModel) -> None:
    x = RNG.normal(size=(5, 16))
    a = ops_model.evaluate(x, capture=["tanh"])
    b = ops_model.evaluate(x, capture=["erf", "tanh"])
    c = ops_model.evaluate(x, capture=["tanh", "erf"])
    plain = ops_model.evaluate(x)
    assert set(a.hidden) == {"tanh"} and set(b.hidden) == {"erf", "tanh"}
    assert plain.hidden == {}
    np.testing.assert_array_equal(a.hidden["tanh"], b.hidden["tanh"])
    np.testing.assert_array_equal(b.outputs, plain.outputs)
    # the same set in another order reuses one session
    assert len([k for k in ops_model._sessions if set(k) == {"erf", "tanh"}]) == 1
    np.testing.assert_array_equal(b.hidden["erf"], c.hidden["erf"])


def test_unknown_capture_name_suggests(ops_model: OnnxModel) -> None:
    with pytest.raises(UserError, match=r"no probe-able layer 'tahn'.*Did you mean 'tanh'"):
        ops_model.evaluate(np.zeros((2, 16)), capture=["tahn"])


def test_wrong_row_width_is_a_programming_error(ops_model: OnnxModel) -> None:
    with pytest.raises(ValueError, match=r"shape \(n, 16\)"):
        ops_model.evaluate(np.zeros((2, 15)))


@pytest.mark.parametrize("batch", [4, 1])
def test_fixed_batch_chunks(tmp_path, batch: int) -> None:
    dynamic = OnnxModel(netbuild.linear_graph(tmp_path / "dyn.onnx"))
    fixed = OnnxModel(netbuild.linear_graph(tmp_path / "fixed.onnx", batch=batch))
    assert fixed.batch_size == batch and dynamic.batch_size is None
    x = RNG.normal(size=(10, 3))  # 10 is not a multiple of 4: the last chunk is padded
    # reference: y = x A + c with the graph's A and c (netbuild.linear_graph)
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    ref = x @ a + np.array([0.5, -1.0])
    for model in (dynamic, fixed):
        ev = model.evaluate(x, capture=["h"])
        assert ev.outputs.shape == (10, 2)
        np.testing.assert_allclose(ev.outputs, ref, rtol=1e-5, atol=1e-5)
        np.testing.assert_allclose(ev.hidden["h"], x @ a, rtol=1e-5, atol=1e-5)
    if batch == 1:
        assert any("batch size of 1" in note for note in fixed.notices)
    else:
        assert fixed.notices == []
        assert len(fixed.evaluate(x[:3]).outputs) == 3  # fewer rows than one chunk


def test_double_input_runs_in_double(tmp_path) -> None:
    model = OnnxModel(netbuild.linear_graph(tmp_path / "d.onnx", dtype=TensorProto.DOUBLE))
    assert model.inputs[0].dtype == "float64" and row_dtype(model) is np.float64
    x = RNG.normal(size=(4, 3))
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)
    np.testing.assert_allclose(model.evaluate(x).outputs, x @ a + [0.5, -1.0], rtol=1e-6)


def test_cnn_export_all_layers(cnn_files) -> None:
    net, paths = cnn_files
    model = open_model(str(paths["onnx"]))
    assert model.inputs[0].units == 64 and model.inputs[0].shape == (1, 8, 8)
    assert model.feature_names()[8 * 3 + 4] == "x[0,3,4]"
    layers = model.layers()
    ops = [layer.op for layer in layers]
    # shape arithmetic of h.reshape(h.shape[0], -1) is not offered
    assert not {"shape", "gather", "unsqueeze", "concat", "constant"} & set(ops)
    assert ops[:3] == ["conv", "relu", "maxpool"]
    assert [layer.name for layer in layers][:3] == ["conv", "act", "pool"]  # module paths
    x = RNG.normal(size=(9, 64))
    ev = model.evaluate(x, capture=[layer.name for layer in layers])
    xt = torch.from_numpy(x.astype(np.float32)).reshape(9, 1, 8, 8)
    with torch.no_grad():
        conv = net.conv(xt)
        ref = net(xt)
    np.testing.assert_allclose(ev.outputs, ref.numpy(), rtol=1e-5, atol=1e-6)
    np.testing.assert_allclose(ev.hidden["conv"], conv.reshape(9, -1), rtol=1e-5, atol=1e-5)
    relu = torch.relu(conv).reshape(9, -1).numpy()
    np.testing.assert_allclose(ev.hidden["act"], relu, rtol=1e-5, atol=1e-5)
    for layer in layers:
        assert ev.hidden[layer.name].shape == (9, layer.units)


def test_signature_plain_when_not_a_terminal(ops_model: OnnxModel) -> None:
    buffer = io.StringIO()
    render_signature(model_signature(ops_model), Console(file=buffer, width=200))
    text = buffer.getvalue()
    assert "d = 16" in text and "conv" in text and "(2, 4, 4)" in text
    assert max(len(line) for line in text.splitlines()) <= 80
    assert "\x1b[" not in text  # no escape codes
    assert "─" not in text and "│" not in text  # no borders
    assert all(line == line.rstrip() for line in text.splitlines())
    rows = [line.split() for line in text.splitlines() if line.startswith(("relu ", "gemm "))]
    assert rows == [["relu", "relu", "(2,", "4,", "4)", "32", "yes"],
                    ["gemm", "gemm", "(6,)", "6", "no"]]  # fmt: skip


def test_input_shape_override_checked(tmp_path) -> None:
    path = netbuild.linear_graph(tmp_path / "lin.onnx")
    assert OnnxModel(path, input_shape=(3,)).inputs[0].shape == (3,)
    with pytest.raises(UserError, match="does not match"):
        OnnxModel(path, input_shape=(4,))


# -- files and signatures netdim refuses ------------------------------------------------------


def test_unsupported_operator(tmp_path: Path) -> None:
    path = netbuild.unknown_op_graph(tmp_path / "custom.onnx")
    with pytest.raises(UserError, match=r"cannot be used.*operator.*Frobnicate"):
        open_model(str(path))


def test_symbolic_feature_dims_need_input_shape(tmp_path: Path) -> None:
    from onnx import helper

    graph = helper.make_graph(
        [helper.make_node("Relu", ["x"], ["y"])],
        "sym",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", "F"])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", "F"])],
    )
    path = netbuild.save_onnx(graph, tmp_path / "sym.onnx")
    with pytest.raises(UserError, match=r"`input_shape`"):
        open_model(str(path))
    assert open_model(str(path), input_shape=(4,)).inputs[0].units == 4


def test_string_input_refused(tmp_path: Path) -> None:
    path = netbuild.string_input_graph(tmp_path / "strings.onnx")
    with pytest.raises(UserError, match=r"'s'.*tensor\(string\).*float, double, float16, integer and boolean"):
        open_model(str(path))


def test_integer_input_is_rounded_then_cast(tmp_path: Path) -> None:
    model = OnnxModel(netbuild.linear_graph(tmp_path / "int.onnx", dtype=TensorProto.INT64))
    assert model.inputs[0].dtype == "int64" and row_dtype(model) is np.float64
    x = np.array([[0.4, 1.6, -2.5], [2.5, -0.6, 7.49]])
    rounded = np.array([[0, 2, -2], [2, -1, 7]])  # nearest integer, ties to even (numpy.rint)
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)  # netbuild.linear_graph's A and c
    np.testing.assert_allclose(model.evaluate(x).outputs, rounded @ a + [0.5, -1.0], rtol=1e-6)


# -- dtypes ------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("elem_type", "dtype"),
    [(TensorProto.FLOAT16, np.float16), (TensorProto.FLOAT, np.float32), (TensorProto.DOUBLE, np.float64)],
    ids=["float16", "float32", "float64"],
)
def test_outputs_and_hidden_keep_the_runtime_dtype(tmp_path: Path, elem_type: int, dtype: type) -> None:
    model = OnnxModel(netbuild.typed_graph(tmp_path / "typed.onnx", elem_type))
    assert model.outputs[0].dtype == np.dtype(dtype).name
    assert row_dtype(model) is (np.float64 if dtype is np.float64 else np.float32)
    x = RNG.normal(size=(6, 3))
    ev = model.evaluate(x, capture=["r"])
    assert ev.outputs.dtype == dtype and ev.hidden["r"].dtype == dtype
    # Relu and Neg are exact in every float type: the reference is the cast input itself
    np.testing.assert_array_equal(ev.hidden["r"], np.maximum(x.astype(dtype), 0))
    np.testing.assert_array_equal(ev.outputs, -np.maximum(x.astype(dtype), 0))


def test_one_output_is_reshaped_without_a_copy(ops_model: OnnxModel) -> None:
    x = RNG.normal(size=(4, 16)).astype(np.float32)
    ev = ops_model.evaluate(x, capture=["conv"])
    # (n, 2, 4, 4) from the runtime seen as (n, 32): a view of the runtime's own array
    assert ev.hidden["conv"].base is not None and ev.hidden["conv"].shape == (4, 32)


# -- several inputs -----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def pair_files(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict]:
    net = netbuild.seeded(netbuild.TwoShapes, seed=8)
    example = (torch.zeros(4, 3), torch.zeros(4, 2, 2))
    return net, netbuild.export_all(net, example, tmp_path_factory.mktemp("pair"), "pair")


def _direct(path: Path, x: np.ndarray) -> np.ndarray:
    """The TwoShapes file run by onnxruntime itself, its two inputs cut from the rows by hand."""
    session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
    a = x[:, :3].astype(np.float32)
    b = x[:, 3:].astype(np.float32).reshape(len(x), 2, 2)
    return session.run(["y"], {"a": a, "b": b})[0]


def test_two_inputs_named_per_tensor_and_equal_to_onnxruntime(pair_files) -> None:
    net, paths = pair_files
    model = OnnxModel(paths["onnx"])
    assert [(t.name, t.shape, t.dtype) for t in model.inputs] == [("a", (3,), "float32"), ("b", (2, 2), "float32")]
    assert feature_count(model) == 7 and row_dtype(model) is np.float32
    assert model.feature_names() == ["a[0]", "a[1]", "a[2]", "b[0,0]", "b[0,1]", "b[1,0]", "b[1,1]"]
    x = RNG.normal(size=(9, 7))
    direct = _direct(paths["onnx"], x)
    ev = model.evaluate(x)
    assert ev.outputs.dtype == direct.dtype == np.float32
    np.testing.assert_array_equal(ev.outputs, direct)
    # and the network the file was exported from, to float32 rounding
    xa = torch.from_numpy(x[:, :3].astype(np.float32))
    xb = torch.from_numpy(x[:, 3:].astype(np.float32)).reshape(9, 2, 2)
    with torch.no_grad():
        ref = net(xa, xb)
        tanh = torch.tanh(net.fa(xa) + net.fb(xb.reshape(9, 4)))
    np.testing.assert_allclose(ev.outputs, ref.numpy(), rtol=1e-5, atol=1e-6)
    hidden = model.evaluate(x, capture=["act"]).hidden["act"]
    np.testing.assert_allclose(hidden, tanh.numpy(), rtol=1e-5, atol=1e-6)


def test_two_inputs_with_a_fixed_batch(pair_files) -> None:
    _, paths = pair_files
    model = OnnxModel(paths["onnx_fixed"])
    assert model.batch_size == 4
    x = RNG.normal(size=(10, 7))  # three chunks of 4, the last padded, in both inputs
    np.testing.assert_allclose(model.evaluate(x).outputs, _direct(paths["onnx"], x), rtol=1e-6, atol=1e-7)


def test_symbolic_dimension_of_one_input_given_by_name(tmp_path: Path) -> None:
    path = netbuild.symbolic_pair_graph(tmp_path / "pair.onnx")
    with pytest.raises(UserError, match=r"input 'b'.*symbolic.*input_shape=\{'b'"):
        OnnxModel(path)
    with pytest.raises(UserError, match=r"2 input tensors \('a', 'b'\).*ambiguous.*by name"):
        OnnxModel(path, input_shape=(4,))
    with pytest.raises(UserError, match=r"tensor 'bb'.*Did you mean 'b'"):
        OnnxModel(path, input_shape={"bb": (4,)})
    with pytest.raises(UserError, match=r"given for 'a'.*does not match.*\(3,\)"):
        OnnxModel(path, input_shape={"a": (5,), "b": (4,)})
    model = open_model(str(path), input_shape={"b": (4,)})
    assert [t.shape for t in model.inputs] == [(3,), (4,)] and feature_count(model) == 7
    x = RNG.normal(size=(5, 7))
    # reference: y = concat(2 a, b) (netbuild.symbolic_pair_graph)
    want = np.concatenate([2 * x[:, :3], x[:, 3:]], axis=1)
    np.testing.assert_allclose(model.evaluate(x).outputs, want, rtol=1e-6)
    assert model.output_names() == [f"y[{i}]" for i in range(7)]


# -- outputs that hold no real numbers ----------------------------------------------------------


def test_integer_output_left_out_with_a_notice(tmp_path: Path) -> None:
    model = OnnxModel(netbuild.label_and_score_graph(tmp_path / "ls.onnx"))
    assert [o.name for o in model.outputs] == ["scores"]
    assert model.output_names() == ["scores[0]", "scores[1]"]
    (notice,) = model.notices
    assert "'label' (int64)" in notice and "left out" in notice and "\n" not in notice
    x = RNG.normal(size=(5, 3))
    a = np.arange(1, 7, dtype=np.float64).reshape(3, 2)  # netbuild.label_and_score_graph's A
    np.testing.assert_allclose(model.evaluate(x).outputs, x @ a, rtol=1e-5, atol=1e-6)


def test_zipmap_output_left_out_with_advice(tmp_path: Path) -> None:
    model = OnnxModel(netbuild.zipmap_graph(tmp_path / "zip.onnx"))
    assert [o.name for o in model.outputs] == ["scores"]
    (notice,) = model.notices
    assert "'maps' (a sequence of maps)" in notice and "{'zipmap': False}" in notice and "\n" not in notice


def _iris_onnx(estimator, path: Path, zipmap: bool) -> tuple[object, np.ndarray]:
    """Fit ``estimator`` on scikit-learn's bundled iris data and convert it with skl2onnx."""
    from skl2onnx import convert_sklearn
    from skl2onnx.common.data_types import FloatTensorType
    from sklearn.datasets import load_iris

    x, y = load_iris(return_X_y=True)
    estimator.fit(x, y)
    options = None if zipmap else {id(estimator): {"zipmap": False}}
    proto = convert_sklearn(
        estimator, initial_types=[("X", FloatTensorType([None, 4]))], options=options, target_opset=netbuild.OPSET
    )
    path.write_bytes(proto.SerializeToString())
    return estimator, x


def _classifiers() -> list:
    from sklearn.ensemble import RandomForestClassifier
    from sklearn.linear_model import LogisticRegression

    return [LogisticRegression(max_iter=1000), RandomForestClassifier(n_estimators=10, max_depth=4, random_state=0)]


@pytest.mark.parametrize("index", [0, 1], ids=["logistic-regression", "random-forest"])
def test_scikit_learn_classifier_opens_with_its_probabilities(tmp_path: Path, index: int) -> None:
    path = tmp_path / "clf.onnx"
    fitted, x = _iris_onnx(_classifiers()[index], path, zipmap=False)
    model = open_model(str(path))
    assert [(o.name, o.shape, o.dtype) for o in model.outputs] == [("probabilities", (3,), "float32")]
    assert [n for n in model.notices if "'label' (int64)" in n and "left out" in n]
    assert model.feature_names() == ["X[0]", "X[1]", "X[2]", "X[3]"]
    ev = model.evaluate(x)
    session = ort.InferenceSession(str(path), providers=["CPUExecutionProvider"])
    np.testing.assert_array_equal(ev.outputs, session.run(["probabilities"], {"X": x.astype(np.float32)})[0])
    # the fitted estimator itself: probabilities to float32 rounding
    np.testing.assert_allclose(ev.outputs, fitted.predict_proba(x), atol=1e-5)


def test_string_labels_without_zipmap_get_no_zipmap_advice(tmp_path: Path) -> None:
    """A classifier fitted on iris's species names, converted without ZipMap: the string labels
    are left out, the probabilities audited, and nothing tells the user to turn ZipMap off."""
    from skl2onnx import convert_sklearn
    from skl2onnx.common.data_types import FloatTensorType
    from sklearn.datasets import load_iris
    from sklearn.linear_model import LogisticRegression

    data = load_iris()
    estimator = LogisticRegression(max_iter=1000).fit(data.data, data.target_names[data.target])
    proto = convert_sklearn(estimator, initial_types=[("X", FloatTensorType([None, 4]))],
                            options={id(estimator): {"zipmap": False}}, target_opset=netbuild.OPSET)  # fmt: skip
    path = tmp_path / "species.onnx"
    path.write_bytes(proto.SerializeToString())
    model = open_model(str(path))
    assert [o.name for o in model.outputs] == ["probabilities"]
    notice = next(n for n in model.notices if "left out" in n)
    assert "'label'" in notice and "string" in notice and "zipmap" not in notice.lower()


def test_scikit_learn_classifier_with_zipmap_is_refused_with_advice(tmp_path: Path) -> None:
    path = tmp_path / "zip.onnx"
    _iris_onnx(_classifiers()[0], path, zipmap=True)
    with pytest.raises(UserError) as info:
        open_model(str(path))
    message = str(info.value)
    assert "'output_label' (int64)" in message and "'output_probability' (a sequence of maps)" in message
    assert "options={id(model): {'zipmap': False}}" in message


# -- rows of outputs and hidden tensors, and module paths ------------------------------------


def test_output_with_rows_last_is_read_rows_first(tmp_path) -> None:
    model = OnnxModel(netbuild.rows_last_graph(tmp_path / "last.onnx"))
    assert [(o.name, o.shape) for o in model.outputs] == [("y", (2,))]
    assert any("rows along another axis" in note and "'y' (axis 1)" in note for note in model.notices)
    x = RNG.normal(size=(7, 3))
    a = np.array([[1.0, -0.5], [0.25, 2.0], [-1.0, 0.5]])
    # reference: y[:, i] = tanh(x A)[i], the graph's own definition, rows first
    np.testing.assert_allclose(model.evaluate(x).outputs, np.tanh(x @ a), rtol=1e-5, atol=1e-6)


@pytest.mark.parametrize(
    ("build", "words"),
    [
        (netbuild.batch_mean_graph, "one value per batch"),
        (netbuild.pairwise_graph, "changes its width with the batch size"),
        (netbuild.empty_input_graph, "dimension of size 0"),
    ],
)
def test_outputs_without_rows_and_inputs_without_features_are_refused(tmp_path, build, words) -> None:
    with pytest.raises(UserError, match=words):
        OnnxModel(build(tmp_path / "m.onnx"))


def test_module_paths_from_the_newer_exporters_metadata(tmp_path) -> None:
    model = OnnxModel(netbuild.torch_scoped_graph(tmp_path / "scoped.onnx"))
    layers = model.layers()
    assert [(la.name, la.op, la.tensor) for la in layers] == [("enc.fc", "gemm", "linear"), ("enc.act", "relu", "relu")]
    x = RNG.normal(size=(4, 3))
    ev = model.evaluate(x, capture=["enc.fc", "enc.act"])
    np.testing.assert_allclose(ev.hidden["enc.act"], np.maximum(ev.hidden["enc.fc"], 0), rtol=1e-6)


def test_hidden_tensor_without_rows_is_left_out_with_a_notice(tmp_path) -> None:
    # pairs = x xᵀ is (N, N): no single axis holds the rows; y = x + 0·max(pairs) is per row
    graph = helper.make_graph(
        [
            helper.make_node("Transpose", ["x"], ["xt"], perm=[1, 0]),
            helper.make_node("MatMul", ["x", "xt"], ["pairs"]),
            helper.make_node("ReduceMax", ["pairs"], ["top"], keepdims=0),
            helper.make_node("Mul", ["top", "zero"], ["nothing"]),
            helper.make_node("Tanh", ["x"], ["t"]),
            helper.make_node("Add", ["t", "nothing"], ["y"]),
        ],
        "pairs_inside",
        [helper.make_tensor_value_info("x", TensorProto.FLOAT, ["N", 3])],
        [helper.make_tensor_value_info("y", TensorProto.FLOAT, ["N", 3])],
        [numpy_helper.from_array(np.zeros(1, dtype=np.float32), "zero")],
    )
    model = OnnxModel(netbuild.save_onnx(graph, tmp_path / "pairs.onnx", opset=13))
    assert [la.name for la in model.layers()] == ["t"]
    assert any("left out" in n and "'pairs' (several of its axes change" in n for n in model.notices), model.notices


def test_outputs_alone_run_in_batches_that_give_the_rows_of_one_call(ops_model: OnnxModel, monkeypatch) -> None:
    """Many rows of outputs alone are fed in calls of at most CALL_ROWS rows; the rows come back in order."""
    x = np.random.default_rng(5).normal(size=(37, feature_count(ops_model)))
    whole = ops_model.evaluate(x).outputs
    monkeypatch.setattr("audit.models.onnx.CALL_ROWS", 8)
    calls = []
    run = ops_model._raw
    monkeypatch.setattr(ops_model, "_raw", lambda s, names, rows: calls.append(len(rows)) or run(s, names, rows))
    chunked = ops_model.evaluate(x).outputs
    assert calls == [8, 8, 8, 8, 5]
    np.testing.assert_allclose(chunked, whole, rtol=1e-6)
    del calls[:]
    captured = ops_model.evaluate(x, [ops_model.layers()[0].name])  # hidden tensors: the first chunk as usual,
    assert calls == [8] and captured.outputs.shape == whole.shape  # the others written in place (onnx_chunks)


def test_an_input_whose_batch_axis_is_not_first_is_named_so(tmp_path) -> None:
    """A sequence-first input (time 3, batch symbolic, 2 features): the message says the batch must come first."""
    x = helper.make_tensor_value_info("s", TensorProto.FLOAT, [3, "batch", 2])
    y = helper.make_tensor_value_info("y", TensorProto.FLOAT, ["batch", 2])
    node = helper.make_node("ReduceSum", ["s", "axes"], ["y"], keepdims=0)
    axes = numpy_helper.from_array(np.array([0], dtype=np.int64), "axes")
    graph = helper.make_graph([node], "seq_first", [x], [y], [axes])
    model = helper.make_model(graph, opset_imports=[helper.make_opsetid("", 17)])
    model.ir_version = 8
    path = tmp_path / "seq_first.onnx"
    path.write_bytes(model.SerializeToString())
    with pytest.raises(UserError, match=r"has shape \[3, 'batch', 2\].*batch axis is not first.*batch axis first"):
        OnnxModel(path)
