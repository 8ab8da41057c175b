"""Result objects of ``netdim advise`` and their JSON form.

An :class:`AdviceResult` holds, per output, the ordinary audit of the output
(:class:`~audit.results.OutputResult`) and three pieces of advice:

``preintegrate``
    Inputs worth integrating out by a Gauss rule, best first (lowest mean
    dimension after): ν of the pre-integrated function f̃ with its interval,
    its variance, and the check Var f̃ = σ² − τ̄²_ℓ.
``rqmc_gain``
    Measured variance, over independent randomizations, of the randomized
    quasi-Monte Carlo estimate of the output's mean, for f and for the best
    f̃, at several point counts, with log–log slopes and their ratio.
``freeze``
    Inputs whose total index is negligible, the group of them that fits the
    error budget, the bound 2 Σ τ̄²_j on the mean squared error of freezing
    the group at a random draw, and that error measured directly.

The JSON layout extends the audit report's (``"kind": "advice"``); every
number is an :class:`~audit.results.Estimate` or a plain float.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .audit import AuditResult, OutputResult
from .base import SCHEMA, Displayable, Estimate, _num, _unnum

__all__ = [
    "AdviceResult",
    "Candidate",
    "FreezeGroup",
    "FreezeItem",
    "GainRow",
    "OutputAdvice",
    "RqmcGain",
    "VarianceIdentity",
]

KIND = "advice"


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


@dataclass(frozen=True)
class OutputAdvice:
    """The audit of one output and the advice for it.

    Attributes
    ----------
    audit : OutputResult
        Variance, ν and indices of the output (its keys are at the top of the JSON entry).
    preintegrate : list of Candidate
        Best first (lowest ν after; candidates without ν last).
    freeze : list of FreezeItem
        Negligible inputs, smallest total index first.
    freeze_group : FreezeGroup or None
        The grouped ones with bound and measurement (``None`` when no input qualifies).
    rqmc_gain : RqmcGain or None
        For the best candidate (``None`` when there is none or it was not measured).
    """

    audit: OutputResult
    preintegrate: list[Candidate] = field(default_factory=list)
    freeze: list[FreezeItem] = field(default_factory=list)
    freeze_group: FreezeGroup | None = None
    rqmc_gain: RqmcGain | None = None

    @property
    def name(self) -> str:
        return self.audit.name

    @property
    def best(self) -> Candidate | None:
        return self.preintegrate[0] if self.preintegrate else None

    def to_dict(self) -> dict[str, Any]:
        return {
            **self.audit.to_dict(),
            "preintegrate": [c.to_dict() for c in self.preintegrate],
            "freeze": [f.to_dict() for f in self.freeze],
            "freeze_group": None if self.freeze_group is None else self.freeze_group.to_dict(),
            "rqmc_gain": None if self.rqmc_gain is None else self.rqmc_gain.to_dict(),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> OutputAdvice:
        group, gain = d.get("freeze_group"), d.get("rqmc_gain")
        return cls(
            audit=OutputResult.from_dict(d),
            preintegrate=[Candidate.from_dict(c) for c in d.get("preintegrate", [])],
            freeze=[FreezeItem.from_dict(f) for f in d.get("freeze", [])],
            freeze_group=None if group is None else FreezeGroup.from_dict(group),
            rqmc_gain=None if gain is None else RqmcGain.from_dict(gain),
        )


@dataclass(frozen=True)
class AdviceResult(Displayable):
    """Everything one ``advise`` run measured.

    Attributes
    ----------
    model, inputs : dict, list of dict
        As in :class:`~audit.results.AuditResult`.
    design : dict
        The audit's design (``points``, ``replicates``, ``seed``, ...), with
        ``evaluations`` the total over every phase and ``evaluations_by_phase``.
    outputs : list of OutputAdvice
    settings : dict
        ``top``, ``nodes``, ``tolerance``, ``node_cap``, ``pilot``,
        ``freeze_threshold``, ``freeze_budget``, ``gain_points``.
    notices : list of str
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputAdvice]
    settings: dict[str, Any] = field(default_factory=dict)
    notices: list[str] = field(default_factory=list)

    kind = KIND

    def output(self, name: str) -> OutputAdvice:
        for o in self.outputs:
            if o.name == name:
                return o
        raise KeyError(f"no output named {name!r}; outputs: {[o.name for o in self.outputs]}")

    @property
    def audit(self) -> AuditResult:
        """The ordinary audit of the outputs that the advice starts from."""
        return AuditResult(
            self.model, self.inputs, self.design, [o.audit for o in self.outputs], [], self.notices
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "tool": "netdim",
            "schema": SCHEMA,
            "kind": self.kind,
            "model": dict(self.model),
            "inputs": [dict(i) for i in self.inputs],
            "design": dict(self.design),
            "settings": dict(self.settings),
            "outputs": [o.to_dict() for o in self.outputs],
            "notices": list(self.notices),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> AdviceResult:
        if d.get("tool") != "netdim":
            raise ValueError('not a netdim report (missing "tool": "netdim")')
        if d.get("schema") != SCHEMA:
            raise ValueError(
                f"report schema {d.get('schema')!r} is not supported (expected {SCHEMA})"
            )
        if d.get("kind") != KIND:
            raise ValueError(f"not an advice report (kind {d.get('kind')!r}, expected {KIND!r})")
        return cls(
            model=d["model"],
            inputs=d["inputs"],
            design=d["design"],
            outputs=[OutputAdvice.from_dict(o) for o in d["outputs"]],
            settings=dict(d.get("settings", {})),
            notices=list(d.get("notices", [])),
        )
