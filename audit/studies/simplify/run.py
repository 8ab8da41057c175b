"""The simplify workflow: choose the rule and the values, write the simplified model, audit it against the source.

:func:`simplify_model` runs, through one :class:`~audit.studies.session.Session`:

1. the audit of the source (outputs only): σ², ν and the mean before;
2. for each input to integrate out without a given node count, the node check
   (:func:`audit.nodes.choose_nodes`, scaled by the audit's sd, as ``advise`` does);
3. for inputs frozen at ``best``, the search of :func:`~.values.best_values`;
4. the checks on the source: the freezing-error job (one pick-freeze pass)
   for 2 τ̄²_u of the frozen group (the bound at a value drawn from the law) and,
   on the source with those inputs frozen (g), for τ̄²_u(g) of the integrated
   group, which predicts Var after = Var g − τ̄²_u(g); the measured change of
   freezing at the chosen values (:func:`~.values.measured_change`);
5. the file (:func:`audit.export.write_model`), opened again as a user would
   and compared with netdim's evaluator (:class:`audit.export.ReducedModel`)
   on probe rows;
6. the audit of the written file on the kept inputs: ν, σ² and the mean after.

Every phase has its own seed (:mod:`audit.seeds`).

References
----------
.. [1] Var E[f | x_{−u}] = σ² − τ̄²_u and the freezing change 2 τ̄²_u follow from
   the ANOVA decomposition (common practice, no source).
"""

from __future__ import annotations

import importlib.util
import math
import time
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ... import engine
from ...design import Design
from ...errors import UserError
from ...estimators import FreezeError
from ...estimators.intervals import difference_interval, t_interval
from ...export import ExportPlan, ReducedModel, default_path, file_sha256, make_plan, write_model
from ...export.spec_file import spec_path, spec_text
from ...inputs import InputSpec, Law
from ...models.base import row_dtype
from ...models.python import PythonModel
from ...nodes import choose_nodes
from ...quadrature import MAX_NODES
from ...results import OutputResult, OutputShift, SimplifiedResult, VarianceIdentity
from ...seeds import EXPORTED, PILOT, SEARCH, SOURCE_CHECK, child_seed
from ..evaluators import ModelEvaluator
from ..options import DesignOptions, RunOptions, split_options
from ..session import Session
from ..setup import OUTPUTS, Setup, inputs_spec, model_identity, prepare, resolve_model
from ..summarize import GroupStats, design_info, estimate, inputs_info, model_info, output_results
from .choice import from_advice, load_advice, parse_freeze, parse_integrate
from .values import best_values, measured_change, median

__all__ = ["SIMPLIFY_SETTINGS", "simplify_model"]

#: Settings of :func:`simplify_model` besides the design and run options.
SIMPLIFY_SETTINGS = (
    "integrate", "freeze", "advice", "path", "nodes", "tolerance", "node_cap", "pilot",
    "output_dtype", "check", "replace", "outputs",
)  # fmt: skip


def _audit(setup: Setup, session: Session, name: str) -> tuple[GroupStats, list[OutputResult]]:
    stats = GroupStats.of(session.run(setup.job(name), block=setup.block)[OUTPUTS], setup.design.ddof, setup.eps())
    return stats, output_results(stats, list(setup.output_names), setup.names, setup.redundant)


def _group_job(model: Any, laws: list[Law], names: list[str], group: list[int], s: Setup, seed: int,
               session: Session, label: str) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
    """Per randomization and output: 2 τ̄²_u of ``group`` and the variance (one pick-freeze pass)."""
    design = Design(laws, s.design.points, s.design.replicates, seed, s.design.sampler)
    job = engine.Job(
        label,
        ModelEvaluator(model, [], s.keep),
        design,
        FreezeError(len(laws), [tuple(group)]),
        [engine.Group(OUTPUTS, len(s.output_names), False)],
        names,
        row_dtype(model),
        identity={**model_identity(model), "group": list(group)},
    )
    reps = [x.finish(design.ddof) for x in session.run(job)[OUTPUTS]]
    return np.array([r.mse[0] for r in reps]), np.array([r.variance[0] for r in reps])


