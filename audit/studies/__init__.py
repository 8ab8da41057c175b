"""Workflows: audit, compare, advise and simplify, from a model and its inputs to result objects.

Every workflow resolves its study first (:mod:`~.setup`), then runs engine jobs
through one :class:`~.session.Session` and summarizes the sums into
:mod:`audit.results` objects (:mod:`~.summarize`). Settings are the
dataclasses of :mod:`~.options`. This layer prints nothing.
"""

from __future__ import annotations

from .advise import AdvicePlan, advise_function, advise_model, execute_advice, prepare_advice
from .audit import audit_function, audit_model, execute, function_model
from .compare import compare_models
from .gates import Gates, parse_output_map
from .options import DesignOptions, RunOptions, split_options
from .setup import LAYER_CHOICES, OUTPUTS, Setup, inputs_spec, prepare, resolve_model, select_layers
from .simplify import simplify_model
from .summarize import model_signature

__all__ = [
    "LAYER_CHOICES",
    "OUTPUTS",
    "AdvicePlan",
    "DesignOptions",
    "Gates",
    "RunOptions",
    "Setup",
    "advise_function",
    "advise_model",
    "audit_function",
    "audit_model",
    "compare_models",
    "execute",
    "execute_advice",
    "function_model",
    "inputs_spec",
    "model_signature",
    "parse_output_map",
    "prepare",
    "prepare_advice",
    "resolve_model",
    "select_layers",
    "simplify_model",
    "split_options",
]
