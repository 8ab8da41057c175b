"""Which inputs interact (audit.studies.pairs): superset importance of pairs and the spread of the dimension.

References: f = x1·x2 + x3·x4·x5 + x6 with independent N(0, 1) inputs has three ANOVA terms of
variance 1 each — the pair {1,2}, the triple {3,4,5} and the main effect {6} — so the superset
importance of a pair is 1/3 when the pair lies inside {1,2} or {3,4,5} and 0 otherwise, and |u|
takes 1, 2, 3 with probability 1/3 each: E|u| = 2, E|u|² = 14/3, spread 2/3 (common practice, no
source). Ishigami: Υ²_{13} = V13 / V from the published variance terms ("An importance
quantification technique in uncertainty analysis for computer models", Proc. ISUMA '90, 1990;
tests/exact.py).
"""

from pathlib import Path

import exact
import numpy as np
from scipy import stats

from audit import audit_function
from audit.cli import main
from audit.inputs import Law
from audit.studies.pairs import leading_inputs
from model_zoo.functions import ishigami

ROOT = Path(__file__).resolve().parents[2]
R = 8
FAMILY_ERROR = 0.01


def _f(x):
    return x[:, 0] * x[:, 1] + x[:, 2] * x[:, 3] * x[:, 4] + x[:, 5]


def test_every_pair_and_the_spread_against_the_anova_terms():
    r = audit_function(_f, "normal", dim=6, points=2048, replicates=R, seed=3, pairs=6)
    out = r.outputs[0]
    assert len(out.pairs) == 15 and r.design["pairs"]["all_inputs"]
    bound = float(stats.t.ppf(1 - FAMILY_ERROR / (2 * 16), R - 1))  # Bonferroni over 15 pairs and the spread
    inside = {("x0", "x1"), ("x2", "x3"), ("x2", "x4"), ("x3", "x4")}
    for p in out.pairs:
        exact_value = 1 / 3 if (p.first, p.second) in inside else 0.0
        if exact_value == 0.0:
            assert abs(p.value.estimate) <= 1e-12, p  # no term holds both: every second difference is 0
        else:
            assert abs(p.value.estimate - exact_value) <= bound * p.value.std_error, p
    spread = out.dimension_spread
    assert abs(spread.estimate - 2 / 3) <= bound * spread.std_error, spread
    assert r.design["evaluations"] == 2048 * R * (8 + 1 + 6 + 15)  # Jansen N(d + 2) plus N(1 + K + K(K-1)/2)


def test_ishigami_pair_of_x1_and_x3():
    v13 = float(exact.ishigami()["total"][2])  # x3 acts only through the pair {1, 3}: its total is V13 / V
    laws = [Law("uniform", {"low": -np.pi, "high": np.pi})] * 3
    r = audit_function(ishigami, laws, points=4096, replicates=R, seed=4, pairs=3)
    by = {(p.first, p.second): p.value for p in r.outputs[0].pairs}
    assert by[("x0", "x2")].covers(v13), (by[("x0", "x2")], v13)
    assert abs(by[("x0", "x1")].estimate) <= 1e-12 and abs(by[("x1", "x2")].estimate) <= 1e-12


def test_leading_inputs_take_the_largest_totals_of_any_output():
    r = audit_function(lambda x: np.stack([x[:, 0] + 0.1 * x[:, 1], x[:, 2]], axis=1), "normal", dim=4,
                       points=256, replicates=4, seed=5)  # fmt: skip
    assert leading_inputs(r.outputs, 2) == [0, 2]


def test_pairs_from_the_command_line(capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    args = ["audit", "model_zoo.functions:ishigami", "--inputs", "model_zoo/ishigami.toml", "--points", "512",
            "--pairs", "--no-save", "--seed", "1"]  # fmt: skip
    assert main(args) == 0
    assert "Strongest pairs" in capsys.readouterr().out


def test_pairs_of_fewer_inputs_than_d_name_the_spread_they_measure():
    """With K < d leading inputs the second moment is that of |u ∩ K|: for the additive f = Σ x_j (d = 4, K = 2)
    |u ∩ K| is 1 on two of the four equal main effects and 0 on the others, a spread of 1/4, not the 0 of |u|."""
    from audit.report.sections.audit import pairs_blocks

    r = audit_function(lambda x: x.sum(axis=1), "normal", dim=4, points=1024, replicates=R, seed=6, pairs=2)
    out = r.outputs[0]
    assert not r.design["pairs"]["all_inputs"]
    bound = float(stats.t.ppf(1 - FAMILY_ERROR / 2, R - 1))
    assert abs(out.dimension_spread.estimate - 0.25) <= bound * out.dimension_spread.std_error
    text = " ".join(b.text for b in pairs_blocks(out) if hasattr(b, "text"))
    assert "among the 2 paired inputs K (variance of |u ∩ K|" in text and "over all 4 inputs" in text
