"""The compare workflow: two model versions on the same randomized points, with pipeline gates.

Both models are evaluated on exactly the same rows of every randomization
(common random numbers) in one engine job, so the per-randomization
differences of ν and of each index are paired: their Student-t intervals are
far narrower than those of two independent audits (``paired=False`` runs the
two sides as two jobs on independent points, for comparison).

The old side may also be a saved audit report (a baseline): its design, laws
and per-randomization values are read from it, the new model is audited on
exactly the same points, and the paired intervals are those of a run of both
models together.
"""

from __future__ import annotations

import json
import time
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from .. import engine
from ..errors import UserError
from ..inputs import InputSpec, Law
from ..models.base import LayerInfo
from ..results import AuditResult, ComparisonResult, result_from_dict
from ..seeds import independent_seed
from .baseline import baseline_design, baseline_spec, with_output_names
from .changes import Side, compare_sides, side_layers
from .evaluators import PairedEvaluator
from .gates import ROUNDINGS, Gates, parse_output_map
from .options import DesignOptions, split_options
from .replicates import from_json
from .session import Session, job_block
from .setup import OUTPUTS, Setup, check_memory, check_time, inputs_spec, prepare, resolve_model, select_layers
from .summarize import GroupStats, design_info, inputs_info, model_info, output_results

__all__ = ["compare_models", "load_baseline"]


def load_baseline(old: Any) -> AuditResult | None:
    """The saved audit report ``old`` names (a path to a ``.json`` report, or the result itself), or None."""
    if isinstance(old, AuditResult):
        return old
    if not isinstance(old, str | Path) or not str(old).lower().endswith(".json"):
        return None
    path = Path(old)
    if not path.is_file():
        raise UserError(f"The baseline report '{old}' does not exist or is not a file.")
    try:
        result = result_from_dict(json.loads(path.read_text(encoding="utf-8")))
    except (json.JSONDecodeError, UnicodeDecodeError, ValueError, RecursionError) as exc:
        raise UserError(f"'{old}' is not a netdim report this version can read: {exc}.") from exc
    if not isinstance(result, AuditResult):
        raise UserError(f"'{old}' is a {result.kind} report; a baseline must be an audit report (`netdim audit`).")
    return result


def _common_layers(old: Any, new: Any, layers: str | Sequence[str]) -> tuple[list[tuple[Any, Any]], list[str]]:
    """Layers of the old model (as chosen) that the new one has with the same name and unit count,
    and the names of those it has not."""
    if isinstance(layers, str) and layers == "none":
        return [], []
    theirs = {x.name: x for x in new.layers()}
    chosen = select_layers(old, layers)
    pairs = [(x, theirs[x.name]) for x in chosen if x.name in theirs and theirs[x.name].units == x.units]
    paired = {a.name for a, _ in pairs}
    return pairs, [x.name for x in chosen if x.name not in paired]


def _unmatched_notice(chosen: int, left: Sequence[str]) -> list[str]:
    """A notice naming the old model's layers left out of the comparison (none: no notice)."""
    if not left:
        return []
    shown = ", ".join(f"'{name}'" for name in left[:6]) + (f" and {len(left) - 6} more" if len(left) > 6 else "")
    return [
        f"Layers compared: {chosen - len(left)} of the {chosen} chosen; the new model has no layer of the same "
        f"name and size for {shown}. Layer names follow the module path, which another format of the same "
        "network may spell differently (TorchScript names a list's members 0, 1, ...): compare models saved "
        "in the same format to compare every layer."
    ]


def _floor(setup: Setup) -> float:
    return ROUNDINGS * float(np.max(setup.eps()))


def _side(setup: Setup, stats: GroupStats, layers: dict[str, GroupStats]) -> Side:
    outputs = output_results(stats, setup.output_names, setup.names, setup.redundant)
    infos = [x for x in setup.layers if x.name in layers]
    return Side(setup.names, setup.output_names, outputs, stats, side_layers(infos, layers, setup.names), _floor(setup))


