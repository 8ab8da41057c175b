"""Results of pre-integration advice: candidates, the variance identity, and the measured RQMC gain."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from .base import Estimate, _num, _unnum

__all__ = ["Candidate", "GainRow", "RqmcGain", "VarianceIdentity"]


def _opt(e: Estimate | None) -> dict[str, Any] | None:
    return None if e is None else e.to_dict()


def _unopt(d: dict[str, Any] | None) -> Estimate | None:
    return None if d is None else Estimate.from_dict(d)


@dataclass(frozen=True)
class VarianceIdentity:
    """The check Var f̃ = σ² − τ̄²_ℓ for one pre-integrated input.

    Attributes
    ----------
    measured : Estimate
        Var f̃, from the audit of the pre-integrated function.
    predicted : Estimate
        σ² − τ̄²_ℓ (un-normalised), from the audit of f.
    difference : Estimate
        ``measured − predicted``; the two come from independent randomizations,
        so its standard error is the root sum of squares of theirs.
    agree : bool
        True when the interval of ``difference`` contains 0.
    """

    measured: Estimate
    predicted: Estimate
    difference: Estimate
    agree: bool

    def to_dict(self) -> dict[str, Any]:
        return {
            "variance_after": self.measured.to_dict(),
            "variance_minus_total": self.predicted.to_dict(),
            "difference": self.difference.to_dict(),
            "agree": self.agree,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> VarianceIdentity:
        return cls(
            Estimate.from_dict(d["variance_after"]),
            Estimate.from_dict(d["variance_minus_total"]),
            Estimate.from_dict(d["difference"]),
            bool(d["agree"]),
        )


@dataclass(frozen=True)
class Candidate:
    """One input considered for pre-integration, for one output.

    Attributes
    ----------
    feature : str
        The input integrated out.
    total_index : Estimate
        Its normalised total index in f.
    mean_dimension_after : Estimate or None
        ν of the pre-integrated function (``None`` when it is constant).
    variance_after : Estimate
        Var f̃.
    variance_identity : VarianceIdentity
    nodes : int
        Gauss nodes used.
    quadrature_error : float
        Pilot check: max |f̃_m − f̃_2m| relative to the output's sd.
    converged : bool
        True when ``quadrature_error`` is below the tolerance asked for.
    evaluations : int
        Model evaluations spent on this candidate (pilot and audit of f̃, all outputs).
    """

    feature: str
    total_index: Estimate
    mean_dimension_after: Estimate | None
    variance_after: Estimate
    variance_identity: VarianceIdentity
    nodes: int
    quadrature_error: float
    converged: bool = True
    evaluations: int = 0

    def to_dict(self) -> dict[str, Any]:
        return {
            "feature": self.feature,
            "total_index": self.total_index.to_dict(),
            "mean_dimension_after": _opt(self.mean_dimension_after),
            "variance_after": self.variance_after.to_dict(),
            "variance_identity": self.variance_identity.to_dict(),
            "nodes": self.nodes,
            "quadrature_error": _num(self.quadrature_error),
            "quadrature_converged": self.converged,
            "evaluations": self.evaluations,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Candidate:
        return cls(
            feature=d["feature"],
            total_index=Estimate.from_dict(d["total_index"]),
            mean_dimension_after=_unopt(d.get("mean_dimension_after")),
            variance_after=Estimate.from_dict(d["variance_after"]),
            variance_identity=VarianceIdentity.from_dict(d["variance_identity"]),
            nodes=int(d["nodes"]),
            quadrature_error=_unnum(d.get("quadrature_error")),
            converged=bool(d.get("quadrature_converged", True)),
            evaluations=int(d.get("evaluations", 0)),
        )


@dataclass(frozen=True)
class GainRow:
    """Variance over randomizations of the estimated mean at one point count n."""

    points: int
    variance_before: float
    variance_after: float

    @property
    def ratio(self) -> float:
        """Variance of f's estimate over that of f̃'s, at the same n."""
        if not (self.variance_after > 0):
            return math.inf if self.variance_before > 0 else math.nan
        return self.variance_before / self.variance_after

    def to_dict(self) -> dict[str, Any]:
        return {
            "points": self.points,
            "variance_before": _num(self.variance_before),
            "variance_after": _num(self.variance_after),
            "ratio": _num(self.ratio),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> GainRow:
        return cls(int(d["points"]), _unnum(d["variance_before"]), _unnum(d["variance_after"]))


@dataclass(frozen=True)
class RqmcGain:
    """Measured RQMC gain of pre-integrating ``feature`` for estimating the output's mean.

    Attributes
    ----------
    feature : str
        The input integrated out (the output's best candidate).
    nodes : int
        Gauss nodes: each point of f̃ costs ``nodes`` model evaluations.
    replicates : int
        Independent randomizations the variances are taken over.
    rows : list of GainRow
        One per point count n (prefixes of one scrambled Sobol' sequence per randomization).
    slope_before, slope_after : float
        Least-squares slope of log variance against log n (−1 is the Monte
        Carlo rate; steeper is better).
    equal_cost_ratio : float
        At the largest n: the variance of f's estimate at n·nodes points over
        that of f̃'s at n points, both read off their fitted lines (f's
        extrapolated): the gain at equal cost in model evaluations.
    evaluations_before, evaluations_after : int
        Model evaluations made for f and for f̃ (the latter ``nodes`` times more per point).
    """

    feature: str
    nodes: int
    replicates: int
    rows: list[GainRow]
    slope_before: float
    slope_after: float
    equal_cost_ratio: float
    evaluations_before: int
    evaluations_after: int

    @property
    def ratio(self) -> float:
        """Variance ratio at the largest n."""
        return self.rows[-1].ratio if self.rows else math.nan

    def to_dict(self) -> dict[str, Any]:
        return {
            "feature": self.feature,
            "nodes": self.nodes,
            "replicates": self.replicates,
            "rows": [r.to_dict() for r in self.rows],
            "slope_before": _num(self.slope_before),
            "slope_after": _num(self.slope_after),
            "ratio": _num(self.ratio),
            "equal_cost_ratio": _num(self.equal_cost_ratio),
            "evaluations_before": self.evaluations_before,
            "evaluations_after": self.evaluations_after,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> RqmcGain:
        return cls(
            feature=d["feature"],
            nodes=int(d["nodes"]),
            replicates=int(d["replicates"]),
            rows=[GainRow.from_dict(r) for r in d["rows"]],
            slope_before=_unnum(d.get("slope_before")),
            slope_after=_unnum(d.get("slope_after")),
            equal_cost_ratio=_unnum(d.get("equal_cost_ratio")),
            evaluations_before=int(d.get("evaluations_before", 0)),
            evaluations_after=int(d.get("evaluations_after", 0)),
        )
