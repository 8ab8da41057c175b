"""The compare workflow: two model versions on the same randomized points, with pipeline gates.

Both models are evaluated on exactly the same rows of every randomization
(common random numbers) in one engine job, so the per-randomization
differences of ν and of each total index are paired: their Student-t
intervals are far narrower than those of two independent audits
(``paired=False`` runs the two sides as two jobs on independent points, for
comparison).
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from typing import Any

import numpy as np

from .. import engine
from ..errors import UserError
from ..estimators.intervals import paired_interval, welch_interval
from ..inputs import InputSpec, Law
from ..results import ComparisonResult, Estimate, FeatureEstimate, LayerChange, OutputChange
from ..seeds import independent_seed
from .evaluators import PairedEvaluator
from .gates import ROUNDINGS, Gates, beyond, judge, parse_output_map, rank_agreement
from .options import split_options
from .session import Session, job_block
from .setup import (
    OUTPUTS,
    Setup,
    check_memory,
    check_time,
    inputs_spec,
    prepare,
    resolve_model,
    select_layers,
)
from .summarize import (
    GroupStats,
    design_info,
    estimates,
    inputs_info,
    kept_units,
    layer_result,
    model_info,
    output_results,
)

__all__ = ["compare_models"]


def _change(new: np.ndarray, old: np.ndarray, paired: bool) -> list[Estimate]:
    """Intervals for new − old per column: paired t over randomizations, or Welch for independent runs."""
    return estimates(paired_interval(new, old) if paired else welch_interval(new, old))


def _common_layers(old: Any, new: Any, layers: str | Sequence[str]) -> list[tuple[Any, Any]]:
    """Layers of the old model (as chosen) that the new one has with the same name and unit count."""
    if isinstance(layers, str) and layers == "none":
        return []
    theirs = {x.name: x for x in new.layers()}
    chosen = select_layers(old, layers)
    return [(x, theirs[x.name]) for x in chosen if x.name in theirs and theirs[x.name].units == x.units]


def compare_models(
    old: Any,
    new: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    layers: str | Sequence[str] = "activations",
    output_map: str | Sequence[tuple[int, int]] | None = None,
    gates: Gates | None = None,
    top_k: int = 3,
    paired: bool = True,
    outputs: Sequence[str] | None = None,
    **options: Any,
) -> ComparisonResult:
    """Measure two model versions on the same points and report what changed.

    Parameters
    ----------
    old, new : Model, str or Path
        The two versions: opened models, or paths / references to open.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        As for :func:`audit.audit_model`; both sides share them.
    layers : {"activations", "all", "none"} or list of str
        Hidden layers to compare; only layers with the same name and unit count in
        both models are compared.
    output_map : str or list of (int, int), optional
        Pairs (old output index, new output index), or the text ``"OLD=NEW,..."`` with names
        or 0-based indices of the outputs measured; default: same positions, which needs the
        same number of outputs.
    gates : Gates, optional
        Pipeline limits; the result's ``passed`` is False when any fails.
    top_k : int
        Size of the leading-input sets whose overlap is reported.
    paired : bool
        Same points for both (default). ``False`` uses independent points.
    outputs : list of str, optional
        Output units or tensors measured in both models (default: the spec's ``[outputs] keep``, else all).
    **options
        Design and run options, as for :func:`audit.audit_model`.

    Returns
    -------
    ComparisonResult
    """
    design, run = split_options(options)
    if design.view == "both":
        raise UserError("A comparison measures one view at a time: set `view` to inputs or groups, not both.")
    spec = inputs_spec(inputs)
    old, new = resolve_model(old, spec), resolve_model(new, spec)
    pairs = _common_layers(old, new, layers)
    kw = dict(design=design, block=run.block, memory_limit=run.memory_limit, outputs=outputs)
    so = prepare(old, spec, layers=[a.name for a, _ in pairs], **kw)
    seed = None if paired else independent_seed(design.seed)  # type: ignore[arg-type]
    sn = prepare(new, spec, layers=[b.name for _, b in pairs], seed=seed, **kw)
    if so.design.d != sn.design.d:
        raise UserError(
            f"The two models take different numbers of inputs ({so.design.d} and {sn.design.d}); "
            "a comparison needs the same inputs on both sides."
        )
    ko, kn = len(so.output_names), len(sn.output_names)
    if isinstance(output_map, str):
        output_map = parse_output_map(output_map, so.output_names, sn.output_names)
    if output_map is None:
        if ko != kn:
            raise UserError(
                f"The old model has {ko} outputs and the new one {kn}. Say which to compare with "
                "`output_map` OLD=NEW,... (names or 0-based indices)."
            )
        output_map = [(i, i) for i in range(ko)]
    jobs = []
    if paired:
        groups = [engine.Group("old", ko), engine.Group("new", kn)]
        for a, _ in pairs:
            groups += [engine.Group("old:" + a.name, a.units, False), engine.Group("new:" + a.name, a.units, False)]
        job = engine.Job(
            "compare",
            PairedEvaluator(so.model, sn.model, [(a.name, b.name) for a, b in pairs], so.keep, sn.keep),
            so.design,
            so.estimator,
            groups,
            so.column_names,
            so.dtype if so.dtype == sn.dtype else np.float64,
            identity={"old": so.identity, "new": sn.identity},
        )
        jobs.append(job)
    else:
        for tag, st in (("old", so), ("new", sn)):
            st.groups = [engine.Group(OUTPUTS, len(st.output_names))] + [
                engine.Group("layer:" + x.name, x.units, False) for x in st.layers
            ]
            jobs.append(st.job(tag))
    blocks = [job_block(j, run) for j in jobs]
    check_memory(list(zip(jobs, blocks, strict=True)), run.memory_limit)
    check_time(jobs[0], so.evaluations + sn.evaluations, run.time_budget, blocks[0])
    so.find_relations()
    sn.find_relations()
    t0 = time.perf_counter()
    with Session(run) as session:
        if paired:
            sums = session.run(jobs[0], block=blocks[0])
        else:
            sums = {}
            for tag, job, block in zip(("old", "new"), jobs, blocks, strict=True):
                part = session.run(job, block=block)
                sums[tag] = part[OUTPUTS]
                for a, b in pairs:
                    sums[f"{tag}:{a.name}"] = part["layer:" + (a.name if tag == "old" else b.name)]
    seconds = time.perf_counter() - t0
    return _result(so, sn, sums, pairs, output_map, gates, top_k, paired, seconds, session.notices)


def _result(
    so: Setup,
    sn: Setup,
    sums: dict[str, list[Any]],
    pairs: list[tuple[Any, Any]],
    output_map: Sequence[tuple[int, int]],
    gates: Gates | None,
    top_k: int,
    paired: bool,
    seconds: float,
    notices: list[str],
) -> ComparisonResult:
    ddof = so.design.ddof
    floor = ROUNDINGS * max(float(np.max(so.eps())), float(np.max(sn.eps())))
    g_old, g_new = GroupStats.of(sums["old"], ddof, so.eps()), GroupStats.of(sums["new"], ddof, sn.eps())
    res_old = output_results(g_old, so.output_names, so.names, so.redundant)
    res_new = output_results(g_new, sn.output_names, sn.names, sn.redundant)
    nu_old, nu_new = g_old.ratio(g_old.total_sum), g_new.ratio(g_new.total_sum)
    tot_old = g_old.ratio(g_old.total) if g_old.total is not None else None
    tot_new = g_new.ratio(g_new.total) if g_new.total is not None else None
    outputs = []
    for io, jn in output_map:
        a, b = res_old[io], res_new[jn]
        inert = a.inert or b.inert
        dnu = None if inert else _change(nu_new[:, [jn]], nu_old[:, [io]], paired)[0]
        changes: list[FeatureEstimate] = []
        if not inert and tot_old is not None and tot_new is not None:
            est = _change(tot_new[:, :, jn], tot_old[:, :, io], paired)
            changes = [FeatureEstimate(f, e) for f, e in zip(so.names, est, strict=True)]
        moved = [
            c.feature
            for c in sorted(changes, key=lambda c: -abs(c.value.estimate))
            if beyond(c.value.ci_low, c.value.ci_high, floor) > 0
        ]
        tau, overlap, k = rank_agreement(a, b, top_k)
        name = b.name if b.name == a.name else f"{a.name} → {b.name}"
        outputs.append(OutputChange(name, a, b, dnu, changes, moved, tau, k, overlap))
    layer_changes = []
    for x, _ in pairs:
        sa = GroupStats.of(sums["old:" + x.name], ddof, so.eps("layer:" + x.name))
        sb = GroupStats.of(sums["new:" + x.name], ddof, sn.eps("layer:" + x.name))
        ra, rb = layer_result(x, sa, so.names), layer_result(x, sb, sn.names)
        keep = kept_units(ra) & kept_units(rb)  # the same units on both sides, so the change is paired
        wa, wb = sa.weighted_nu(keep), sb.weighted_nu(keep)
        change = None if np.isnan(wa).all() or np.isnan(wb).all() else _change(wb[:, None], wa[:, None], paired)[0]
        summary_a, summary_b = ra.summary, rb.summary
        layer_changes.append(LayerChange(x.name, x.units, summary_a, summary_b, change))
    design = design_info(so, seconds)
    design["evaluations"] = so.evaluations + sn.evaluations
    design["paired"] = paired
    all_notices = list(dict.fromkeys(so.notices + sn.notices + notices))
    design["rounding_floor"] = floor
    checks = judge(outputs, gates or Gates(), floor)
    return ComparisonResult(
        model_info(so), model_info(sn), inputs_info(so), design, outputs, layer_changes, checks, all_notices
    )
