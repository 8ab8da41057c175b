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

from dataclasses import dataclass, field
from typing import Any

from .audit import AuditResult, OutputResult
from .base import SCHEMA, Displayable, check_header
from .freezing import FreezeGroup, FreezeItem
from .preintegration import Candidate, GainRow, RqmcGain, VarianceIdentity

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


@dataclass(frozen=True, repr=False)
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
        ``freeze_threshold``, ``freeze_budget``, ``gain_points``, ``only``, ``max_evaluations``.
    notices : list of str
    skipped : dict
        Parts of the advice that were not done (``"pre-integration"``, ``"rqmc gain"``,
        ``"freezing"``), each with the reason; their lists in ``outputs`` are empty, not measured.
    plan : dict
        The plan made before the run: ``evaluations`` per phase and in ``total`` (an estimate),
        ``max_evaluations`` (the budget given, or ``None``) and ``cuts`` (what was cut to fit it).
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputAdvice]
    settings: dict[str, Any] = field(default_factory=dict)
    notices: list[str] = field(default_factory=list)
    skipped: dict[str, str] = field(default_factory=dict)
    plan: dict[str, Any] = field(default_factory=dict)

    kind = KIND

    def output(self, name: str) -> OutputAdvice:
        for o in self.outputs:
            if o.name == name:
                return o
        raise KeyError(f"no output named {name!r}; outputs: {[o.name for o in self.outputs]}")

    @property
    def audit(self) -> AuditResult:
        """The ordinary audit of the outputs that the advice starts from."""
        return AuditResult(self.model, self.inputs, self.design, [o.audit for o in self.outputs], [], self.notices)

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
            "skipped": dict(self.skipped),
            "plan": dict(self.plan),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> AdviceResult:
        check_header(d, KIND, "advice")
        return cls(
            model=d["model"],
            inputs=d["inputs"],
            design=d["design"],
            outputs=[OutputAdvice.from_dict(o) for o in d["outputs"]],
            settings=dict(d.get("settings", {})),
            notices=list(d.get("notices", [])),
            skipped=dict(d.get("skipped", {})),
            plan=dict(d.get("plan", {})),
        )
