"""The engine's view of models: rows in, named arrays out.

Plain classes (not closures) so that they travel to the processes of a cluster.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..models.base import Model

__all__ = ["ModelEvaluator", "PairedEvaluator"]


def _kept(outputs: np.ndarray, keep: np.ndarray | None) -> np.ndarray:
    return outputs if keep is None else outputs.reshape(len(outputs), -1)[:, keep]


def _concurrent(model: Model, calls: int) -> Model | None:
    """The model's twin for ``calls`` concurrent evaluations (None: it has none)."""
    make = getattr(model, "concurrent", None)
    return make(calls) if callable(make) else None


class ModelEvaluator:
    """One model: rows -> ``{"outputs": ..., "layer:NAME": ...}``; ``keep`` selects output columns."""

    def __init__(self, model: Model, capture: Sequence[str], keep: np.ndarray | None = None) -> None:
        self.model, self.capture, self.keep = model, list(capture), keep
        #: Rows the model takes per call at its best (None: any), for :mod:`audit.streaming`.
        self.call_rows: int | None = getattr(model, "call_rows", None)

    def concurrent(self, calls: int) -> ModelEvaluator | None:
        """This evaluator for ``calls`` blocks at once, or None if its model cannot take them
        (see :meth:`audit.models.onnx.OnnxModel.concurrent`)."""
        twin = _concurrent(self.model, calls)
        return None if twin is None else ModelEvaluator(twin, self.capture, self.keep)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        ev = self.model.evaluate(x, self.capture)
        out = {"outputs": _kept(ev.outputs, self.keep)}
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
    keep_old, keep_new : ndarray, optional
        Output columns kept of each model.
    """

    def __init__(
        self,
        old: Model,
        new: Model,
        layers: Sequence[tuple[str, str]],
        keep_old: np.ndarray | None = None,
        keep_new: np.ndarray | None = None,
    ) -> None:
        self.old, self.new, self.layers = old, new, list(layers)
        self.keep_old, self.keep_new = keep_old, keep_new
        rows = [getattr(m, "call_rows", None) for m in (old, new)]
        self.call_rows: int | None = min(rows) if None not in rows else None  # type: ignore[type-var]

    def concurrent(self, calls: int) -> PairedEvaluator | None:
        """Both models for ``calls`` blocks at once, or None unless both can take them."""
        old, new = _concurrent(self.old, calls), _concurrent(self.new, calls)
        if old is None or new is None:
            return None
        return PairedEvaluator(old, new, self.layers, self.keep_old, self.keep_new)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        ea = self.old.evaluate(x, [a for a, _ in self.layers])
        eb = self.new.evaluate(x, [b for _, b in self.layers])
        out = {"old": _kept(ea.outputs, self.keep_old), "new": _kept(eb.outputs, self.keep_new)}
        for a, b in self.layers:
            out["old:" + a] = ea.hidden[a]
            out["new:" + a] = eb.hidden[b]
        return out
