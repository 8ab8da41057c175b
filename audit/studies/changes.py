"""What changed between two sides of a comparison, and the gates judged on it.

A :class:`Side` is one model's view of the same points: its input and output
names, its output results, the per-randomization :class:`GroupStats` of its
outputs and of its hidden layers. It comes from a fresh run or from a saved
audit report (its kept per-randomization values). :func:`compare_sides` forms
the paired (or, for independent points, Welch) intervals of every change —
ν, each total and first-order index, the variance, the rank agreement, the
leading set, each common hidden layer's weighted ν — and judges the gates
(:mod:`audit.studies.gates`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..estimators.intervals import paired_interval, welch_interval
from ..models.base import LayerInfo
from ..results import Estimate, FeatureEstimate, GateCheck, LayerChange, LayerResult, OutputChange, OutputResult
from .gates import Gates, check_change, check_least
from .ranking import rank_agreement, top_k_kept
from .summarize import GroupStats, estimates, kept_units, layer_result

__all__ = ["Side", "compare_sides"]


@dataclass
class Side:
    """One model's view of the comparison's points."""

    names: list[str]
    output_names: list[str]
    outputs: list[OutputResult]
    stats: GroupStats
    layers: dict[str, tuple[LayerInfo, GroupStats, LayerResult]] = field(default_factory=dict)
    floor: float = 0.0


def _change(new: np.ndarray, old: np.ndarray, paired: bool) -> list[Estimate]:
    """Intervals for new − old per column: paired t over randomizations, or Welch for independent runs."""
    return estimates(paired_interval(new, old) if paired else welch_interval(new, old))


def _kendall(a: Sequence[float], b: Sequence[float]) -> float:
    from scipy import stats

    if len(a) < 2:
        return 1.0
    tau = stats.kendalltau(a, b).statistic
    return round(float(tau), 12) if np.isfinite(tau) else 1.0  # 1 − 1e-16 is 1; constant rankings agree


def _output_change(old: Side, new: Side, io: int, jn: int, gates: Gates, paired: bool) -> OutputChange:
    a, b = old.outputs[io], new.outputs[jn]
    go, gn = old.stats, new.stats
    name = b.name if b.name == a.name else f"{a.name} → {b.name}"
    with np.errstate(invalid="ignore", divide="ignore"):
        dvar = _change(gn.var[:, [jn]] / go.var[:, [io]] - 1.0, np.zeros((go.var.shape[0], 1)), paired)[0]
    if a.inert or b.inert:
        return OutputChange(name, a, b, None, [], [], float("nan"), 0, float("nan"), variance_change=dvar)
    nu_o, nu_n = go.ratio(go.total_sum)[:, [io]], gn.ratio(gn.total_sum)[:, [jn]]
    dnu = _change(nu_n, nu_o, paired)[0]
    totals, firsts = [], []
    if go.total is not None and gn.total is not None:
        to, tn = go.ratio(go.total)[:, :, io], gn.ratio(gn.total)[:, :, jn]
        totals = [FeatureEstimate(f, e) for f, e in zip(old.names, _change(tn, to, paired), strict=True)]
    if go.first is not None and gn.first is not None:
        fo, fn = go.ratio(go.first)[:, :, io], gn.ratio(gn.first)[:, :, jn]
        firsts = [FeatureEstimate(f, e) for f, e in zip(old.names, _change(fn, fo, paired), strict=True)]
    tolerance = max(gates.total_index if gates.total_index is not None else 0.0, old.floor, new.floor)
    moved = [
        c.feature
        for c in sorted(totals, key=lambda c: -abs(c.value.estimate))
        if c.value.ci_low > tolerance or c.value.ci_high < -tolerance
    ]
    agreement, ranked, swapped, tau, kept, k = None, 0, 0, float("nan"), float("nan"), 0
    if a.total_index and b.total_index:
        ea, eb = [f.value for f in a.total_index], [f.value for f in b.total_index]
        agreement, ranked, swapped = rank_agreement(
            ea, eb, go.ratio(go.total)[:, :, io], gn.ratio(gn.total)[:, :, jn], gates.matter
        )
        keep = [j for j in range(len(ea)) if ea[j].estimate >= gates.matter or eb[j].estimate >= gates.matter]
        tau = _kendall([ea[j].estimate for j in keep], [eb[j].estimate for j in keep])
        kept, k = top_k_kept(ea, eb, gates.top_k)
    return OutputChange(name, a, b, dnu, totals, moved, tau, k, kept, agreement, ranked, swapped, firsts, dvar)


def _layer_change(name: str, old: Side, new: Side, paired: bool) -> LayerChange:
    info, sa, ra = old.layers[name]
    _, sb, rb = new.layers[name]
    keep = kept_units(ra) & kept_units(rb)  # the same units on both sides, so the change is paired
    wa, wb = sa.weighted_nu(keep), sb.weighted_nu(keep)
    change = None if np.isnan(wa).all() or np.isnan(wb).all() else _change(wb[:, None], wa[:, None], paired)[0]
    return LayerChange(name, info.units, ra.summary, rb.summary, change)


def judge(outputs: list[OutputChange], layers: list[LayerChange], gates: Gates, floor: float) -> list[GateCheck]:
    """Every gate that is on, judged on the changes."""
    live = [o for o in outputs if o.mean_dimension_change is not None]
    nu = [(o.name, o.mean_dimension_change) for o in live]
    totals = [(f"{c.feature} in {o.name}", c.value) for o in live for c in o.total_index_change]
    firsts = [(f"{c.feature} in {o.name}", c.value) for o in live for c in o.first_order_change]
    variances = [(o.name, o.variance_change) for o in outputs if o.variance_change is not None]
    ranks = [(o.name, o.rank_agreement) for o in live if o.rank_agreement is not None]
    kept = [(o.name, Estimate(o.top_k_overlap, o.top_k_overlap, o.top_k_overlap, 0.0)) for o in live if o.top_k]
    layered = [(x.name, x.nu_weighted_change) for x in layers if x.nu_weighted_change is not None]
    checks = [
        check_change("mean_dimension", gates.mean_dimension, nu, "outputs' ν", floor),
        check_change("dimension_rise", gates.dimension_rise, nu, "outputs' ν (rises)", floor, rise_only=True),
        check_change("total_index", gates.total_index, totals, "total indices", floor),
        check_change("first_order", gates.first_order, firsts, "first-order indices", floor),
        check_least("ranking", gates.ranking, ranks, f"rankings of the inputs that matter (≥ {gates.matter:g})"),
        check_least("top_k_kept", gates.top_k_kept, kept, f"top-{gates.top_k} sets"),
        check_change("layer_mean_dimension", gates.layer_mean_dimension, layered, "hidden layers' weighted ν", floor),
        check_change("variance", gates.variance, variances, "output variances (relative)", floor),
    ]
    return [c for c in checks if c is not None]


def compare_sides(
    old: Side,
    new: Side,
    output_map: Sequence[tuple[int, int]],
    layer_names: Sequence[str],
    gates: Gates,
    paired: bool,
) -> tuple[list[OutputChange], list[LayerChange], list[GateCheck], dict[str, Any]]:
    """Changes of every mapped output and common layer, the gates judged, and what the report records of them."""
    floor = max(old.floor, new.floor)
    outputs = [_output_change(old, new, io, jn, gates, paired) for io, jn in output_map]
    layers = [_layer_change(name, old, new, paired) for name in layer_names]
    checks = judge(outputs, layers, gates, floor)
    return outputs, layers, checks, {"gates": gates.settings(), "rounding_floor": floor}


def side_layers(infos: Sequence[LayerInfo], stats: dict[str, GroupStats], names: list[str]) -> dict:
    """``Side.layers`` from layer infos and their stats (results made here)."""
    return {x.name: (x, stats[x.name], layer_result(x, stats[x.name], names)) for x in infos}
