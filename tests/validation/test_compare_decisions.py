"""Compare's decisions are stable, and planted changes fail the right gate, at the default gates.

Cases:
- two surrogates of one function (Friedman #1, "Multivariate adaptive regression splines",
  Annals of Statistics, 1991; data from scikit-learn's make_friedman1, fixed seeds) trained with
  different seeds, compared over 20 seeds: the same decision every time;
- a network against its copy in another format (ONNX and .pt2 of the same weights): every gate
  passes and nothing is flagged, on every seed;
- planted changes on an additive function Σ a_j x_j (normal inputs): one input's weight doubled
  moves its total index from a²/Σa² to 4a²/(Σa² + 3a²) — the total-index gate fails and the ν
  gate passes (the function stays additive, ν = 1); a three-way term added raises ν (by 0.25 here,
  clifuncs.additive6_plus_product) — the ν gate fails (common practice, no source).
"""

from __future__ import annotations

import clifuncs
import netbuild
import numpy as np
import pytest
import torch

from audit import compare_models
from audit.models.python import PythonModel

KW = dict(points=512, replicates=8, layers="none")
#: 20 seeds in the slow run (-m slow), 3 in the default one.
SEEDS = [pytest.param(range(3), id="3 seeds"), pytest.param(range(20), id="20 seeds", marks=pytest.mark.slow)]


def _failed(result) -> list[str]:
    return [g.name for g in result.gates if not g.passed]


@pytest.fixture(scope="module")
def surrogates():
    from sklearn.datasets import make_friedman1
    from sklearn.neural_network import MLPRegressor

    X, y = make_friedman1(n_samples=3000, n_features=10, noise=0.0, random_state=0)
    models = []
    for seed in (0, 1):
        mlp = MLPRegressor(hidden_layer_sizes=(32, 32), max_iter=400, random_state=seed, tol=1e-6).fit(X, y)
        models.append(PythonModel(mlp.predict, 10, source=f"friedman_mlp_seed{seed}"))
    return models


@pytest.mark.parametrize("seeds", SEEDS)
def test_two_surrogates_of_one_function_give_the_same_decision_on_every_seed(surrogates, seeds):
    decisions = [tuple(_failed(compare_models(*surrogates, "uniform", seed=s, **KW))) for s in seeds]
    counts = {d: decisions.count(d) for d in set(decisions)}
    print(f"decisions over {len(seeds)} seeds (failed gates: count):", counts)
    assert len(counts) == 1, counts


@pytest.mark.parametrize("seeds", SEEDS)
def test_a_copy_in_another_format_passes_every_gate_with_nothing_flagged(tmp_path, seeds):
    net = netbuild.seeded(netbuild.TinyMLP, seed=2, d=4, hidden=6, k=2)
    files = netbuild.export_all(net, torch.zeros(2, 4), tmp_path)
    for s in seeds:
        r = compare_models(str(files["onnx"]), str(files["pt2"]), "normal", seed=s, **{**KW, "layers": "all"})
        assert r.passed, (s, _failed(r))
        assert all(o.moved == [] for o in r.outputs), s
        assert all(g.passed for g in r.gates) and r.layers, s


def _weights(a):
    def f(x):
        return x @ a

    return f


@pytest.mark.parametrize("seeds", SEEDS)
def test_a_doubled_weight_fails_the_total_index_gate_on_every_seed(seeds):
    a = np.array([1.0, 2.0, 3.0, 1.0, 2.0, 3.0])
    b = a.copy()
    b[1] *= 2
    old, new = PythonModel(_weights(a), 6, source="a"), PythonModel(_weights(b), 6, source="b")
    failed = [_failed(compare_models(old, new, "normal", seed=s, **KW)) for s in seeds]
    assert all("total_index" in f for f in failed), failed
    assert not any("mean_dimension" in f for f in failed)  # still additive
    print("failed gates with one weight doubled:", {tuple(f) for f in failed})


@pytest.mark.parametrize("seeds", SEEDS)
def test_a_three_way_term_fails_the_mean_dimension_gate_on_every_seed(seeds):
    old = PythonModel(clifuncs.additive6, 6, source="additive6")
    new = PythonModel(clifuncs.additive6_plus_product, 6, source="additive6_plus_product")
    failed = [_failed(compare_models(old, new, "normal", seed=s, **KW)) for s in seeds]
    assert all("mean_dimension" in f for f in failed), failed
    print("failed gates with a three-way term:", {tuple(f) for f in failed})


def test_a_saved_baseline_equals_the_two_model_run(tmp_path):
    import json

    from audit import audit_model

    old = PythonModel(clifuncs.additive6, 6, source="additive6")
    new = PythonModel(clifuncs.additive6_plus_product, 6, source="additive6_plus_product")
    kw = dict(points=256, replicates=6, seed=11)
    report = tmp_path / "released.json"
    report.write_text(json.dumps(audit_model(old, "normal", layers="none", **kw).to_dict()))
    together = compare_models(old, new, "normal", layers="none", **kw)
    baseline = compare_models(str(report), new, layers="none")
    for a, b in zip(together.outputs, baseline.outputs, strict=True):
        for x, y in [(a.mean_dimension_change, b.mean_dimension_change), (a.variance_change, b.variance_change)] + [
            (c.value, e.value) for c, e in zip(a.total_index_change + a.first_order_change,
                                               b.total_index_change + b.first_order_change, strict=True)
        ]:  # fmt: skip
            for p, q in zip((x.estimate, x.ci_low, x.ci_high), (y.estimate, y.ci_low, y.ci_high), strict=True):
                assert p == pytest.approx(q, rel=1e-12, abs=1e-15)
    assert [g.passed for g in together.gates] == [g.passed for g in baseline.gates]
    assert baseline.design["baseline"] is True and baseline.design["seed"] == 11
