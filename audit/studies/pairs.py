"""Which inputs interact: superset importance of the pairs among the K leading inputs of an audit.

After the audit's own job, the K inputs with the largest normalised total index
(over all outputs) are paired; one job with the superset estimator
(:mod:`audit.estimators.superset`) on fresh points (``seeds.PAIRS``) measures,
for every pair, Υ²_{jk} = Σ_{u ⊇ {j,k}} σ²_u, and from the single swaps and
the pairs the second moment of the dimension distribution, so its spread
E|u|² − ν² says whether ν = 2 means "everything in pairs" or "a mix of main
effects and high orders". With K < d that spread is the one of |u ∩ K|.

References
----------
.. [1] "Estimating mean dimensionality of analysis of variance
   decompositions", J. Amer. Statist. Assoc., 2006.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .. import engine
from ..design import Design
from ..estimators.intervals import Interval
from ..estimators.superset import Superset, dimension_moments
from ..results import OutputResult, PairEstimate
from ..seeds import PAIRS, child_seed
from .evaluators import ModelEvaluator
from .session import Session
from .setup import OUTPUTS, Setup
from .summarize import estimates

__all__ = ["DEFAULT_PAIRS", "leading_inputs", "pairs_job", "with_pairs"]

#: K when pairs are asked for without a number.
DEFAULT_PAIRS = 8


def leading_inputs(outputs: list[OutputResult], k: int) -> list[int]:
    """The ``k`` inputs with the largest normalised total index in any output, in input order."""
    scores = np.zeros(len(outputs[0].total_index)) if outputs and outputs[0].total_index else np.zeros(0)
    for o in outputs:
        if o.inert or o.relation or not o.total_index:
            continue
        scores = np.maximum(scores, [f.value.estimate for f in o.total_index])
    order = np.argsort(-scores, kind="stable")[: min(k, len(scores))]
    return sorted(int(j) for j in order)


def pairs_job(setup: Setup, inputs: list[int]) -> engine.Job:
    """The engine job measuring every pair among ``inputs``, on points of its own."""
    d = setup.design
    design = Design(d.laws, d.points, d.replicates, child_seed(d.seed, PAIRS), d.sampler)
    return engine.Job(
        "pairs",
        ModelEvaluator(setup.model, [], setup.keep),
        design,
        Superset(d.d, inputs),
        [engine.Group(OUTPUTS, len(setup.output_names), True)],
        setup.names,
        setup.dtype,
        identity=setup.identity,
    )


def _column(interval: Interval, unit: int) -> Interval:
    """The entries of one unit (the last axis) of an :class:`Interval`."""
    return Interval(*(np.atleast_1d(np.asarray(a)[..., unit]) for a in interval))


def with_pairs(setup: Setup, outputs: list[OutputResult], k: int, session: Session) -> tuple[list[OutputResult], dict]:
    """The outputs with their pairs and dimension spread, and what the design records of the pairs."""
    inputs = leading_inputs(outputs, k)
    if len(inputs) < 2:
        return outputs, {}
    job = pairs_job(setup, inputs)
    sums = session.run(job)
    reps = [s.finish(setup.design.ddof) for s in sums[OUTPUTS]]
    moments = dimension_moments(reps)
    pair_index = reps[0].pair_index
    names = [setup.names[j] for j in inputs]
    out = []
    for u, o in enumerate(outputs):
        if o.inert or o.relation or o.mean_dimension is None:
            out.append(o)
            continue
        values = estimates(_column(moments["pairs"], u))
        pairs = [PairEstimate(names[a], names[b], v) for (a, b), v in zip(pair_index, values, strict=True)]
        pairs.sort(key=lambda p: -p.value.estimate)
        spread = estimates(_column(moments["spread"], u))[0]
        out.append(replace(o, pairs=pairs, dimension_spread=spread))
    info = {"inputs": names, "all_inputs": len(inputs) == setup.design.d, "evaluations": job.evaluations}
    return out, info
