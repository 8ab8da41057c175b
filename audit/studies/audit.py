"""The audit workflow: variance, mean dimension and Sobol' indices of every output and hidden unit.

:func:`audit_model` opens the model when given a path, resolves the study
(:func:`~audit.studies.setup.prepare`), runs its one engine job through a
:class:`~audit.studies.session.Session` and builds an
:class:`~audit.results.AuditResult`. It prints nothing.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from ..errors import UserError, check_int
from ..inputs import InputSpec, Law
from ..models.python import PythonModel
from ..results import AuditResult
from .options import RunOptions, split_options
from .pairs import with_pairs
from .replicates import to_json
from .session import Session
from .setup import OUTPUTS, Setup, check_time, inputs_spec, prepare, resolve_model
from .summarize import GroupStats, design_info, groups_info, inputs_info, layer_result, model_info, output_results

__all__ = ["audit_function", "audit_model", "execute", "function_model"]


def execute(setup: Setup, run: RunOptions | None = None, *, pairs: int = 0) -> AuditResult:
    """Run a prepared audit and build its result.

    Parameters
    ----------
    setup : Setup
        From :func:`~audit.studies.setup.prepare`.
    run : RunOptions, optional
        Progress, checkpoint, cluster (see :class:`~audit.studies.options.RunOptions`).
    pairs : int
        Also measure the superset importance of every pair among this many leading
        inputs (0: none; see :mod:`audit.studies.pairs`).

    Returns
    -------
    AuditResult
    """
    run = run or RunOptions()
    pairs = check_int(pairs, "pairs", 0)
    if run.block:
        setup.block = run.block
        if setup.companion is not None:
            setup.companion.block = run.block
    check_time(setup.job(), setup.evaluations, run.time_budget, setup.block)
    setup.find_relations()
    t0 = time.perf_counter()
    ddof = setup.design.ddof
    paired: dict = {}
    with Session(run) as session:
        sums = session.run(setup.job(), block=setup.block)
        stats = GroupStats.of(sums[OUTPUTS], ddof, setup.eps())
        outputs = output_results(stats, setup.output_names, setup.names, setup.redundant)
        if pairs >= 2 and setup.design.d >= 2 and stats.total is not None and _plain(setup):
            outputs, paired = with_pairs(setup, outputs, pairs, session)
        seconds = time.perf_counter() - t0
        grouped = None
        if setup.companion is not None:
            companion = setup.companion
            companion.redundant = setup.redundant
            t1 = time.perf_counter()
            extra = session.run(companion.job("audit by group"), block=companion.block)
            grouped = _result(companion, extra, time.perf_counter() - t1, [])
    result = _result(setup, sums, seconds, [*setup.notices, *session.notices], grouped, outputs, stats)
    if paired:
        result.design["pairs"] = paired
        result.design["evaluations"] += paired["evaluations"]
    return result


def _plain(setup: Setup) -> bool:
    """One model column per input, indices per input: what pairs of inputs need."""
    return setup.design.spans is None and (setup.view is None or setup.view.columns is None)


def _result(
    setup: Setup,
    sums: dict[str, Any],
    seconds: float,
    notices: list[str],
    grouped: AuditResult | None = None,
    outputs: list | None = None,
    stats: GroupStats | None = None,
) -> AuditResult:
    """The :class:`AuditResult` of a setup's finished job (``outputs`` and ``stats`` when already made)."""
    ddof = setup.design.ddof
    if stats is None:
        stats = GroupStats.of(sums[OUTPUTS], ddof, setup.eps())
    if outputs is None:
        outputs = output_results(stats, setup.output_names, setup.names, setup.redundant)
    layer_stats = {
        x.name: GroupStats.of(sums["layer:" + x.name], ddof, setup.eps("layer:" + x.name)) for x in setup.layers
    }
    layers = [layer_result(x, layer_stats[x.name], setup.names) for x in setup.layers]
    return AuditResult(
        model_info(setup),
        inputs_info(setup),
        design_info(setup, seconds),
        outputs,
        layers,
        notices,
        to_json(stats, layer_stats),
        groups=groups_info(setup),
        by_group=grouped,
    )