def _nodes(s: Setup, asked: dict[int, int | None], stats: GroupStats | None, settings: dict[str, Any],
           session: Session) -> tuple[dict[int, int], dict[int, tuple[float, bool]]]:  # fmt: skip
    """Node counts: given, or chosen by the node check on the source."""
    nodes, errors = {}, {}
    scale = None if stats is None else np.sqrt(np.maximum(stats.var.mean(axis=0), 0.0))
    for j, m in asked.items():
        if m is not None:
            nodes[j] = m
            continue
        check = choose_nodes(
            s.model, s.laws, j, nodes=settings["nodes"], tolerance=settings["tolerance"], cap=settings["node_cap"],
            pilot=settings["pilot"], seed=child_seed(s.design.seed, PILOT, j), scale=scale,
        )  # fmt: skip
        if session.options.progress is not None:
            session.options.progress(check.evaluations, f"node check for {s.names[j]}")
        nodes[j], errors[j] = check.nodes, (check.max_error, check.converged)
    return nodes, errors


def _values(s: Setup, asked: dict[int, float | str]) -> tuple[dict[int, float], dict[int, tuple[str, Any]]]:
    values: dict[int, float] = {}
    chosen: dict[int, tuple[str, Any]] = {}
    for j, v in asked.items():
        if v == "median":
            values[j], chosen[j] = median(s.laws[j]), ("median", None)
        elif v != "best":
            values[j], chosen[j] = float(v), ("given", None)
    best = [j for j, v in asked.items() if v == "best"]
    if best:
        found = best_values(s.model, s.laws, best, child_seed(s.design.seed, SEARCH), fixed=dict(values))
        for j in best:
            values[j], chosen[j] = found[j][0], ("best", found[j][1])
    return {j: values[j] for j in asked}, chosen


def _open_written(path: Path, model: Any, plan: ExportPlan) -> Any:
    """The written file, opened as a user would (a Python module: imported from its file)."""
    if model.format != "python":
        from ...models.open import open_model

        return open_model(str(path))
    spec = importlib.util.spec_from_file_location(f"netdim_simplified_{path.stem.replace('-', '_')}", path)
    module = importlib.util.module_from_spec(spec)  # type: ignore[arg-type]
    spec.loader.exec_module(module)  # type: ignore[union-attr]  # the module netdim has just written
    return PythonModel(module.simplified, len(plan.kept), source=str(path))


def _write_spec(target: Path, plan: ExportPlan, spec: InputSpec, replace: bool) -> str:
    """The kept inputs' spec beside the file (not over an existing file unless replacing); its path or ""."""
    path = spec_path(target)
    if path.exists() and not replace:
        return ""
    path.write_text(spec_text(plan, spec.title, spec.units, spec.outputs, spec.output_units), encoding="utf-8")
    return str(path)


def _verify(written: Any, reduced: ReducedModel, plan: ExportPlan) -> float:
    """Largest difference between the file and netdim's evaluator on probe rows (0 for a frozen export)."""
    u = (np.arange(13)[:, None] * 0.61803398875 + np.arange(len(plan.kept)) * 0.41421356) % 1.0
    x = np.column_stack([law.ppf(np.clip(u[:, k], 0.01, 0.99)) for k, law in enumerate(plan.kept_laws)])
    a = np.asarray(written.evaluate(x).outputs, dtype=np.float64)
    b = np.asarray(reduced.evaluate(x).outputs, dtype=np.float64)
    gap = float(np.max(np.abs(a - b))) if a.size else 0.0
    scale = max(float(np.max(np.abs(b))) if b.size else 0.0, 1.0)
    limit = 0.0 if not plan.integrated else 1e-5 * scale
    if not gap <= limit:
        raise RuntimeError(f"the written model differs from netdim's evaluator by {gap:.3g} on probe rows")
    return gap


