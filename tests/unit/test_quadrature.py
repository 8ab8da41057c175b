"""Pre-integration (audit.quadrature): one input integrated out by a Gauss rule.

References: the Gaussian integral of Φ, E Φ(a + bZ) = Φ(a / √(1 + b²)) for Z ~ N(0, 1), gives the
closed form of the Φ ridge with one input integrated out (tests/advice_cases.py; common practice,
no source); Gauss rules with m nodes integrate polynomials of degree ≤ 2m − 1 exactly (common
practice, no source).
"""

from pathlib import Path

import numpy as np
import pytest
from advice_cases import NORMAL6, phi_ridge, reduced_ridge

from audit import Law
from audit.errors import UserError
from audit.models.open import open_model
from audit.models.python import PythonModel
from audit.quadrature import MAX_NODES, PreIntegrated, PreIntegratedModel, preintegrate

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def test_preintegrated_phi_ridge_matches_closed_form():
    x = np.random.default_rng(0).standard_normal((2000, 5)) * 1.5
    for index in range(6):
        g = PreIntegrated(phi_ridge, NORMAL6, index, nodes=32)
        assert g.cost == 32
        np.testing.assert_allclose(g(x), reduced_ridge(x, index), rtol=0, atol=1e-8)


def test_preintegrated_returns_what_the_function_returns():
    laws = [
        Law("uniform", {"low": -1, "high": 2}),
        Law("normal", {"mean": 1, "sd": 2}),
        Law("uniform"),
    ]

    # x1 ~ N(1, 4): E[x1] = 1, E[x1²] = 5; a 3-node Gauss rule is exact for degree ≤ 5
    def two(x):
        return np.stack([x[:, 0] * x[:, 1], x[:, 1] ** 2 + x[:, 2]], axis=1)

    x = np.random.default_rng(1).random((50, 2))
    g = PreIntegrated(two, laws, 1, nodes=3)
    np.testing.assert_allclose(g(x), np.stack([x[:, 0], 5 + x[:, 1]], axis=1), atol=1e-12)
    # batching does not change the answer
    np.testing.assert_allclose(PreIntegrated(two, laws, 1, nodes=3, max_rows=7)(x), g(x), atol=1e-15)
    # an evaluator returning a dict of arrays gives a dict back
    ev = PreIntegrated(lambda X: {"a": two(X), "b": X[:, :1] ** 2}, laws, 1, nodes=3)
    out = ev(x)
    assert set(out) == {"a", "b"} and out["b"].shape == (50, 1)
    np.testing.assert_allclose(out["a"], g(x), atol=1e-15)
    # a model gives a model with d - 1 inputs
    pm = preintegrate(PythonModel(two, 3, source="two"), laws, 1, 3)
    assert isinstance(pm, PreIntegratedModel)
    assert pm.inputs[0].units == 2 and pm.feature_names() == ["x[0]", "x[2]"]
    np.testing.assert_allclose(pm.evaluate(x).outputs, g(x), atol=1e-15)
    assert g(np.zeros((0, 2))).shape == (0, 2)


def test_preintegrated_onnx_network():
    # ridge_phi.onnx computes Φ(s θᵀx − t) in float32 (its model card): agree to float32 precision
    model = open_model(str(ZOO / "ridge_phi.onnx"))
    pm = PreIntegratedModel(model, NORMAL6, 1, nodes=32)
    x = np.random.default_rng(2).standard_normal((500, 5))
    np.testing.assert_allclose(pm.evaluate(x).outputs[:, 0], reduced_ridge(x, 1), atol=2e-6)


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError, match=r"valid: 0\.\.5"):
        PreIntegrated(phi_ridge, NORMAL6, 6)
    with pytest.raises(ValueError, match=rf"1\.\.{MAX_NODES}"):
        PreIntegrated(phi_ridge, NORMAL6, 0, nodes=MAX_NODES + 1)
    with pytest.raises(ValueError, match="at least 2 inputs"):
        PreIntegrated(lambda x: x[:, 0], [Law("normal")], 0)
    with pytest.raises(ValueError, match=r"\(n, 5\)"):
        PreIntegrated(phi_ridge, NORMAL6, 0)(np.zeros((3, 6)))
    with pytest.raises(UserError, match="quadrature node"), np.errstate(divide="ignore"):
        PreIntegrated(lambda x: 1 / (x[:, 0] - x[:, 0]), NORMAL6, 0, nodes=4)(np.zeros((2, 5)))