def audit_model(
    model: Any,
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    layers: str | Sequence[str] = "activations",
    unit_detail: Sequence[str] = (),
    outputs: Sequence[str] | None = None,
    pairs: int = 0,
    **options: Any,
) -> AuditResult:
    """Audit a model: variance, mean dimension and Sobol' indices of every output and hidden unit.

    Parameters
    ----------
    model : Model, str or Path
        An opened model (:func:`audit.models.open.open_model`) or a path / reference to open.
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        Input laws (default: every input N(0, 1)).
    layers : {"activations", "all", "none"} or list of str
        Hidden layers to measure.
    unit_detail : list of str
        Layers whose units also get per-input total indices.
    outputs : list of str, optional
        Output units or output tensors to measure (default: the spec's ``[outputs] keep``, else all).
    pairs : int
        Also measure which inputs interact: the superset importance of every pair among
        this many leading inputs (0: none), at N(1 + K + K(K − 1)/2) more evaluations per
        randomization, and the spread of the dimension distribution.
    **options
        Design options ``points``, ``replicates``, ``seed``, ``sampler``, ``estimator``
        (:class:`~audit.studies.options.DesignOptions`) and run options ``progress``,
        ``checkpoint``, ``checkpoint_seconds``, ``cluster``, ``memory_limit``, ``block``
        (:class:`~audit.studies.options.RunOptions`).

    Returns
    -------
    AuditResult

    References
    ----------
    .. [1] "Estimating mean dimensionality of analysis of variance
       decompositions", J. Amer. Statist. Assoc., 2006.

    Examples
    --------
    >>> import audit
    >>> r = audit.audit_model("model_zoo/additive.onnx", "normal", points=256, replicates=4, seed=1)  # doctest: +SKIP
    """
    design, run = split_options(options)
    spec = inputs_spec(inputs)
    model = resolve_model(model, spec)
    setup = prepare(
        model,
        spec,
        design=design,
        layers=layers,
        unit_detail=unit_detail,
        block=run.block,
        memory_limit=run.memory_limit,
        outputs=outputs,
    )
    return execute(setup, run, pairs=pairs)


def function_model(
    func: Callable[[np.ndarray], np.ndarray],
    inputs: InputSpec | str | Sequence[Law] | None,
    dim: int | None,
) -> tuple[PythonModel, InputSpec]:
    """A Python function as a model, with its input spec; d from ``dim`` or the spec."""
    spec = inputs_spec(inputs)
    d = dim if dim is not None else spec.dim
    if d is None:
        raise UserError("The number of inputs is unknown: pass `dim` or an input spec that lists the features.")
    source = getattr(func, "__module__", "") + ":" + getattr(func, "__qualname__", repr(func))
    return PythonModel(func, d, source=source), spec


def audit_function(
    func: Callable[[np.ndarray], np.ndarray],
    inputs: InputSpec | str | Sequence[Law] | None = None,
    *,
    dim: int | None = None,
    **options: Any,
) -> AuditResult:
    """Audit a Python function of d independent inputs.

    Parameters
    ----------
    func : callable
        Maps an (n, d) float64 array to (n,) or (n, k).
    inputs : InputSpec, spec file path, {"normal", "uniform"}, sequence of Law, optional
        Input laws; with a law name, ``dim`` gives d.
    dim : int, optional
        Number of inputs when ``inputs`` does not fix it.
    **options
        As for :func:`audit_model`.

    Returns
    -------
    AuditResult

    Examples
    --------
    >>> import numpy as np, audit
    >>> r = audit.audit_function(lambda x: x.sum(axis=1), "uniform", dim=3, seed=1)
    >>> r.outputs[0].mean_dimension.covers(1.0)
    True
    """
    model, spec = function_model(func, inputs, dim)
    options.setdefault("layers", "none")
    return audit_model(model, spec, **options)