def _output_map(output_map: Any, old_names: list[str], new_names: list[str]) -> list[tuple[int, int]]:
    if isinstance(output_map, str):
        return parse_output_map(output_map, old_names, new_names)
    if output_map is not None:
        return list(output_map)
    if len(old_names) != len(new_names):
        raise UserError(
            f"The old model has {len(old_names)} outputs and the new one {len(new_names)}. Say which to compare "
            "with `output_map` OLD=NEW,... (names or 0-based indices)."
        )
    return [(i, i) for i in range(len(old_names))]


def compare_models(
    old: Any,
    new: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    layers: str | Sequence[str] = "activations",
    output_map: str | Sequence[tuple[int, int]] | None = None,
    gates: Gates | None = None,
    top_k: int | None = None,
    paired: bool = True,
    outputs: Sequence[str] | None = None,
    **options: Any,
) -> ComparisonResult:
    """Measure two model versions on the same points and report what changed.

    Parameters
    ----------
    old : Model, str, Path or AuditResult
        The current version: a model or its path / reference, or a saved audit report
        (a ``.json`` path or an :class:`~audit.results.AuditResult`) to use as the baseline:
        its design and laws are used, and the new model is audited on the same points.
    new : Model, str or Path
        The candidate version.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        As for :func:`audit.audit_model`; both sides share them (with a baseline they must
        equal the report's, which are used when none are given).
    layers : {"activations", "all", "none"} or list of str
        Hidden layers to compare; only layers with the same name and unit count in both are compared.
    output_map : str or list of (int, int), optional
        Pairs (old output index, new output index), or the text ``"OLD=NEW,..."``; default:
        same positions, which needs the same number of outputs.
    gates : Gates, optional
        Tolerances (default :data:`audit.studies.gates.DEFAULTS`); the result's ``passed`` is
        False when any fails.
    top_k : int, optional
        Size of the leading-input sets compared (default the gates' ``top_k``, 3).
    paired : bool
        Same points for both (default). ``False`` uses independent points.
    outputs : list of str, optional
        Output units or tensors measured in both models.
    **options
        Design and run options, as for :func:`audit.audit_model`.

    Returns
    -------
    ComparisonResult
    """
    gates = gates or Gates()
    if top_k is not None:
        gates = Gates(**{**gates.settings(), "top_k": top_k})
    baseline = load_baseline(old)
    if baseline is not None:
        if not paired:
            raise UserError("A comparison against a saved baseline pairs the points; `paired` must stay true.")
        return _against_baseline(baseline, new, inputs, layers, output_map, gates, outputs, options)
    design, run = split_options(options)
    if design.view == "both":
        raise UserError("A comparison measures one view at a time: set `view` to inputs or groups, not both.")
    spec = inputs_spec(inputs)
    old, new = resolve_model(old, spec), resolve_model(new, spec)
    pairs, left = _common_layers(old, new, layers)
    kw = dict(design=design, block=run.block, memory_limit=run.memory_limit, outputs=outputs)
    so = prepare(old, spec, layers=[a.name for a, _ in pairs], **kw)
    seed = None if paired else independent_seed(design.seed)  # type: ignore[arg-type]
    sn = prepare(new, spec, layers=[b.name for _, b in pairs], seed=seed, **kw)
    if so.design.d != sn.design.d:
        raise UserError(
            f"The two models take different numbers of inputs ({so.design.d} and {sn.design.d}); "
            "a comparison needs the same inputs on both sides."
        )
    mapping = _output_map(output_map, so.output_names, sn.output_names)
    ko, kn = len(so.output_names), len(sn.output_names)
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
        jobs = [job]
    else:
        jobs = []
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
            parts = [session.run(job, block=block) for job, block in zip(jobs, blocks, strict=True)]
            sums = {"old": parts[0][OUTPUTS], "new": parts[1][OUTPUTS]}
            for a, b in pairs:
                sums["old:" + a.name], sums["new:" + a.name] = parts[0]["layer:" + a.name], parts[1]["layer:" + b.name]
    seconds = time.perf_counter() - t0
    ddof = so.design.ddof
    sides = []
    for tag, st in (("old", so), ("new", sn)):
        stats = GroupStats.of(sums[tag], ddof, st.eps())
        layer_stats = {
            a.name: GroupStats.of(sums[f"{tag}:{a.name}"], ddof, st.eps("layer:" + a.name)) for a, _ in pairs
        }
        sides.append(_side(st, stats, layer_stats))
    changes, layer_changes, checks, recorded = compare_sides(
        sides[0], sides[1], mapping, [a.name for a, _ in pairs], gates, paired
    )
    info = design_info(so, seconds)
    info.update(evaluations=so.evaluations + sn.evaluations, paired=paired, **recorded)
    notices = list(dict.fromkeys(so.notices + sn.notices + session.notices))
    notices += _unmatched_notice(len(pairs) + len(left), left)
    return ComparisonResult(
        model_info(so), model_info(sn), inputs_info(so), info, changes, layer_changes, checks, notices
    )


