"""The engine's view of models: rows in, named arrays out.

Plain classes (not closures) so that they travel to the processes of a cluster.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..models.base import Model

__all__ = ["ModelEvaluator", "PairedEvaluator"]


class ModelEvaluator:
    """One model: rows -> ``{"outputs": ..., "layer:NAME": ...}``."""

    def __init__(self, model: Model, capture: Sequence[str]) -> None:
        self.model, self.capture = model, list(capture)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        ev = self.model.evaluate(x, self.capture)
        out = {"outputs": ev.outputs}
        for name in self.capture:
            out["layer:" + name] = ev.hidden[name]
        return out


class PairedEvaluator:
    """Two models on the same rows: ``{"old": ..., "new": ..., "old:LAYER": ..., "new:LAYER": ...}``.

    Parameters
    ----------
    old, new : Model
    layers : sequence of (str, str)
        Pairs (old layer name, new layer name) compared; both are reported under
        the old model's name.
    """

    def __init__(self, old: Model, new: Model, layers: Sequence[tuple[str, str]]) -> None:
        self.old, self.new, self.layers = old, new, list(layers)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        ea = self.old.evaluate(x, [a for a, _ in self.layers])
        eb = self.new.evaluate(x, [b for _, b in self.layers])
        out = {"old": ea.outputs, "new": eb.outputs}
        for a, b in self.layers:
            out["old:" + a] = ea.hidden[a]
            out["new:" + a] = eb.hidden[b]
        return out
