"""Plain-language findings of an advise run: what pre-integration and freezing buy.

The rules (common practice, no source): ν after is "lower" when its interval
lies wholly below ν's (or the pre-integrated output is constant);
pre-integration "pays" when the extrapolated variance ratio at equal cost in
model evaluations exceeds 1; the variance check Var f̃ = σ² − τ̄²_ℓ holds
when the interval of the difference contains 0.
"""

from __future__ import annotations

import math

from ...results import AdviceResult, Estimate, RqmcGain
from ..text import fmt, fmt_count, fmt_percent, listing
from .base import Finding

__all__ = ["derive_advice_findings", "lowers"]


def lowers(before: Estimate | None, after: Estimate | None) -> bool:
    """True when ``after`` is constant (``None``) or its interval lies wholly below ``before``'s."""
    return after is None or (before is not None and after.ci_high < before.ci_low)


def _times(ratio: float) -> str:
    if not math.isfinite(ratio) or ratio >= 1:
        return f"is {fmt(ratio, 3)} times smaller"
    return f"is {fmt(1 / ratio, 3)} times larger"


def _per_output(result: AdviceResult) -> tuple[list[Finding], list[str], list[tuple[str, RqmcGain]]]:
    """Findings of each output's best candidate and gain; outputs without gain; costly gains."""
    out: list[Finding] = []
    flat: list[str] = []
    costly: list[tuple[str, RqmcGain]] = []
    for o in result.outputs:
        nu, best = o.audit.mean_dimension, o.best
        if best is None or nu is None:
            continue
        after = best.mean_dimension_after
        if lowers(nu, after):
            what = (
                "makes it constant"
                if after is None
                else f"lowers its mean dimension from {fmt(nu.estimate)} to {fmt(after.estimate)}"
            )
            text = f"{o.name}: integrating {best.feature} out with {best.nodes} Gauss nodes {what}."
            out.append(Finding("preintegrate", text, (o.name, best.feature)))
        else:
            flat.append(o.name)
        g = o.rqmc_gain
        if g is None or not g.rows:
            continue
        if math.isfinite(g.equal_cost_ratio) and g.equal_cost_ratio < 1:
            costly.append((o.name, g))
            continue
        out.append(
            Finding(
                "gain",
                f"{o.name}: with {g.feature} integrated out the RQMC variance of the estimated "
                f"mean {_times(g.ratio)} at n = {fmt_count(g.rows[-1].points)} (slope "
                f"{fmt(g.slope_before, 3)} → {fmt(g.slope_after, 3)}); at equal cost in model "
                f"evaluations about {fmt(g.equal_cost_ratio, 3)} times smaller (extrapolated).",
                (o.name, g.feature),
            )
        )
    return out, flat, costly


def _freezing(result: AdviceResult) -> list[Finding]:
    out: list[Finding] = []
    groups: dict[str, list[str]] = {}
    for o in result.outputs:
        g = o.freeze_group
        if g is None:
            continue
        groups[o.name] = g.features
        out.append(
            Finding(
                "freeze",
                f"{o.name}: {listing(g.features)} can be frozen; at a random value the mean "
                f"squared change is at most {fmt_percent(g.bound_normalised.ci_high)} of the variance "
                f"(measured {fmt_percent(g.measured_normalised.estimate)}).",
                (o.name, *g.features),
            )
        )
        if not g.holds:
            out.append(
                Finding(
                    "freeze_bound",
                    f"{o.name}: the measured change of freezing exceeds the bound's upper end; "
                    "rerun with more points before relying on it.",
                    (o.name,),
                )
            )
    live = [o for o in result.outputs if not o.audit.inert and o.audit.total_index]
    if groups and len(live) > 1 and len(groups) == len(live):
        common = [f for f in next(iter(groups.values())) if all(f in g for g in groups.values())]
        if common:
            out.append(
                Finding(
                    "freeze_everywhere",
                    f"Frozen for every output: {listing(common)}. They can be fixed at nominal "
                    "values in the model's deployment inputs.",
                    tuple(common),
                )
            )
    return out


def derive_advice_findings(result: AdviceResult) -> list[Finding]:
    """Plain-language findings of an advise run.

    Parameters
    ----------
    result : AdviceResult
        The advise run.

    Returns
    -------
    list of Finding
        Kinds, in order: ``"preintegrate"`` and ``"gain"`` (per output),
        ``"no_gain"``, ``"costly"``, ``"identity"``, ``"quadrature"``, ``"freeze"``,
        ``"freeze_bound"``, ``"freeze_everywhere"``, ``"inert"``.
    """
    out, flat, costly = _per_output(result)
    if flat:
        out.append(
            Finding(
                "no_gain",
                f"No input lowers the mean dimension measurably when integrated out for "
                f"{listing(flat)}: their ν-after intervals overlap ν's.",
                tuple(flat),
            )
        )
    if costly:
        items = [
            f"{name} ({g.feature} out: variance ratio {fmt(g.ratio, 3)} at equal n, "
            f"{fmt(g.equal_cost_ratio, 3)} at equal cost)"
            for name, g in costly
        ]
        out.append(
            Finding(
                "costly",
                "Pre-integration does not pay for estimating the mean at equal cost in model "
                f"evaluations for {listing(items)}: the variance falls by less than the node "
                "count multiplies the cost of a point. Integrate such inputs out for the lower "
                "mean dimension, not for cheaper means.",
                tuple(name for name, _ in costly),
            )
        )
    bad = [(o.name, c.feature) for o in result.outputs for c in o.preintegrate if not c.variance_identity.agree]
    if bad:
        out.append(
            Finding(
                "identity",
                "The variance check (variance after = σ² minus the input's total index) fails for "
                + listing([f"{f} ({n})" for n, f in bad])
                + ": the Gauss rule may be too coarse or the run too short; raise the nodes or "
                "the points.",
                tuple(dict.fromkeys(f for _, f in bad)),
            )
        )
    rough = sorted({c.feature for o in result.outputs for c in o.preintegrate if not c.converged})
    if rough:
        out.append(
            Finding(
                "quadrature",
                f"The Gauss rule did not settle for {listing(rough)} (the model is probably not "
                "smooth in them); their ν after holds for the rule used, not for the exact "
                "integral.",
                tuple(rough),
            )
        )
    out += _freezing(result)
    inert = [o.name for o in result.outputs if o.audit.inert]
    if inert:
        out.append(
            Finding(
                "inert",
                f"Constant under these input laws, nothing to advise: {listing(inert)}.",
                tuple(inert),
            )
        )
    return out
