"""Results of freezing advice: negligible inputs, and the group frozen with its bound and measured error."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .base import Estimate

__all__ = ["FreezeGroup", "FreezeItem"]


@dataclass(frozen=True)
class FreezeItem:
    """An input whose normalised total index is below the threshold at its interval's upper end."""

    feature: str
    total_index: Estimate
    grouped: bool

    def to_dict(self) -> dict[str, Any]:
        return {
            "feature": self.feature,
            "total_index": self.total_index.to_dict(),
            "grouped": self.grouped,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FreezeItem:
        return cls(d["feature"], Estimate.from_dict(d["total_index"]), bool(d["grouped"]))


@dataclass(frozen=True)
class FreezeGroup:
    """Inputs frozen together, with the bound on the error and the error measured.

    Freezing the inputs u at a random draw x'_u changes the output by
    f(x) − f(x_{−u}, x'_u), whose mean square is 2 τ̄²_u ≤ 2 Σ_{j∈u} τ̄²_j.

    Attributes
    ----------
    features : list of str
    bound, bound_normalised : Estimate
        2 Σ_{j∈u} τ̄²_j from the audit, un-normalised and divided by σ².
    measured, measured_normalised : Estimate
        E[(f(A) − f(A_B^{(u)}))²] from a separate pick-freeze pass, un-normalised
        and divided by that pass's σ².
    budget : float
        The upper end of ``bound_normalised`` was kept at or below this.
    evaluations : int
        Model evaluations of the confirming pass (shared by outputs with the same group).
    """

    features: list[str]
    bound: Estimate
    bound_normalised: Estimate
    measured: Estimate
    measured_normalised: Estimate
    budget: float
    evaluations: int = 0

    @property
    def holds(self) -> bool:
        """False only when the measured error's interval lies wholly above the bound's upper end."""
        return not self.measured_normalised.ci_low > self.bound_normalised.ci_high

    def to_dict(self) -> dict[str, Any]:
        return {
            "features": list(self.features),
            "bound": self.bound.to_dict(),
            "bound_normalised": self.bound_normalised.to_dict(),
            "measured": self.measured.to_dict(),
            "measured_normalised": self.measured_normalised.to_dict(),
            "budget": self.budget,
            "holds": self.holds,
            "evaluations": self.evaluations,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FreezeGroup:
        return cls(
            features=list(d["features"]),
            bound=Estimate.from_dict(d["bound"]),
            bound_normalised=Estimate.from_dict(d["bound_normalised"]),
            measured=Estimate.from_dict(d["measured"]),
            measured_normalised=Estimate.from_dict(d["measured_normalised"]),
            budget=float(d["budget"]),
            evaluations=int(d.get("evaluations", 0)),
        )
