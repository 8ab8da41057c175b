"""Compare two model versions on the same randomized points, with pipeline gates.

Both models are evaluated on exactly the same rows of every randomization
(common random numbers), so the per-randomization differences of ν and of
each total index are paired: their Student-t intervals are far narrower than
those of two independent audits (``paired=False`` runs the two sides on
independent points, for comparison).
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

from . import engine
from .design import resolve_seed
from .errors import UserError
from .inputs import InputSpec, Law
from .models.base import Model
from .results import ComparisonResult, Estimate, FeatureEstimate, GateCheck, LayerChange, OutputChange
from .studies import (
    LEVEL,
    OUTPUTS,
    GroupStats,
    Setup,
    design_info,
    inputs_info,
    intervals,
    layer_result,
    model_info,
    output_results,
    prepare,
    select_layers,
)

__all__ = ["Gates", "compare_models", "parse_output_map"]


@dataclass(frozen=True)
class Gates:
    """Limits a comparison must respect to pass (``None``: not checked).

    Attributes
    ----------
    max_dimension_rise : float, optional
        Largest allowed rise of ν for any output, judged on the lower end of the
        paired interval (noise alone never fails it).
    min_rank_agreement : float, optional
        Smallest allowed Kendall τ between the old and new total-index rankings.
    max_index_shift : float, optional
        Largest allowed change of any input's normalised total index, judged on the
        end of its interval nearest 0 (0 when the interval contains 0).
    """

    max_dimension_rise: float | None = None
    min_rank_agreement: float | None = None
    max_index_shift: float | None = None


def parse_output_map(text: str, old_names: Sequence[str], new_names: Sequence[str]) -> list[tuple[int, int]]:
    """Parse ``OLD=NEW,...`` (names or 0-based indices) into index pairs."""

    def index(tok: str, names: Sequence[str], side: str) -> int:
        tok = tok.strip()
        if tok in names:
            return list(names).index(tok)
        if tok.isdigit() and int(tok) < len(names):
            return int(tok)
        raise UserError(
            f"--output-map: '{tok}' is not an output of the {side} model; its outputs are "
            f"{', '.join(names)} (or indices 0..{len(names) - 1})."
        )

    pairs = []
    for item in text.split(","):
        if "=" not in item:
            raise UserError(f"--output-map takes OLD=NEW pairs separated by commas, e.g. 'y=temp,1=2'; got '{item}'.")
        a, b = item.split("=", 1)
        pairs.append((index(a, old_names, "old"), index(b, new_names, "new")))
    return pairs


def _diff_interval(new: np.ndarray, old: np.ndarray, paired: bool) -> list[Estimate]:
    """Intervals for new − old per column: paired t over randomizations, or Welch for independent runs."""
    if paired:
        return intervals(new - old)
    r = new.shape[0]
    est = np.nanmean(new, axis=0) - np.nanmean(old, axis=0)
    v1, v2 = np.nanvar(new, axis=0, ddof=1) / r, np.nanvar(old, axis=0, ddof=1) / r
    se = np.sqrt(v1 + v2)
    with np.errstate(invalid="ignore", divide="ignore"):
        df = (v1 + v2) ** 2 / (v1**2 / (r - 1) + v2**2 / (r - 1))
    q = stats.t.ppf(0.5 + LEVEL / 2, np.where(np.isfinite(df), df, 2 * r - 2))
    return [
        Estimate(float(e), float(e - h), float(e + h), float(s))
        for e, h, s in zip(np.atleast_1d(est), np.atleast_1d(q * se), np.atleast_1d(se), strict=True)
    ]


def _weighted_nu(st: GroupStats) -> np.ndarray:
    live = ~st.inert
    if not live.any():
        return np.full(st.var.shape[0], np.nan)
    return st.total_sum[:, live].sum(axis=1) / st.var[:, live].sum(axis=1)


def _paired_evaluator(a: Setup, b: Setup, layers: Sequence[str]) -> engine.Evaluator:
    cap_a, cap_b = [x.name for x in a.layers], [x.name for x in b.layers]

    def evaluate(x: np.ndarray) -> dict[str, np.ndarray]:
        ea, eb = a.model.evaluate(x, cap_a), b.model.evaluate(x, cap_b)
        out = {"old": ea.outputs, "new": eb.outputs}
        for name in layers:
            out["old:" + name] = ea.hidden[name]
            out["new:" + name] = eb.hidden[name]
        return out

    return evaluate


def compare_models(
    old: Model,
    new: Model,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    points: int = 1024,
    replicates: int = 8,
    seed: int | np.random.Generator | None = None,
    sampler: str = "sobol",
    estimator: str = "jansen",
    layers: str | Sequence[str] = "activations",
    output_map: Sequence[tuple[int, int]] | None = None,
    gates: Gates | None = None,
    top_k: int = 3,
    paired: bool = True,
    progress: Callable[[int, str], None] | None = None,
) -> ComparisonResult:
    """Measure two model versions on the same points and report what changed.

    Parameters
    ----------
    old, new : Model
        The two versions (either may be a Python callable model).
    inputs, points, replicates, seed, sampler, estimator
        As for :func:`audit.audit_model`; both sides share them.
    layers : {"activations", "all", "none"} or list of str
        Hidden layers to compare; only layers with the same name and unit count in
        both models are compared.
    output_map : list of (int, int), optional
        Pairs (old output index, new output index); default: same positions, which
        needs the same number of outputs.
    gates : Gates, optional
        Pipeline limits; the result's ``passed`` is False when any fails.
    top_k : int
        Size of the leading-input sets whose overlap is reported.
    paired : bool
        Same points for both (default). ``False`` uses independent points.

    Returns
    -------
    ComparisonResult
    """
    seed_int = resolve_seed(seed)
    kw = dict(points=points, replicates=replicates, sampler=sampler, estimator=estimator, layers="none")
    so = prepare(old, inputs, seed=seed_int, **kw)
    sn = prepare(new, inputs, seed=seed_int if paired else (seed_int + 0x5EED) % 2**63, **kw)
    if so.design.d != sn.design.d:
        raise UserError(
            f"The two models take different numbers of inputs ({so.design.d} and {sn.design.d}); "
            "a comparison needs the same inputs on both sides."
        )
    ko, kn = len(so.output_names), len(sn.output_names)
    if output_map is None:
        if ko != kn:
            raise UserError(
                f"The old model has {ko} outputs and the new one {kn}. Say which to compare with "
                "--output-map OLD=NEW,... (names or 0-based indices)."
            )
        output_map = [(i, i) for i in range(ko)]
    # hidden layers present in both, same name and unit count
    new_layers = {x.name: x for x in new.layers()}
    common = [x for x in select_layers(old, layers) if x.name in new_layers and new_layers[x.name].units == x.units]
    so.layers = common
    sn.layers = [new_layers[x.name] for x in common]
    sampler_name = so.design.sampler
    t0 = time.perf_counter()
    if paired:
        groups = [engine.Group("old", ko), engine.Group("new", kn)]
        for x in common:
            groups += [engine.Group("old:" + x.name, x.units, False), engine.Group("new:" + x.name, x.units, False)]
        accs = engine.run(
            _paired_evaluator(so, sn, [x.name for x in common]),
            so.design,
            groups,
            so.estimator,
            progress=progress,
            feature_names=so.names,
            dtype=so.dtype if so.dtype == sn.dtype else np.float64,
        )
    else:
        accs = {}
        for tag, st in (("old", so), ("new", sn)):
            st.groups = [engine.Group(OUTPUTS, len(st.output_names))] + [
                engine.Group("layer:" + x.name, x.units, False) for x in st.layers
            ]
            part = engine.run(
                st.evaluator(),
                st.design,
                st.groups,
                st.estimator,
                progress=progress,
                feature_names=st.names,
                dtype=st.dtype,
            )
            accs[tag] = part[OUTPUTS]
            for x in common:
                accs[f"{tag}:{x.name}"] = part["layer:" + x.name]
    seconds = time.perf_counter() - t0

    g_old, g_new = GroupStats.of(accs["old"], sampler_name), GroupStats.of(accs["new"], sampler_name)
    res_old = output_results(g_old, so.output_names, so.names)
    res_new = output_results(g_new, sn.output_names, sn.names)
    nu_old, nu_new = g_old.ratio(g_old.total_sum), g_new.ratio(g_new.total_sum)
    tot_old = g_old.ratio(g_old.total) if g_old.total is not None else None
    tot_new = g_new.ratio(g_new.total) if g_new.total is not None else None
    outputs = []
    for io, jn in output_map:
        a, b = res_old[io], res_new[jn]
        inert = a.inert or b.inert
        dnu = None if inert else _diff_interval(nu_new[:, [jn]], nu_old[:, [io]], paired)[0]
        changes: list[FeatureEstimate] = []
        if not inert and tot_old is not None and tot_new is not None:
            est = _diff_interval(tot_new[:, :, jn], tot_old[:, :, io], paired)
            changes = [FeatureEstimate(f, e) for f, e in zip(so.names, est, strict=True)]
        moved = [
            c.feature
            for c in sorted(changes, key=lambda c: -abs(c.value.estimate))
            if c.value.ci_low > 0 or c.value.ci_high < 0
        ]
        tau, overlap, k = _rank_agreement(a, b, top_k)
        outputs.append(
            OutputChange(
                b.name if b.name == a.name else f"{a.name} → {b.name}", a, b, dnu, changes, moved, tau, k, overlap
            )
        )
    layer_changes = []
    for x in common:
        sa, sb = GroupStats.of(accs["old:" + x.name], sampler_name), GroupStats.of(accs["new:" + x.name], sampler_name)
        wa, wb = _weighted_nu(sa), _weighted_nu(sb)
        change = (
            None if np.isnan(wa).all() or np.isnan(wb).all() else _diff_interval(wb[:, None], wa[:, None], paired)[0]
        )
        layer_changes.append(
            LayerChange(
                x.name,
                x.units,
                layer_result(x, sa, so.names).summary,
                layer_result(x, sb, sn.names).summary,
                change,
            )
        )
    design = design_info(so, seconds)
    design["evaluations"] = so.evaluations + sn.evaluations
    design["paired"] = paired
    notices = list(dict.fromkeys(so.notices + sn.notices))
    checks = _judge(outputs, gates or Gates())
    return ComparisonResult(
        model_info(so), model_info(sn), inputs_info(so), design, outputs, layer_changes, checks, notices
    )


def _rank_agreement(a, b, top_k: int) -> tuple[float, float, int]:
    if a.inert or b.inert or not a.total_index:
        return float("nan"), float("nan"), 0
    x = [f.value.estimate for f in a.total_index]
    y = [f.value.estimate for f in b.total_index]
    tau = round(float(stats.kendalltau(x, y).statistic), 12) if len(x) > 1 else 1.0  # 1 − 1e-16 is 1
    k = min(top_k, len(x))
    top_a = {f.feature for f in a.ranked()[:k]}
    top_b = {f.feature for f in b.ranked()[:k]}
    return tau, len(top_a & top_b) / k, k


def _judge(outputs: list[OutputChange], gates: Gates) -> list[GateCheck]:
    checks = []
    if gates.max_dimension_rise is not None:
        lows = [(o.mean_dimension_change.ci_low, o.name) for o in outputs if o.mean_dimension_change is not None]
        value, where = max(lows) if lows else (float("-inf"), "")
        checks.append(
            GateCheck(
                "max_dimension_rise",
                gates.max_dimension_rise,
                value,
                value <= gates.max_dimension_rise,
                f"largest lower end of a ν change: {value:.4g} ({where})" if where else "no comparable outputs",
            )
        )
    if gates.min_rank_agreement is not None:
        taus = [(o.kendall_tau, o.name) for o in outputs if np.isfinite(o.kendall_tau)]
        value, where = min(taus) if taus else (float("nan"), "")
        checks.append(
            GateCheck(
                "min_rank_agreement",
                gates.min_rank_agreement,
                value,
                bool(taus) and value >= gates.min_rank_agreement,
                f"lowest Kendall τ of the total-index rankings: {value:.4g} ({where})" if where else "no rankings",
            )
        )
    if gates.max_index_shift is not None:
        worst, where = 0.0, ""
        for o in outputs:
            for c in o.total_index_change:
                lo, hi = c.value.ci_low, c.value.ci_high
                shift = 0.0 if lo <= 0 <= hi else min(abs(lo), abs(hi))
                if shift > worst:
                    worst, where = shift, f"{c.feature} in {o.name}"
        checks.append(
            GateCheck(
                "max_index_shift",
                gates.max_index_shift,
                worst,
                worst <= gates.max_index_shift,
                f"largest total-index shift (interval end nearest 0): {worst:.4g}" + (f" ({where})" if where else ""),
            )
        )
    return checks