@pytest.mark.parametrize("index", [0, 2, 4])
def test_rows_are_written_in_the_models_type_with_the_values_of_a_cast(index):
    """expand builds (x_i, z_q) point-major; in float32 it holds exactly the float64 rows cast, as the
    model would have cast them (so the audit's numbers do not depend on where the cast happens)."""
    x = np.random.default_rng(1).standard_normal((7, 5))
    g = PreIntegrated(phi_ridge, NORMAL6, index, nodes=8)
    rows = g.expand(x)
    assert rows.shape == (7 * 8, 6) and rows.dtype == np.float64
    np.testing.assert_array_equal(rows[:, index], np.tile(g.points, 7))
    np.testing.assert_array_equal(np.delete(rows, index, axis=1), np.repeat(x, 8, axis=0))
    small = g.expand(x, np.float32)
    assert small.dtype == np.float32
    np.testing.assert_array_equal(small, rows.astype(np.float32))
    x32 = x.astype(np.float32)
    want = np.insert(np.repeat(x32, 8, axis=0), index, np.tile(g.points, 7).astype(np.float32), axis=1)
    np.testing.assert_array_equal(g.expand(x32, np.float32), want)


def test_a_float32_model_gets_float32_rows_and_the_same_outputs():
    model = open_model(str(ZOO / "ridge_phi.onnx"))
    pm = PreIntegratedModel(model, NORMAL6, 1, nodes=16)
    seen = []
    evaluate = model.evaluate
    model.evaluate = lambda X, capture=(): (seen.append(X.dtype), evaluate(X, capture))[1]
    x = np.random.default_rng(3).standard_normal((64, 5))
    out = pm.evaluate(x).outputs
    assert seen and set(seen) == {np.dtype(np.float32)}
    cast_by_the_model = pm._reduce(evaluate(pm.expand(x)).outputs, len(x))  # float64 rows, as before
    np.testing.assert_array_equal(out, cast_by_the_model)


def test_reused_row_buffers_never_show_through_results():
    """Calls share one buffer of expanded rows: results made earlier keep their values, even from a
    function that returns a view of its rows, and calls from several threads at once get their own
    (E[x0 | x0] = x0 whatever input 1's law; the Gauss weights sum to 1)."""
    from concurrent.futures import ThreadPoolExecutor

    first_of = lambda X: X[:, 0]  # noqa: E731 - a view of the rows it is given
    g = PreIntegrated(first_of, [Law("normal"), Law("normal")], index=1, nodes=8, max_rows=64)
    rng = np.random.default_rng(3)
    a, b = rng.standard_normal((40, 1)), rng.standard_normal((40, 1))
    ya = g(a)
    yb = g(b)
    np.testing.assert_allclose(ya, a[:, 0], rtol=1e-15)
    np.testing.assert_allclose(yb, b[:, 0], rtol=1e-15)
    xs = [rng.standard_normal((300, 1)) for _ in range(16)]
    with ThreadPoolExecutor(4) as pool:
        ys = list(pool.map(g, xs))
    for x, y in zip(xs, ys, strict=True):
        np.testing.assert_allclose(y, x[:, 0], rtol=1e-15)


def test_expand_into_a_given_buffer_writes_the_same_rows():
    laws = [Law("uniform"), Law("normal"), Law("uniform", {"low": -1, "high": 3})]
    g = PreIntegrated(lambda X: X.sum(axis=1), laws, index=1, nodes=5)
    x = np.random.default_rng(4).random((7, 2))
    for dtype in (np.float64, np.float32):
        out = np.full(7 * 5 * 3 + 11, np.nan, dtype=dtype)
        np.testing.assert_array_equal(g.expand(x, dtype, out), g.expand(x, dtype))
        assert g.expand(x, dtype, out).dtype == dtype


def test_only_buffers_up_to_the_kept_size_outlive_their_call(monkeypatch):
    import audit.quadrature as q

    monkeypatch.setattr(q, "_SPARE", {})
    monkeypatch.setattr(q, "_KEEP_BYTES", 1024)
    small, large = q._borrow(64, np.float64), q._borrow(512, np.float64)  # 512 and 4096 bytes
    q._give_back(large)
    assert q._SPARE == {}  # too large to keep
    q._give_back(small)
    assert q._borrow(32, np.float64) is small  # lent again, and no longer spare
    assert q._SPARE == {}
