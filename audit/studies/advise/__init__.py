"""The advise workflow: which inputs to pre-integrate (with the measured RQMC gain) and which to freeze.

Modules: :mod:`~.plan` (settings, parts and cost, cut to a budget, before any work),
:mod:`~.budget` (the plan as printed, phase lines), :mod:`~.candidates`
(pre-integration candidates and their audits), :mod:`~.gain` (the RQMC gain),
:mod:`~.freeze` (freezing), :mod:`~.run` (the workflow).
"""

from __future__ import annotations

from .budget import PhaseLog, plan_lines
from .plan import (
    DEFAULT_GAIN_POINTS,
    FREEZE_BUDGET,
    FREEZE_THRESHOLD,
    PARTS,
    AdvicePlan,
    default_gain_points,
    fit_plan,
    prepare_advice,
)
from .run import ADVICE_SETTINGS, advise_function, advise_model, execute_advice

__all__ = [
    "ADVICE_SETTINGS",
    "DEFAULT_GAIN_POINTS",
    "FREEZE_BUDGET",
    "FREEZE_THRESHOLD",
    "PARTS",
    "AdvicePlan",
    "PhaseLog",
    "advise_function",
    "advise_model",
    "default_gain_points",
    "execute_advice",
    "fit_plan",
    "plan_lines",
    "prepare_advice",
]
