"""Python callables as models: one float64 input tensor, float64 outputs, clear errors.

Common practice, no source: each callable is written here with its answer.
"""

from __future__ import annotations

import numpy as np
import pytest

from audit.errors import UserError
from audit.models import Model, PythonModel, feature_count, import_reference, open_model, row_dtype


def _two_outputs(x: np.ndarray) -> np.ndarray:
    return np.stack([x.sum(axis=1), x[:, 0] * x[:, 1]], axis=1)


def test_signature() -> None:
    model = PythonModel(_two_outputs, 3, source="here:_two_outputs")
    assert isinstance(model, Model) and model.format == "python" and model.notices == []
    assert [(t.name, t.shape, t.dtype) for t in model.inputs] == [("x", (3,), "float64")]
    assert feature_count(model) == 3 and row_dtype(model) is np.float64
    assert model.feature_names() == ["x[0]", "x[1]", "x[2]"]
    assert model.output_names() == ["y[0]", "y[1]"] and model.layers() == []


def test_float32_rows_give_float64_outputs() -> None:
    model = PythonModel(_two_outputs, 3)
    x = np.arange(6, dtype=np.float32).reshape(2, 3)
    ev = model.evaluate(x)
    assert ev.outputs.dtype == np.float64
    np.testing.assert_array_equal(ev.outputs, [[3, 0], [12, 12]])


def test_one_output_per_row() -> None:
    model = PythonModel(lambda x: x[:, 0] ** 2, 2)
    assert model.outputs[0].shape == () and model.output_names() == ["y"]
    np.testing.assert_array_equal(model.evaluate(np.array([[3.0, 1.0]])).outputs, [[9.0]])


def test_errors() -> None:
    with pytest.raises(UserError, match="not callable"):
        PythonModel(3, 2)  # type: ignore[arg-type]
    with pytest.raises(UserError, match="at least 1"):
        PythonModel(_two_outputs, 0)
    with pytest.raises(UserError, match="failed on a batch"):
        PythonModel(lambda x: x[:, 5], 2)
    with pytest.raises(UserError, match="real numbers"):
        PythonModel(lambda x: np.array(["a"] * len(x)), 2)
    with pytest.raises(UserError, match=r"returned shape \(1,\)"):
        PythonModel(lambda x: np.zeros(1), 2)
    with pytest.raises(UserError, match="no hidden layers"):
        PythonModel(_two_outputs, 3).evaluate(np.zeros((1, 3)), capture=["h"])


def test_references() -> None:
    assert import_reference("math:sqrt")(4.0) == 2.0
    with pytest.raises(UserError, match="not of the form"):
        import_reference("math")
    with pytest.raises(UserError, match=r"has no attribute 'sqrtt'.*Did you mean 'sqrt'"):
        import_reference("math:sqrtt")
    with pytest.raises(UserError, match="`dim`"):
        open_model("math:sqrt")
    model = open_model("clifuncs:two_outputs", dim=3)
    assert model.format == "python" and feature_count(model) == 3
