"""The generated Python module: plain data that reads back exactly, one import by reference, nothing else."""

import ast
import importlib.util
import sys

import numpy as np
import pytest

from audit.errors import UserError
from audit.export import ReducedModel, make_plan
from audit.export.python_file import python_source, source_reference, write_python
from audit.inputs import Law
from audit.models.python import PythonModel
from model_zoo.functions import ishigami

LAWS = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3


def source():
    return PythonModel(ishigami, 3, source="model_zoo.functions:ishigami")


def load(path):
    spec = importlib.util.spec_from_file_location("simplified_under_test", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_module_holds_data_and_one_import(tmp_path):
    plan = make_plan(source(), ["x1", "x2", "x3"], LAWS, integrate={2: 7}, freeze={0: 0.1234567890123})
    text = python_source(source(), plan)
    tree = ast.parse(text)
    imports = [n for n in ast.walk(tree) if isinstance(n, ast.Import | ast.ImportFrom)]
    assert sorted(ast.unparse(n) for n in imports) == [
        "from model_zoo.functions import ishigami as _source",
        "import json",
        "import numpy as np",
    ]
    assert [n.name for n in tree.body if isinstance(n, ast.FunctionDef)] == ["simplified"]
    path = tmp_path / "s.py"
    write_python(source(), plan, path)
    module = load(path)
    nodes, weights = plan.grid()
    assert np.array_equal(module.NODES, nodes) and np.array_equal(module.WEIGHTS, weights)
    assert module.FIXED == {0: 0.1234567890123}
    x = np.random.default_rng(4).uniform(-3, 3, size=(11, 1))
    assert np.array_equal(module.simplified(x), ReducedModel(source(), plan).evaluate(x).outputs[:, 0])
    assert module.simplified(np.zeros((0, 1))).shape == (0,)


def test_lambdas_cannot_be_named():
    with pytest.raises(UserError, match="module-level function"):
        source_reference(PythonModel(lambda x: x[:, 0], 2, source="tests:<lambda>"))
    with pytest.raises(UserError):
        source_reference(PythonModel(lambda x: x[:, 0], 2, source="os; import x:f"))
    assert source_reference(source()) == ("model_zoo.functions", "ishigami")
    assert "simplified_under_test" not in sys.modules
