"""The engine's view of a model's gradients: rows in, values and standardised gradients out.

:class:`GradientEvaluator` is a plain class (it travels to a cluster's
processes). For each point it returns, per unit, the value and the gradient in
the standardised coordinates of the input laws (:mod:`audit.inputs.scales`):
``∂f/∂z_j = ∂f/∂x_j · dx_j/dz_j``, the chain rule through each law's map. The
model's gradients come from its own autograd (Torch) or from central
differences with a step of ``eps^(1/3)`` in the standardised coordinate
(:mod:`audit.models.gradients`), ``eps`` the machine epsilon of the rows.

:func:`choose_method` picks the method once per study, by differentiating two
rows, and :func:`cost_per_point` states its cost in model evaluations.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..inputs import Law
from ..inputs.scales import slope, stencil
from ..models.base import Model, feature_count, row_dtype
from ..models.gradients import AutogradUnavailableError, Gradients, central_differences, difference_cost, has_autograd

__all__ = ["AUTOGRAD", "DIFFERENCES", "GradientEvaluator", "accuracy", "choose_method", "cost_per_point", "pack"]

AUTOGRAD, DIFFERENCES = "autograd", "central differences"


def choose_method(model: Model, capture: Sequence[str], laws: Sequence[Law]) -> tuple[str, str]:
    """``(method, notice)``: autograd where the model differentiates these units, else central differences."""
    if not has_autograd(model):
        return DIFFERENCES, ""
    d = feature_count(model)
    probe = np.stack([[law.ppf(np.array(q)) for law in laws] for q in (0.3, 0.6)]).astype(row_dtype(model))
    try:
        model.gradients(probe.reshape(2, d), list(capture))  # type: ignore[attr-defined]
    except AutogradUnavailableError as exc:
        return DIFFERENCES, f"Gradients by central differences: autograd is unavailable here ({exc})."
    return AUTOGRAD, ""


def cost_per_point(method: str, d: int, units: int) -> int:
    """Model evaluations one point's gradients cost.

    Central differences: ``2d + 1`` evaluations. Autograd: one forward pass and one
    reverse pass per unit differentiated, a reverse pass counted as two forward
    passes (its usual cost; common practice, no source): ``1 + 2 · units``.
    """
    return difference_cost(d) if method == DIFFERENCES else 1 + 2 * int(units)


def accuracy(method: str, dtype: type) -> float:
    """Relative accuracy δ of one gradient: eps (autograd), eps^(2/3) (central differences)."""
    eps = float(np.finfo(dtype).eps)
    return eps if method == AUTOGRAD else eps ** (2.0 / 3.0)


def pack(values: np.ndarray, jac: np.ndarray) -> np.ndarray:
    """Values (n, k) and gradients (n, k, d) as the estimator's (n, k (d + 1)) columns."""
    n = len(values)
    return np.concatenate([values.reshape(n, -1), jac.reshape(n, -1)], axis=1)


class GradientEvaluator:
    """Rows -> ``{"outputs": ..., "layer:NAME": ...}`` of values and standardised gradients.

    Parameters
    ----------
    model : Model
    laws : sequence of Law
        One per input, for the chain rule and the difference steps.
    capture : sequence of str
        Hidden layers to differentiate.
    keep : ndarray of int, optional
        Output columns kept.
    method : {"autograd", "central differences"}
    """

    def __init__(
        self,
        model: Model,
        laws: Sequence[Law],
        capture: Sequence[str],
        keep: np.ndarray | None = None,
        method: str = DIFFERENCES,
    ) -> None:
        if method not in (AUTOGRAD, DIFFERENCES):
            raise ValueError(f"unknown method {method!r}; valid methods: {AUTOGRAD}, {DIFFERENCES}.")
        self.model, self.laws, self.capture, self.keep, self.method = model, list(laws), list(capture), keep, method

    def gradients(self, x: np.ndarray) -> Gradients:
        """The model's values and gradients in its own input coordinates."""
        if self.method == AUTOGRAD:
            return self.model.gradients(x, self.capture)  # type: ignore[attr-defined]
        h = float(np.finfo(row_dtype(self.model)).eps) ** (1.0 / 3.0)
        x64 = np.asarray(x, dtype=np.float64)
        lower, upper = np.empty_like(x64), np.empty_like(x64)
        for j, law in enumerate(self.laws):
            lower[:, j], upper[:, j] = stencil(law, x64[:, j], h)
        return central_differences(self.model, x, lower, upper, self.capture)

    def __call__(self, x: np.ndarray) -> dict[str, np.ndarray]:
        g = self.gradients(x)
        x64 = np.asarray(x, dtype=np.float64)
        scale = np.column_stack([slope(law, x64[:, j]) for j, law in enumerate(self.laws)])[:, None, :]
        values, jac = g.values, g.jacobian
        if self.keep is not None:
            values, jac = values[:, self.keep], jac[:, self.keep]
        out = {"outputs": pack(values, jac * scale)}
        for name in self.capture:
            v, j = g.hidden[name]
            out["layer:" + name] = pack(v, j * scale)
        return out
