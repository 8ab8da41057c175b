"""Marginal laws of the inputs: inverse CDFs for the design, Gauss rules for pre-integration.

Inputs are independent; each input has a marginal law with an inverse CDF
(used to map uniform design points) and a Gauss quadrature rule (used for
pre-integration). Continuous laws come from :mod:`scipy.stats` (imported on
first use); Gauss nodes from :mod:`numpy.polynomial`, or, for the laws it has
no rule for, from the law's own orthogonal polynomials (:mod:`audit.inputs.gauss`).

Laws and their parameters:

``normal`` (mean, sd), ``uniform`` (low, high), ``lognormal`` (log_mean, log_sd),
``triangular`` (low, mode, high)
    As in :mod:`scipy.stats`.
``truncated_normal`` (mean, sd, low, high)
    The normal law N(mean, sd²) kept to [low, high] (either end may be infinite);
    its Gauss rule is the law's own, from its density on [low, high] cut to mean ± 12 sd.
``log_uniform`` (low, high)
    log x uniform on [log low, log high], 0 < low < high; Gauss–Legendre in log x.
``discrete`` (values, probabilities, labels)
    Finitely many values (whole numbers, or codes of categories named by ``labels``);
    probabilities default to equal. Its "Gauss rule" is the law itself: every
    value with its probability, so pre-integration sums exactly (:mod:`audit.inputs.discrete`).
``empirical`` (quantiles, levels, source)
    The quantile function of data: piecewise linear between ``quantiles`` (the
    sorted data, or quantiles of it) at probability ``levels`` (default evenly
    spaced from 0 to 1, what the sorted data give); ``source`` names where they
    came from (:mod:`audit.inputs.empirical`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import UserError, suggest
from . import discrete, empirical

__all__ = ["LAWS", "VECTOR_PARAMETERS", "Law", "law_from_dict"]

#: Parameters that hold a list of numbers (the others are one number, or text).
VECTOR_PARAMETERS = ("values", "probabilities", "quantiles", "levels")
_TEXTS = ("labels",)
_TEXT = ("source",)
#: Parameters a law may go without (the others must be given or have a default).
_OPTIONAL = ("values", "probabilities", "labels", "levels", "source")
#: Truncation ends may be infinite.
_MAY_BE_INFINITE = {("truncated_normal", "low"), ("truncated_normal", "high")}
#: Mass beyond this many sd is left out of the truncated normal's Gauss rule (≈ 2e-33).
_CUT_SD = 12.0


@dataclass(frozen=True)
class Law:
    """A marginal law: one of :data:`LAWS` with its parameters.

    Parameters
    ----------
    kind : str
        One of :data:`LAWS`.
    params : dict
        The law's parameters (see :data:`LAWS`): numbers, lists of numbers
        (``values``, ``probabilities``, ``quantiles``, ``levels``; kept as tuples),
        ``labels`` (a list of text) or ``source`` (text).

    Examples
    --------
    >>> from audit.inputs import Law
    >>> Law("discrete", {"values": [1, 2, 3], "probabilities": [0.5, 0.25, 0.25]}).ppf(np.array([0.4, 0.8]))
    array([1., 3.])
    """

    kind: str
    params: dict[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if self.kind not in LAWS:
            raise ValueError(f"unknown law {self.kind!r}; valid laws: {', '.join(LAWS)}." + suggest(self.kind, LAWS))
        names, defaults = LAWS[self.kind]
        unknown = set(self.params) - set(names)
        if unknown:
            bad = sorted(unknown)[0]
            raise ValueError(
                f"law {self.kind!r} has no parameter {bad!r}; its parameters: {', '.join(names)}." + suggest(bad, names)
            )
        full = {**defaults, **{k: _value(self.kind, k, v) for k, v in self.params.items()}}
        for k in names:
            if k not in full and k not in _OPTIONAL:
                raise ValueError(f"law {self.kind!r} needs the parameter {k!r}.")
        if self.kind == "discrete":
            full = discrete.check(full)
        elif self.kind == "empirical":
            full = empirical.check(full)
        else:
            _check_params(self.kind, full)
        object.__setattr__(self, "params", {k: full[k] for k in names if k in full})

    @property
    def dist(self) -> Any:
        """The frozen :mod:`scipy.stats` distribution (continuous laws of scipy's only)."""
        from scipy import stats

        p = self.params
        if self.kind == "normal":
            return stats.norm(loc=p["mean"], scale=p["sd"])
        if self.kind == "uniform":
            return stats.uniform(loc=p["low"], scale=p["high"] - p["low"])
        if self.kind == "lognormal":
            return stats.lognorm(s=p["log_sd"], scale=math.exp(p["log_mean"]))
        if self.kind == "triangular":
            lo, mode, hi = p["low"], p["mode"], p["high"]
            return stats.triang(c=(mode - lo) / (hi - lo), loc=lo, scale=hi - lo)
        if self.kind == "truncated_normal":
            a, b = ((p[k] - p["mean"]) / p["sd"] for k in ("low", "high"))
            return stats.truncnorm(a, b, loc=p["mean"], scale=p["sd"])
        if self.kind == "log_uniform":
            return stats.loguniform(p["low"], p["high"])
        raise ValueError(f"the {self.kind} law has no scipy.stats distribution; use its ppf, cdf and quadrature.")

    @property
    def discrete(self) -> bool:
        """True for a law on finitely many values."""
        return self.kind == "discrete"

    @property
    def integer(self) -> bool:
        """True when every value the law gives is a whole number."""
        return self.discrete and all(float(v).is_integer() for v in self.params["values"])

    def support(self) -> tuple[float, float]:
        """Smallest and largest value (infinite for unbounded laws)."""
        p = self.params
        if self.kind == "discrete":
            return p["values"][0], p["values"][-1]
        if self.kind == "empirical":
            return p["quantiles"][0], p["quantiles"][-1]
        lo, hi = self.dist.support()
        return float(lo), float(hi)

    def ppf(self, u: np.ndarray) -> np.ndarray:
        """Inverse CDF: map uniform points in (0, 1) to this law.

        The normal, lognormal and uniform laws call :func:`scipy.special.ndtri` (what
        ``scipy.stats.norm.ppf`` computes) or an affine map directly, skipping the
        frozen distribution's argument checks on this hot path.
        """
        p = self.params
        if self.kind == "uniform":
            return p["low"] + (p["high"] - p["low"]) * u
        if self.kind in ("normal", "lognormal"):
            from scipy import special  # here only: a uniform law's audit needs no scipy at all

            z = special.ndtri(u)
            return p["mean"] + p["sd"] * z if self.kind == "normal" else np.exp(p["log_mean"] + p["log_sd"] * z)
        if self.kind == "log_uniform":
            lo, hi = math.log(p["low"]), math.log(p["high"])
            return np.exp(lo + (hi - lo) * u)
        if self.kind == "discrete":
            return discrete.ppf(p, u)
        if self.kind == "empirical":
            return empirical.ppf(p, u)
        return self.dist.ppf(u)

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """The CDF P(X ≤ x)."""
        if self.kind == "discrete":
            return discrete.cdf(self.params, x)
        if self.kind == "empirical":
            return empirical.cdf(self.params, x)
        return self.dist.cdf(x)

    def quadrature(self, m: int) -> tuple[np.ndarray, np.ndarray]:
        """An ``m``-point Gauss rule for this law: nodes and weights summing to 1.

        Gauss–Hermite (probabilists') for the normal law and, through ``exp``, the
        lognormal law; Gauss–Legendre for the uniform law and, in log x, the
        log-uniform law; for the triangular law, Gauss–Legendre on each side of the
        mode (``m`` nodes in all), so that the kink of its density falls between
        panels; the law's own Gauss rule for the truncated normal and empirical
        laws (:mod:`audit.inputs.gauss`). A discrete law returns all its values
        with their probabilities whatever ``m`` is: the sum is exact.
        """
        if m < 1:
            raise ValueError(f"a quadrature rule needs at least 1 node, got {m}.")
        p = self.params
        if self.kind == "discrete":
            return np.array(p["values"]), np.array(p["probabilities"])
        if self.kind == "empirical":
            return empirical.quadrature(p, m)
        if self.kind in ("normal", "lognormal"):
            z, w = np.polynomial.hermite_e.hermegauss(m)
            w = w / w.sum()
            if self.kind == "normal":
                return p["mean"] + p["sd"] * z, w
            return np.exp(p["log_mean"] + p["log_sd"] * z), w
        if self.kind in ("uniform", "log_uniform"):
            t, w = np.polynomial.legendre.leggauss(m)
            if self.kind == "uniform":
                return p["low"] + (p["high"] - p["low"]) * (t + 1) / 2, w / w.sum()
            lo, hi = math.log(p["low"]), math.log(p["high"])
            return np.exp(lo + (hi - lo) * (t + 1) / 2), w / w.sum()
        if self.kind == "truncated_normal":
            return self._truncated_rule(m)
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

    def _truncated_rule(self, m: int) -> tuple[np.ndarray, np.ndarray]:
        from .gauss import gauss_rule, panel_points

        p = self.params
        lo = max(p["low"], p["mean"] - _CUT_SD * p["sd"])
        hi = min(p["high"], p["mean"] + _CUT_SD * p["sd"])
        x, w = panel_points(np.linspace(lo, hi, 49), np.full(48, 1.0), max(m, 16))
        return gauss_rule(x, w * self.dist.pdf(x), m)

    def to_dict(self) -> dict[str, Any]:
        """The law as JSON: ``{"law": kind, **params}`` (an empirical law: a summary and a digest of its knots)."""
        if self.kind == "empirical":
            return {"law": self.kind, **empirical.summary(self.params)}
        return {"law": self.kind, **{k: list(v) if isinstance(v, tuple) else v for k, v in self.params.items()}}

    def describe(self) -> str:
        if self.kind == "discrete":
            return discrete.describe(self.params)
        if self.kind == "empirical":
            return empirical.describe(self.params)
        args = ", ".join(f"{v:g}" for v in self.params.values())
        return f"{self.kind}({args})"


def _value(kind: str, name: str, v: Any) -> Any:
    """One parameter, converted and checked: a finite number, a tuple of them, or text."""
    if name in _TEXT:
        if not isinstance(v, str):
            raise ValueError(f"{kind} law: {name!r} must be text, got {v!r}.")
        return v
    if name in _TEXTS:
        if isinstance(v, str) or not all(isinstance(s, str) for s in v):
            raise ValueError(f"{kind} law: {name!r} must be a list of text, got {v!r}.")
        return tuple(v)
    if name in VECTOR_PARAMETERS:
        try:
            out = tuple(float(x) for x in np.asarray(v, dtype=np.float64).ravel())
        except (TypeError, ValueError):
            raise ValueError(f"{kind} law: {name!r} must be a list of numbers, got {v!r:.60}.") from None
        if not all(math.isfinite(x) for x in out):
            raise ValueError(f"{kind} law: every entry of {name!r} must be finite.")
        return out
    x = float(v)
    if not math.isfinite(x) and not ((kind, name) in _MAY_BE_INFINITE and not math.isnan(x)):
        raise ValueError(f"law {kind!r}: parameter {name!r} must be finite, got {x}.")
    return x


def _check_params(kind: str, p: dict[str, float]) -> None:
    if kind in ("normal", "truncated_normal") and p["sd"] <= 0:
        raise ValueError(f"{kind} law: sd must be > 0, got {p['sd']:g}.")
    if kind == "lognormal" and p["log_sd"] <= 0:
        raise ValueError(f"lognormal law: log_sd must be > 0, got {p['log_sd']:g}.")
    if kind in ("uniform", "triangular", "truncated_normal", "log_uniform") and not p["low"] < p["high"]:
        raise ValueError(f"{kind} law: low must be < high, got low={p['low']:g}, high={p['high']:g}.")
    if kind == "log_uniform" and p["low"] <= 0:
        raise ValueError(f"log_uniform law: low must be > 0, got {p['low']:g}.")
    if kind == "truncated_normal":
        a, b = ((p[k] - p["mean"]) / p["sd"] for k in ("low", "high"))
        if a > _CUT_SD or b < -_CUT_SD:
            raise ValueError(
                f"truncated_normal law: [low, high] = [{p['low']:g}, {p['high']:g}] lies more than "
                f"{_CUT_SD:g} sd from the mean {p['mean']:g}, where the normal law has no mass to speak of."
            )
    if kind == "triangular" and not p["low"] <= p["mode"] <= p["high"]:
        raise ValueError(
            f"triangular law: mode must lie in [low, high], got low={p['low']:g}, "
            f"mode={p['mode']:g}, high={p['high']:g}."
        )


#: Valid laws: parameter names in order, and their defaults.
LAWS: dict[str, tuple[tuple[str, ...], dict[str, Any]]] = {
    "normal": (("mean", "sd"), {"mean": 0.0, "sd": 1.0}),
    "uniform": (("low", "high"), {"low": 0.0, "high": 1.0}),
    "lognormal": (("log_mean", "log_sd"), {"log_mean": 0.0, "log_sd": 1.0}),
    "triangular": (("low", "mode", "high"), {}),
    "truncated_normal": (("mean", "sd", "low", "high"), {"mean": 0.0, "sd": 1.0}),
    "log_uniform": (("low", "high"), {}),
    "discrete": (("values", "probabilities", "labels"), {}),
    "empirical": (("quantiles", "levels", "source"), {}),
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
