"""Marginal laws of the inputs: inverse CDFs for the design, Gauss rules for pre-integration.

Inputs are independent; each feature has a marginal law with an inverse CDF
(used to map uniform design points) and a Gauss quadrature rule (used for
pre-integration). Laws come from :mod:`scipy.stats` (imported on first use);
Gauss nodes from :mod:`numpy.polynomial`.

Laws and their parameters: ``normal`` (mean, sd), ``uniform`` (low, high),
``lognormal`` (log_mean, log_sd), ``triangular`` (low, mode, high).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import UserError, suggest

__all__ = ["LAWS", "Law", "law_from_dict"]


@dataclass(frozen=True)
class Law:
    """A marginal law: one of :data:`LAWS` with its parameters.

    Parameters
    ----------
    kind : str
        ``"normal"``, ``"uniform"``, ``"lognormal"`` or ``"triangular"``.
    params : dict
        The law's parameters (see :data:`LAWS`).
    """

    kind: str
    params: dict[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.kind not in LAWS:
            raise ValueError(f"unknown law {self.kind!r}; valid laws: {', '.join(LAWS)}." + suggest(self.kind, LAWS))
        names, defaults = LAWS[self.kind]
        full = {**defaults, **{k: float(v) for k, v in self.params.items()}}
        unknown = set(full) - set(names)
        if unknown:
            bad = sorted(unknown)[0]
            raise ValueError(
                f"law {self.kind!r} has no parameter {bad!r}; its parameters: {', '.join(names)}." + suggest(bad, names)
            )
        for k in names:
            if k not in full:
                raise ValueError(f"law {self.kind!r} needs the parameter {k!r}.")
            if not math.isfinite(full[k]):
                raise ValueError(f"law {self.kind!r}: parameter {k!r} must be finite, got {full[k]}.")
        _check_params(self.kind, full)
        object.__setattr__(self, "params", {k: full[k] for k in names})

    @property
    def dist(self) -> Any:
        """The frozen :mod:`scipy.stats` distribution."""
        from scipy import stats

        p = self.params
        if self.kind == "normal":
            return stats.norm(loc=p["mean"], scale=p["sd"])
        if self.kind == "uniform":
            return stats.uniform(loc=p["low"], scale=p["high"] - p["low"])
        if self.kind == "lognormal":
            return stats.lognorm(s=p["log_sd"], scale=math.exp(p["log_mean"]))
        lo, mode, hi = p["low"], p["mode"], p["high"]
        return stats.triang(c=(mode - lo) / (hi - lo), loc=lo, scale=hi - lo)

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Inverse CDF: map uniform points in (0, 1) to this law.

        The normal, lognormal and uniform laws call :func:`scipy.special.ndtri` (what
        ``scipy.stats.norm.ppf`` computes) or an affine map directly, skipping the
        frozen distribution's argument checks on this hot path.
        """
        from scipy import special

        p = self.params
        if self.kind == "uniform":
            return p["low"] + (p["high"] - p["low"]) * u
        if self.kind == "normal":
            return p["mean"] + p["sd"] * special.ndtri(u)
        if self.kind == "lognormal":
            return np.exp(p["log_mean"] + p["log_sd"] * special.ndtri(u))
        return self.dist.ppf(u)

    def quadrature(self, m: int) -> tuple[np.ndarray, np.ndarray]:
        """An ``m``-point Gauss rule for this law: nodes and weights summing to 1.

        Gauss–Hermite (probabilists') for the normal law and, through
        ``exp``, the lognormal law; Gauss–Legendre for the uniform law; for the
        triangular law, Gauss–Legendre on each side of the mode (``m`` nodes
        in all), so that the kink of its density falls between panels.
        """
        if m < 1:
            raise ValueError(f"a quadrature rule needs at least 1 node, got {m}.")
        p = self.params
        if self.kind in ("normal", "lognormal"):
            z, w = np.polynomial.hermite_e.hermegauss(m)
            w = w / w.sum()
            if self.kind == "normal":
                return p["mean"] + p["sd"] * z, w
            return np.exp(p["log_mean"] + p["log_sd"] * z), w
        if self.kind == "uniform":
            t, w = np.polynomial.legendre.leggauss(m)
            return p["low"] + (p["high"] - p["low"]) * (t + 1) / 2, w / w.sum()
        # triangular: integrate the density on [low, mode] and [mode, high]
        lo, mode, hi = p["low"], p["mode"], p["high"]
        nodes, weights = [], []
        m1 = max(1, round(m * (mode - lo) / (hi - lo))) if mode > lo else 0
        m1 = min(m1, m - 1) if mode < hi else m
        for a, b, k in ((lo, mode, m1), (mode, hi, m - m1)):
            if k == 0 or b <= a:
                continue
            t, w = np.polynomial.legendre.leggauss(k)
            x = a + (b - a) * (t + 1) / 2
            nodes.append(x)
            weights.append(w * (b - a) / 2 * self.dist.pdf(x))
        x, w = np.concatenate(nodes), np.concatenate(weights)
        return x, w / w.sum()

    def to_dict(self) -> dict[str, Any]:
        return {"law": self.kind, **self.params}

    def describe(self) -> str:
        args = ", ".join(f"{v:g}" for v in self.params.values())
        return f"{self.kind}({args})"


def _check_params(kind: str, p: dict[str, float]) -> None:
    if kind == "normal" and p["sd"] <= 0:
        raise ValueError(f"normal law: sd must be > 0, got {p['sd']:g}.")
    if kind == "lognormal" and p["log_sd"] <= 0:
        raise ValueError(f"lognormal law: log_sd must be > 0, got {p['log_sd']:g}.")
    if kind in ("uniform", "triangular") and not p["low"] < p["high"]:
        raise ValueError(f"{kind} law: low must be < high, got low={p['low']:g}, high={p['high']:g}.")
    if kind == "triangular" and not p["low"] <= p["mode"] <= p["high"]:
        raise ValueError(
            f"triangular law: mode must lie in [low, high], got low={p['low']:g}, "
            f"mode={p['mode']:g}, high={p['high']:g}."
        )


#: Valid laws: parameter names in order, and their defaults.
LAWS: dict[str, tuple[tuple[str, ...], dict[str, float]]] = {
    "normal": (("mean", "sd"), {"mean": 0.0, "sd": 1.0}),
    "uniform": (("low", "high"), {"low": 0.0, "high": 1.0}),
    "lognormal": (("log_mean", "log_sd"), {"log_mean": 0.0, "log_sd": 1.0}),
    "triangular": (("low", "mode", "high"), {}),
}

def law_from_dict(d: dict[str, Any], where: str = "") -> Law:
    """Build a :class:`Law` from ``{"law": kind, **params}`` (extra keys ignored by caller)."""
    kind = d.get("law", "normal")
    names = LAWS.get(kind, ((), {}))[0]
    params = {k: v for k, v in d.items() if k in names}
    try:
        return Law(kind, params)
    except (ValueError, TypeError) as exc:
        raise UserError(f"{where}{exc}") from exc


