"""The simplify workflow: write a model with inputs integrated out or frozen, and audit it against the source.

Modules: :mod:`~.choice` (what to integrate out and freeze, by name or from
an advice report), :mod:`~.values` (values to freeze at, and the change
freezing makes), :mod:`~.run` (the workflow). The files themselves are
written by :mod:`audit.export`.
"""

from __future__ import annotations

from .run import SIMPLIFY_SETTINGS, simplify_model

__all__ = ["SIMPLIFY_SETTINGS", "simplify_model"]