def _shift(k: int, before: OutputResult, after: OutputResult, main: GroupStats, plan: ExportPlan, r: int,
           identity: tuple[np.ndarray, np.ndarray] | None, change: tuple[list, list] | None,
           bound: np.ndarray | None) -> OutputShift:  # fmt: skip
    """One output's before/after and its checks."""
    diff = estimate(difference_interval(after.mean.estimate, after.mean.std_error, before.mean.estimate,
                                        before.mean.std_error, r))  # fmt: skip
    sd = math.sqrt(max(before.variance.estimate, 0.0))
    allowance = sum((i.quadrature_error or 0.0) for i in plan.integrated) * sd
    frozen_change = frozen_bound = None
    if change is not None:
        frozen_change = change[1][k]
        allowance += math.sqrt(max(change[0][k].ci_high, 0.0))
    if bound is not None:
        with np.errstate(invalid="ignore", divide="ignore"):
            frozen_bound = estimate(t_interval(bound[:, k] / main.var[:, k]))
    half = diff.ci_high - diff.estimate
    agrees = bool(abs(diff.estimate) <= half + allowance)
    vi = None
    if identity is not None:
        predicted = estimate(t_interval(identity[1][:, k] - identity[0][:, k] / 2))
        d = estimate(difference_interval(after.variance.estimate, after.variance.std_error, predicted.estimate,
                                         predicted.std_error, r))  # fmt: skip
        vi = VarianceIdentity(after.variance, predicted, d, bool(d.covers(0.0)))
    return OutputShift(before.name, before, after, diff, allowance, agrees, vi, frozen_change, frozen_bound)