def _against_baseline(
    baseline: AuditResult,
    new: Any,
    inputs: Any,
    layers: str | Sequence[str],
    output_map: Any,
    gates: Gates,
    outputs: Sequence[str] | None,
    options: dict[str, Any],
) -> ComparisonResult:
    """The new model audited on the baseline's points, compared with the baseline's kept values."""
    try:
        old_stats, old_layers = from_json(baseline.replicates)
    except (ValueError, KeyError, TypeError) as exc:
        raise UserError(
            f"The baseline report of '{baseline.model.get('source', '?')}' keeps no per-randomization values "
            f"({exc}); audit the released model again with this version to make a baseline."
        ) from exc
    design_kw = {k: options.pop(k) for k in ("points", "replicates", "seed", "sampler", "estimator") if k in options}
    design: DesignOptions = baseline_design(baseline, design_kw)
    spec = baseline_spec(baseline, inputs)
    _, run = split_options(options)
    new = resolve_model(new, spec)
    spec = with_output_names(spec, baseline, sum(t.units for t in new.outputs))
    theirs = {x.name: x for x in new.layers()} if not (isinstance(layers, str) and layers == "none") else {}
    chosen = [] if isinstance(layers, str) and layers == "none" else list(baseline.layers)
    if not (isinstance(layers, str) and layers in ("activations", "all", "none")):
        wanted = set(layers.split(",") if isinstance(layers, str) else layers)
        chosen = [x for x in chosen if x.name in wanted]
    kept = [x for x in chosen if x.name in theirs and theirs[x.name].units == len(x.units)]
    sn = prepare(new, spec, design=design, layers=[x.name for x in kept], block=run.block,
                 memory_limit=run.memory_limit, outputs=outputs)  # fmt: skip
    if len(baseline.inputs) != sn.design.d:
        raise UserError(
            f"The baseline has {len(baseline.inputs)} inputs and the new model {sn.design.d}; a comparison "
            "needs the same inputs on both sides."
        )
    from .audit import execute

    result = execute(sn, run)
    new_stats, new_layers = from_json(result.replicates)
    old_names = [o.name for o in baseline.outputs]
    mapping = _output_map(output_map, old_names, sn.output_names)
    infos = {x.name: LayerInfo(x.name, x.op, tuple(x.shape)) for x in kept}
    floor_old = ROUNDINGS * float(np.max(old_stats.eps))
    old_side = Side(
        [i["name"] for i in baseline.inputs], old_names, list(baseline.outputs), old_stats,
        {n: (infos[n], old_layers[n], x) for x in kept for n in [x.name]}, floor_old,
    )  # fmt: skip
    new_side = Side(
        sn.names, sn.output_names, list(result.outputs), new_stats,
        {x.name: (infos[x.name], new_layers[x.name], x) for x in result.layers}, _floor(sn),
    )  # fmt: skip
    changes, layer_changes, checks, recorded = compare_sides(
        old_side, new_side, mapping, [x.name for x in kept], gates, True
    )
    info = dict(result.design)
    info.update(paired=True, baseline=True, evaluations=result.design["evaluations"], **recorded)
    notices = list(dict.fromkeys([*result.notices, "The old side is a saved audit report (the baseline)."]))
    paired_names = {x.name for x in kept}
    notices += _unmatched_notice(len(chosen), [x.name for x in chosen if x.name not in paired_names])
    return ComparisonResult(
        dict(baseline.model), dict(result.model), list(result.inputs), info, changes, layer_changes, checks, notices
    )
