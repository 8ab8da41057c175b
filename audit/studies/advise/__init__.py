"""The advise workflow: which inputs to pre-integrate (with the measured RQMC gain) and which to freeze.

Modules: :mod:`~.plan` (settings and cost, before any work), :mod:`~.candidates`
(pre-integration candidates and their audits), :mod:`~.gain` (the RQMC gain),
:mod:`~.freeze` (freezing), :mod:`~.run` (the workflow).
"""

from __future__ import annotations

from .plan import DEFAULT_GAIN_POINTS, FREEZE_BUDGET, FREEZE_THRESHOLD, AdvicePlan, prepare_advice
from .run import ADVICE_SETTINGS, advise_function, advise_model, execute_advice

__all__ = [
    "ADVICE_SETTINGS",
    "DEFAULT_GAIN_POINTS",
    "FREEZE_BUDGET",
    "FREEZE_THRESHOLD",
    "AdvicePlan",
    "advise_function",
    "advise_model",
    "execute_advice",
    "prepare_advice",
]
