"""advise against exact answers: ν after pre-integration, the variance identity, the step ridge.

Reference values and where they come from:

- Integrating x_ℓ out of Φ(s θᵀx − t) gives the ridge Φ((s θ_{−ℓ}ᵀ x_{−ℓ} − t) / √(1 + s² θ_ℓ²)),
  whose exact ANOVA follows from its Hermite expansion (tests/advice_cases.py, tests/exact.py,
  DESIGN.md §2).
- Ishigami function: analytic variance terms from "An importance
  quantification technique in uncertainty analysis for computer models",
  Proc. ISUMA '90, 1990 (tests/exact.py).
- Var E[f | x_{−ℓ}] = σ² − τ̄²_ℓ follows from the ANOVA decomposition (common practice, no source).

Statistical checks use fixed seeds; tolerances are the estimators' own 95 %
intervals or a stated multiple of their standard errors. Over seeds 0..19 the
95 % interval of ν after on the Φ ridge covered the exact value for 48 of 55
candidates (87 %, R = 8; the project's coverage target is 85 %), which is why
only the top candidate is held to its interval and the others to 4 standard
errors.
"""

from pathlib import Path

import exact
import numpy as np
from advice_cases import THETA, reduced_exact, step, step_theta

from audit import Law, audit_function
from audit.inputs import load_spec
from audit.quadrature import MAX_NODES, PreIntegrated
from audit.report.text import fmt
from audit.studies import advise_function
from model_zoo.functions import ishigami

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


def test_advise_phi_ridge_against_exact(ridge_advice):
    out = ridge_advice.outputs[0]
    # exact ν after for every candidate, from the Hermite expansion of the reduced ridge
    exact_nu = {c.feature: reduced_exact(int(c.feature[1:]))["nu"] for c in out.preintegrate}
    top = out.preintegrate[0]
    assert top.feature == f"x{int(np.argmax(np.abs(THETA)))}"  # the largest |θ_ℓ|
    assert top.mean_dimension_after.covers(exact_nu[top.feature])
    assert exact_nu[top.feature] == min(exact_nu.values())  # ranking by ν after is right
    for c in out.preintegrate:
        nu = c.mean_dimension_after
        assert abs(nu.estimate - exact_nu[c.feature]) < 4 * nu.std_error
        assert c.variance_identity.agree and c.converged and 4 <= c.nodes <= 32
        assert c.quadrature_error < 1e-3
    # ν drops: the audit's own ν of f is the exact 1.2376 within its interval (validation.json)
    assert out.audit.mean_dimension.ci_low > top.mean_dimension_after.ci_high


def test_variance_identity_on_ishigami():
    spec = load_spec(ZOO / "ishigami.toml")
    res = advise_function(ishigami, spec, points=1024, replicates=8, seed=3, gain_points=())
    ref = exact.ishigami()
    var, total = ref["variance"], ref["total"] * ref["variance"]
    out = res.outputs[0]
    assert {c.feature for c in out.preintegrate} == {"x1", "x2", "x3"}
    for c in out.preintegrate:
        j = int(c.feature[1:]) - 1
        vi = c.variance_identity
        assert vi.agree, c.feature
        assert vi.measured.covers(var - total[j]), c.feature
        assert vi.predicted.covers(var - total[j]), c.feature
    # x1 out leaves a sin² x2 (ν = 1 exactly) and so does x3 out (an additive function)
    assert out.best.feature in ("x1", "x3") and out.best.mean_dimension_after.covers(1.0)
    assert out.rqmc_gain is None and res.design["evaluations_by_phase"]["gain"] == 0


def test_step_ridge_mean_dimension_trend():
    # ν of a step ridge grows like √d; integrating the leading input out leaves
    # Φ((θ_{−1}ᵀx − t)/θ_1), whose ν stays near 1 (exact: 1.07, 1.11, 1.12).
    # Gauss rules resolve a step only to O(1/m), so the cap (256 nodes) is used.
    nu_f, nu_g = [], []
    for d in (4, 16, 64):
        f = step(step_theta(d))
        a = audit_function(f, "normal", dim=d, estimator="fast", points=1024, replicates=8, seed=5)
        g = PreIntegrated(f, [Law("normal")] * d, 0, nodes=MAX_NODES)
        b = audit_function(g, "normal", dim=d - 1, estimator="fast", points=1024, replicates=8, seed=6)
        nu_f.append(a.outputs[0].mean_dimension)
        nu_g.append(b.outputs[0].mean_dimension)
    print("nu of f:", [fmt(e.estimate) for e in nu_f], "nu of f~:", [fmt(e.estimate) for e in nu_g])
    assert nu_f[2].ci_low > 2.5 * nu_f[0].ci_high  # grows (√16 = 4 in the limit)
    assert all(e.ci_high < 1.6 for e in nu_g)  # order 1 at every d
    assert nu_g[2].estimate - nu_g[0].estimate < 0.25 * (nu_f[2].estimate - nu_f[0].estimate)
