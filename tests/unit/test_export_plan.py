"""The plan of a simplified model: its tensor-product rule, its rows, its metadata, and the model in memory.

References: Gauss–Legendre and Gauss–Hermite rules with m nodes integrate
polynomials of degree 2m − 1 exactly; a tensor product of such rules does so
for each variable (common practice, no source).
"""

import numpy as np
import pytest

from audit.errors import UserError
from audit.export import MAX_GRID, ReducedModel, make_plan
from audit.inputs import Law
from audit.models.python import PythonModel
from audit.quadrature import PreIntegratedModel

LAWS = [Law("normal"), Law("uniform", {"low": 1.0, "high": 3.0}), Law("normal", {"mean": 2.0, "sd": 0.5})]
NAMES = ["a", "b", "c"]


def model(func=None):
    return PythonModel(func or (lambda x: np.column_stack([x.sum(axis=1), x[:, 0] * x[:, 1] ** 2])), 3)


def test_tensor_product_rule_integrates_polynomials_exactly():
    plan = make_plan(model(), NAMES, LAWS, integrate={1: 3, 2: 4})
    nodes, weights = plan.grid()
    assert nodes.shape == (12, 2) and np.isclose(weights.sum(), 1.0)
    # E[b^4] for U(1, 3) = (3^5 - 1) / (5 * 2); E[(c - 2)^2] = 0.25; independent
    value = weights @ (nodes[:, 0] ** 4 * (nodes[:, 1] - 2.0) ** 2)
    assert value == pytest.approx((3**5 - 1) / 10 * 0.25, rel=1e-13)


def test_full_rows_put_nodes_and_values_in_their_columns():
    plan = make_plan(model(), NAMES, LAWS, integrate={1: 2}, freeze={2: 2.5})
    rows = plan.full_rows(np.array([[7.0], [8.0]]))
    nodes, _ = plan.grid()
    assert rows.shape == (4, 3) and plan.kept == [0] and plan.cost == 2 and plan.kind == "preintegrated+frozen"
    assert np.array_equal(rows[:, 0], [7, 7, 8, 8]) and np.array_equal(rows[:, 2], [2.5] * 4)
    assert np.array_equal(rows[:, 1], np.tile(nodes[:, 0], 2))


def test_reduced_model_equals_the_preintegrated_model_for_one_input():
    m = model()
    plan = make_plan(m, NAMES, LAWS, integrate={1: 5})
    x = np.random.default_rng(0).normal(size=(9, 2))
    expected = PreIntegratedModel(m, LAWS, 1, 5).evaluate(x).outputs
    assert np.array_equal(ReducedModel(m, plan).evaluate(x).outputs, expected)


def test_frozen_reduced_model_is_the_source_on_fixed_rows():
    m = model()
    plan = make_plan(m, NAMES, LAWS, freeze={0: -1.0})
    x = np.random.default_rng(1).normal(size=(5, 2))
    full = np.column_stack([np.full(5, -1.0), x])
    assert np.array_equal(ReducedModel(m, plan).evaluate(x).outputs, m.evaluate(full).outputs)


def test_metadata_records_version_rule_and_values():
    meta = make_plan(model(), NAMES, LAWS, integrate={1: 4}, freeze={2: 2.0}, errors={1: (1e-4, True)}).metadata()
    assert meta["tool"] == "netdim" and meta["kind"] == "preintegrated+frozen" and meta["version"]
    assert meta["integrated"] == [{"feature": "b", "position": 1, "law": "uniform", "low": 1.0, "high": 3.0,
                                   "nodes": 4, "quadrature_error": 1e-4, "converged": True}]  # fmt: skip
    assert meta["frozen"][0]["value"] == 2.0 and meta["frozen"][0]["chosen"] == "given"
    assert [i["name"] for i in meta["inputs"]] == ["a"] and meta["evaluations_per_row"] == 4


@pytest.mark.parametrize(
    "integrate, freeze, words",
    [({0: 4}, {0: 1.0}, "both integrated out and frozen"), ({0: 4, 1: 4}, {2: 1.0}, "without inputs"),
     ({0: 256, 1: 256}, {}, str(MAX_GRID))],
)  # fmt: skip
def test_plans_that_cannot_work_are_refused(integrate, freeze, words):
    with pytest.raises(UserError, match=words):
        make_plan(model(), NAMES, LAWS, integrate=integrate, freeze=freeze)
