"""A spec from a table of training inputs (audit.inputs.fromdata), on scikit-learn's bundled wine data."""

from __future__ import annotations

import math
import tomllib

import numpy as np
import pytest
from scipy import stats
from sklearn.datasets import load_wine

from audit.errors import UserError
from audit.inputs import parse_spec
from audit.inputs.fromdata import spec_from_table
from audit.inputs.tables import Table


def _wine_table() -> Table:
    """Wine's 13 measurements, its cultivar (0, 1, 2) and the cultivar one-hot in three columns."""
    d = load_wine()
    y = d.target.astype(float)
    names = [*d.feature_names, "cultivar", "cultivar_0", "cultivar_1", "cultivar_2"]
    columns = [d.data[:, j] for j in range(d.data.shape[1])] + [y] + [(y == k).astype(float) for k in range(3)]
    return Table(names, columns, "wine.csv")


@pytest.fixture(scope="module")
def wine():
    table = _wine_table()
    return table, spec_from_table(table)


def test_every_empirical_law_reproduces_the_data_within_the_dkw_bound(wine):
    # The Dvoretzky–Kiefer–Wolfowitz inequality with the tight constant ("The tight constant in the
    # Dvoretzky–Kiefer–Wolfowitz inequality", Annals of Probability, 1990): P(sup |F_n − F| > ε) ≤ 2 e^{−2nε²},
    # so ε = sqrt(ln(2/0.05)/(2n)) at 95 %. The Kolmogorov–Smirnov distance between each column's data
    # and its empirical law (scipy.stats.kstest against the law's CDF) must stay below it.
    table, made = wine
    spec = parse_spec(tomllib.loads(made.text))
    eps = math.sqrt(math.log(2 / 0.05) / (2 * table.rows))
    empirical = [(j, law) for j, law in enumerate(spec.laws) if law.kind == "empirical"]
    assert len(empirical) == 13  # every measurement has more than 20 distinct values
    for j, law in empirical:
        distance = stats.kstest(table.columns[j], law.cdf).statistic
        assert distance < eps, (table.names[j], distance, eps)
        # and its quantiles are the data's (numpy's default linear method)
        u = np.linspace(0.01, 0.99, 25)
        np.testing.assert_allclose(law.ppf(u), np.quantile(table.columns[j], u), rtol=1e-12)


def test_discrete_and_one_hot_columns_are_found(wine):
    table, made = wine
    kinds = {c.name: c.kind for c in made.columns}
    assert kinds["cultivar"] == "discrete"
    assert {kinds[f"cultivar_{k}"] for k in range(3)} == {"one-hot"}
    law = next(c.law for c in made.columns if c.name == "cultivar")
    counts = np.bincount(table.columns[13].astype(int)) / table.rows
    assert law.params["values"] == (0.0, 1.0, 2.0)
    np.testing.assert_allclose(law.params["probabilities"], counts)
    # the written spec reads back with the block as one input of three columns
    spec = parse_spec(tomllib.loads(made.text))
    v = spec.variables(len(table.names))
    assert v.columns[-1] == (14, 15, 16)
    np.testing.assert_allclose(v.laws[-1].params["probabilities"], counts)


def test_correlated_pair_is_warned_about_with_a_group_suggested(wine):
    table, made = wine
    # Spearman's ρ of total phenols and flavanoids, computed by scipy (0.88 on this data)
    j, k = table.names.index("total_phenols"), table.names.index("flavanoids")
    rho = stats.spearmanr(table.columns[j], table.columns[k]).statistic
    assert abs(rho) > 0.7
    pair = next(p for p in made.pairs if {p.first, p.second} == {"total_phenols", "flavanoids"})
    assert pair.rho == pytest.approx(rho, rel=1e-12)
    assert made.warnings and "total_phenols–flavanoids" in made.warnings[0] and "grouping" in made.warnings[0]
    assert any({"total_phenols", "flavanoids"} <= set(g) for g in made.groups)
    assert "# [groups]" in made.text  # suggested, commented out
    grouped = spec_from_table(table, group_dependent=True)
    spec = parse_spec(tomllib.loads(grouped.text))
    assert spec.groups is not None and spec.groups.lists[0][0] == "dependent_1"


def test_fitted_laws_are_kept_only_when_the_test_does_not_reject_them():
    rng = np.random.default_rng(3)
    normal, skewed = rng.normal(5, 2, 400), rng.exponential(1.0, 400) + 0.01
    made = spec_from_table(Table(["a", "b"], [normal, skewed], "t.csv"), fit=("normal",), seed=1)
    a, b = made.columns
    assert a.law.kind == "normal" and a.law.params["mean"] == pytest.approx(normal.mean())
    assert b.law.kind == "empirical" and "normal rejected" in b.note
    with pytest.raises(UserError, match="valid choices: normal, lognormal, uniform"):
        spec_from_table(Table(["a"], [normal], "t.csv"), fit=("gamma",))


def test_text_columns_become_categories_and_dropped_columns_are_left_out():
    t = Table(["soil", "y"], [np.array(["loam", "clay", "loam", "sand"]), np.arange(4.0)], "t.csv")
    made = spec_from_table(t, drop=("y",))
    assert [c.name for c in made.columns] == ["soil"]
    assert made.columns[0].law.params["labels"] == ("clay", "loam", "sand")
    assert made.columns[0].law.params["probabilities"] == pytest.approx((0.25, 0.5, 0.25))
    with pytest.raises(UserError, match="no column 'z'"):
        spec_from_table(t, drop=("z",))
