"""The model interface: feature counts, row types, names of tensor elements, and what studies
see of a stand-in model.

Common practice, no source: the expected names follow from the C order of the element
indices.
"""

from __future__ import annotations

import io
import re

import numpy as np
import pytest
from rich.console import Console

from audit.models import Evaluation, LayerInfo, Model, TensorInfo, feature_count, index_names, row_dtype
from audit.models.base import check_rows, element_names
from audit.report.signature import render_signature
from audit.studies import model_signature


def test_index_names_in_c_order() -> None:
    assert index_names("x", (2, 2)) == ["x[0,0]", "x[0,1]", "x[1,0]", "x[1,1]"]
    assert index_names("x", (3,)) == ["x[0]", "x[1]", "x[2]"]
    assert index_names("s", ()) == ["s"]


class _LongNames:
    """A stand-in model with very long names, to check that tables fold them."""

    def __init__(self) -> None:
        self.source, self.format = "stand-in", "python"
        self.inputs = [TensorInfo("x", (3,))]
        self.outputs = [TensorInfo("y" * 90, (2,))]
        self.notices = ["a notice"]

    def layers(self) -> list[LayerInfo]:
        return [LayerInfo("/block/" + "deep/" * 25 + "Relu_output_0", "Relu", (4, 4), True)]


def test_signature_folds_long_names_within_80_columns() -> None:
    for terminal in (False, True):
        buffer = io.StringIO()
        render_signature(model_signature(_LongNames()), Console(file=buffer, width=200, force_terminal=terminal))
        plain = re.sub(r"\x1b\[[0-9;]*m", "", buffer.getvalue())
        assert max(len(line) for line in plain.splitlines()) <= 80
        assert plain.count("/block/deep/") == 1 and "yes" in plain
        assert "a notice" in plain and "16" in plain  # units of the (4, 4) layer


class _TwoTensors:
    """A stand-in with two input tensors of different types."""

    def __init__(self, dtypes: tuple[str, str]) -> None:
        self.source, self.format, self.notices = "stand-in", "python", []
        self.inputs = [TensorInfo("a", (2,), dtypes[0]), TensorInfo("b", (2, 3), dtypes[1])]
        self.outputs = [TensorInfo("y", ())]

    def layers(self) -> list[LayerInfo]:
        return []

    def feature_names(self) -> list[str]:
        return element_names(self.inputs)

    def output_names(self) -> list[str]:
        return ["y"]

    def evaluate(self, x, capture=()) -> Evaluation:
        return Evaluation(np.zeros((len(x), 1)))


def test_feature_count_and_row_dtype() -> None:
    model = _TwoTensors(("float32", "float16"))
    assert isinstance(model, Model)
    assert feature_count(model) == 8
    assert row_dtype(model) is np.float32
    for other in ("float64", "int64", "bfloat16", "bool"):
        assert row_dtype(_TwoTensors(("float32", other))) is np.float64, other


def test_element_names_tensor_after_tensor() -> None:
    names = _TwoTensors(("float32", "float32")).feature_names()
    assert names[:3] == ["a[0]", "a[1]", "b[0,0]"] and names[-1] == "b[1,2]" and len(names) == 8


def test_check_rows() -> None:
    assert check_rows(np.zeros((4, 3)), 3).shape == (4, 3)
    with pytest.raises(ValueError, match=r"shape \(n, 3\)"):
        check_rows(np.zeros(3), 3)


class _TwoOutputs:
    """A stand-in model with outputs ``p`` (2 units) and ``q`` (one scalar per row)."""

    def __init__(self) -> None:
        self.source, self.format, self.notices = "two-outputs", "python", []
        self.inputs = [TensorInfo("x", (3,))]
        self.outputs = [TensorInfo("p", (2,)), TensorInfo("q", ())]

    def output_names(self) -> list[str]:
        return element_names(self.outputs)


def test_output_units_by_tensor_or_unit_name() -> None:
    from audit.errors import UserError
    from audit.models.base import output_units

    model = _TwoOutputs()
    assert model.output_names() == ["p[0]", "p[1]", "q"]
    assert output_units(model, ["q"]) == [2]
    assert output_units(model, ["p"]) == [0, 1]
    assert output_units(model, ["p[1]", "q", "p"]) == [1, 2, 0]  # in the order asked, each once
    with pytest.raises(UserError, match=r"no output named 'pp'.*Did you mean 'p'.*'p', 'q', 'p\[0\]', 'p\[1\]'"):
        output_units(model, ["pp"])