def simplify_model(
    model: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    integrate: Any = None,
    freeze: Any = None,
    advice: Any = None,
    path: str | Path | None = None,
    nodes: int = 32,
    tolerance: float = 1e-3,
    node_cap: int = MAX_NODES,
    pilot: int = 64,
    output_dtype: str = "source",
    check: bool = True,
    replace: bool = False,
    outputs: Sequence[str] | None = None,
    **options: Any,
) -> SimplifiedResult:
    """Write a model with inputs integrated out or frozen, in its own format, and audit it against the source.

    Parameters
    ----------
    model : Model, str or Path
        An opened model or a path / ``package.module:function`` reference.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        The source's input laws.
    integrate : list of str or dict, optional
        Inputs to integrate out: names, ``"NAME:NODES"``, or {name: nodes or None}.
    freeze : list of str or dict, optional
        Inputs to freeze: names (at the median), ``"NAME=VALUE"``, ``"NAME=median"``, ``"NAME=best"``
        (the candidate value with the smallest measured change), or {name: value}.
    advice : AdviceResult or str, optional
        An advise result or its JSON report: its best candidate and common frozen group are used.
    path : str or Path, optional
        Where to write (default ``<stem>-simplified<suffix>`` in the working folder).
    nodes, tolerance, node_cap, pilot
        The node check (as for ``advise``), for inputs given without a node count.
    output_dtype : {"source", "float64"}
        Type of pre-integrated outputs in ONNX and Torch files.
    check : bool
        Audit the source and the written model (default); without it only the file is written.
    replace : bool
        Replace an existing file at ``path``.
    outputs : list of str, optional
        Output units to audit (the file keeps every output).
    **options
        Design options (``points``, ``replicates``, ``seed``, ``sampler``, ``estimator``) and run options.

    Returns
    -------
    SimplifiedResult

    Examples
    --------
    >>> import audit
    >>> r = audit.simplify_model("model_zoo/ridge_phi.onnx", "normal", integrate=["x[1]"],
    ...                          path="ridge-simplified.onnx", seed=1)  # doctest: +SKIP
    """
    design, run = split_options(options)
    spec = inputs_spec(inputs)
    model = resolve_model(model, spec)
    s = prepare(model, spec, design=design, layers="none", block=run.block, memory_limit=run.memory_limit,
                outputs=outputs)  # fmt: skip
    asked_int = parse_integrate(integrate, s.names)
    asked_frz = parse_freeze(freeze, s.names)
    advised: dict[int, tuple[float, bool]] = {}
    if advice is not None:
        adv_int, adv_frz, advised = from_advice(load_advice(advice), s.names)
        asked_int = {**adv_int, **asked_int}
        asked_frz = {**{j: v for j, v in adv_frz.items() if j not in asked_int}, **asked_frz}
    if not asked_int and not asked_frz:
        raise UserError(
            "Nothing to simplify: name inputs to integrate out (`integrate`) or to freeze (`freeze`), or give an "
            "advice report (`advice`) whose advice has a candidate or a frozen group."
        )
    target = Path(path) if path is not None else default_path(model)
    settings = {"nodes": nodes, "tolerance": tolerance, "node_cap": node_cap, "pilot": pilot}
    t0 = time.perf_counter()
    r = s.design.replicates
    with Session(run or RunOptions()) as session:
        main, before = _audit(s, session, "source audit") if check else (None, [])
        chosen_nodes, errors = _nodes(s, asked_int, main, settings, session)
        errors = {**{j: e for j, e in advised.items() if asked_int.get(j) == chosen_nodes.get(j)}, **errors}
        values, chosen = _values(s, asked_frz)
        plan = make_plan(model, s.names, s.laws, integrate=chosen_nodes, freeze=values, errors=errors, chosen=chosen)
        frozen_only = ReducedModel(model, plan.without_integration())
        identity = bound = change = None
        if check and plan.frozen:
            group = [f.index for f in plan.frozen]
            bound, _ = _group_job(model, s.laws, s.names, group, s, child_seed(s.design.seed, SOURCE_CHECK, 1),
                                  session, "freezing bound")  # fmt: skip
            check_design = Design(s.laws, s.design.points, r, child_seed(s.design.seed, SOURCE_CHECK, 2),
                                  s.design.sampler, copies=1)  # fmt: skip
            change = measured_change(model, s.laws, values, check_design)
        if check and plan.integrated:
            g_laws, g_names = [s.laws[j] for j in plan.without_integration().kept], frozen_only.feature_names()
            kept_g = plan.without_integration().kept
            group = [kept_g.index(i.index) for i in plan.integrated]
            source = frozen_only if plan.frozen else model
            identity = _group_job(source, g_laws, g_names, group, s, child_seed(s.design.seed, SOURCE_CHECK, 3),
                                  session, "variance check")  # fmt: skip
        if change is not None:
            plan.checks["freeze_change"] = [e.to_dict() for e in change[1]]
        notices = write_model(model, plan, target, output_dtype=output_dtype, replace=replace)
        companion = _write_spec(target, plan, spec, replace)
        written = _open_written(target, model, plan)
        gap = _verify(written, ReducedModel(model, plan), plan)
        after: list[OutputResult] = []
        if check:
            sub_spec = InputSpec(names=plan.kept_names, laws=plan.kept_laws, outputs=s.spec.outputs,
                                 source=f"{spec.source} (kept inputs)")  # fmt: skip
            sub_design = DesignOptions(points=s.design.points, replicates=r, seed=child_seed(s.design.seed, EXPORTED),
                                       sampler=s.design.sampler, estimator=s.estimator.name)  # fmt: skip
            keep = s.keep if s.keep is not None else np.arange(len(s.output_names))
            sub = prepare(written, sub_spec, design=sub_design, layers="none", outputs=keep)
            _, after = _audit(sub, session, "written model audit")
    notices = [*s.notices, *notices, *session.notices]
    if plan.integrated and gap > 0:
        notices.append(f"The written file agrees with netdim's evaluator to {gap:.2g} on probe rows (rounding).")
    pairs = enumerate(zip(before, after, strict=True))
    shifts = [_shift(k, b, a, main, plan, r, identity, change, bound) for k, (b, a) in pairs]
    info = {
        "path": str(target),
        "spec": companion,
        "format": model.format,
        "sha256": file_sha256(target),
        "inputs": plan.kept_names,
        "evaluations_per_row": plan.cost,
        "metadata": plan.metadata(),
    }
    return SimplifiedResult(model_info(s), inputs_info(s), design_info(s, time.perf_counter() - t0), info, shifts,
                            notices)  # fmt: skip
