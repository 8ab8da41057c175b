"""Between rows and tensors: splitting features per input tensor, gathering outputs, input
shape arguments, and the words for outputs left out.

Common practice, no source: the expected arrays follow from the C order of the elements
and numpy's rounding to the nearest integer (ties to even).
"""

from __future__ import annotations

import numpy as np
import pytest

from audit.errors import UserError
from audit.models import TensorInfo
from audit.models.tensors import gather, input_shapes, no_output_error, output_notice, split_features


def test_split_features_per_tensor_in_c_order() -> None:
    inputs = [TensorInfo("a", (2,), "float32"), TensorInfo("b", (2, 2), "float64"), TensorInfo("s", (), "float32")]
    x = np.arange(14, dtype=np.float64).reshape(2, 7)
    a, b, s = split_features(x, inputs)
    assert (a.dtype, b.dtype, s.dtype) == (np.float32, np.float64, np.float32)
    assert a.shape == (2, 2) and b.shape == (2, 2, 2) and s.shape == (2,)
    np.testing.assert_array_equal(a, [[0, 1], [7, 8]])
    np.testing.assert_array_equal(b[1], [[9, 10], [11, 12]])
    np.testing.assert_array_equal(s, [6, 13])
    assert all(part.flags.c_contiguous for part in (a, b, s))


def test_one_tensor_in_the_rows_dtype_is_a_view() -> None:
    x = np.zeros((3, 4), dtype=np.float32)
    (only,) = split_features(x, [TensorInfo("x", (2, 2), "float32")])
    assert only.shape == (3, 2, 2) and np.shares_memory(only, x)


def test_integer_and_boolean_tensors_are_rounded() -> None:
    inputs = [TensorInfo("i", (3,), "int64"), TensorInfo("u", (2,), "uint8"), TensorInfo("b", (2,), "bool")]
    x = np.array([[0.5, 1.5, -2.6, -3.0, 300.2, 0.4, 0.6]])
    i, u, b = split_features(x, inputs)
    np.testing.assert_array_equal(i, [[0, 2, -3]])  # ties to even
    assert u.dtype == np.uint8 and u.tolist() == [[0, 255]]  # clipped to the type's range
    assert b.dtype == np.bool_ and b.tolist() == [[False, True]]


def test_bfloat16_tensors_are_fed_float32() -> None:
    (part,) = split_features(np.ones((2, 3)), [TensorInfo("x", (3,), "bfloat16")])
    assert part.dtype == np.float32


def test_gather_keeps_dtypes() -> None:
    one = np.ones((4, 2, 3), dtype=np.float16)
    flat = gather([one], 4)
    assert flat.shape == (4, 6) and flat.dtype == np.float16 and np.shares_memory(flat, one)
    both = gather([np.zeros((4, 2), np.float32), np.ones((4,), np.float32)], 4)
    assert both.shape == (4, 3) and both.dtype == np.float32
    np.testing.assert_array_equal(both[:, 2], 1)


def test_input_shapes() -> None:
    assert input_shapes(None, ["x"], "m.onnx") == {}
    assert input_shapes([1, 8, 8], ["x"], "m.onnx") == {"x": (1, 8, 8)}
    assert input_shapes({"b": [4]}, ["a", "b"], "m.onnx") == {"b": (4,)}
    with pytest.raises(UserError, match=r"2 input tensors \('a', 'b'\).*ambiguous.*by name"):
        input_shapes((4,), ["a", "b"], "m.onnx")
    with pytest.raises(UserError, match=r"'m.onnx'.*its input tensors are 'a', 'b'.*Did you mean 'b'"):
        input_shapes({"bb": (4,)}, ["a", "b"], "m.onnx")
    for bad in ((0, 3), "8", (2.5,), {"x": ("a",)}):
        with pytest.raises(UserError, match="positive whole numbers"):
            input_shapes(bad, ["x"], "m.onnx")


def test_words_for_outputs_left_out() -> None:
    notice = output_notice([("label", "int64")])
    assert "'label' (int64)" in notice and "zipmap" not in notice
    assert "{'zipmap': False}" in output_notice([("probability", "a sequence of maps")])
    assert "zipmap" not in output_notice([("label", "tensor(string)")])  # string labels: no ZipMap involved
    assert "zipmap" not in str(no_output_error("m.onnx", [("label", "tensor(string)"), ("s", "a sequence")]))
    assert "holds integers (int64)" in str(no_output_error("m.onnx", [("label", "int64")]))
    both = str(no_output_error("m.onnx", [("label", "int64"), ("probability", "a sequence of maps")]))
    assert "'label' (int64)" in both and "'probability' (a sequence of maps)" in both and "'zipmap': False" in both


def test_rows_of_an_unexpected_size_are_a_user_error() -> None:
    from audit.models.batch import BatchAxis
    from audit.models.tensors import read_rows

    value = np.arange(12.0).reshape(3, 4).T  # (4, 3): rows along axis 1
    np.testing.assert_array_equal(read_rows(BatchAxis(1), value, 3, 4, "h", "m.onnx"), value.T)
    with pytest.raises(UserError, match=r"'h' of 'm.onnx' came out with shape \(4, 3\).*5 values per row"):
        read_rows(BatchAxis(1), value, 3, 5, "h", "m.onnx")
