"""Result of ``netdim simplify``: the written model and its audit before and after, and their JSON form.

A :class:`SimplifiedResult` names the file written (format, hash, the kept
inputs, the rule or values used) and, per output, an :class:`OutputShift`:
the audit of the source (ν, variance, mean) and of the written model on the
kept inputs, with three checks:

* the mean after agrees with the mean before within the interval of their
  difference widened by the quadrature error (for frozen inputs: by the root
  of the measured mean squared change, which bounds the shift of the mean);
* for pre-integration, Var after = Var g − τ̄²_u(g), g the source with any
  frozen inputs fixed and u the integrated inputs (the variance identity);
* for freezing, the measured mean squared change E[(f(x) − f(x_{−u}, c))²] / σ²
  at the chosen values, beside the bound 2 τ̄²_u / σ² that holds on average
  for a value drawn from the law.

The JSON layout extends the audit report's (``"kind": "simplified"``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .audit import OutputResult
from .base import SCHEMA, Displayable, Estimate, _num, _unnum, check_header
from .preintegration import VarianceIdentity

__all__ = ["OutputShift", "SimplifiedResult"]

KIND = "simplified"


def _opt(x: Any) -> Any:
    return None if x is None else x.to_dict()


@dataclass(frozen=True)
class OutputShift:
    """One output before and after simplification.

    Attributes
    ----------
    name : str
    before : OutputResult
        The source's audit.
    after : OutputResult
        The written model's audit on the kept inputs.
    mean_change : Estimate
        Mean after − mean before (independent randomizations).
    mean_allowance : float
        What the mean may move by besides the estimates' noise: Σ quadrature error × sd, plus
        √(upper end of the measured mean squared change) for frozen inputs.
    mean_agrees : bool
        Whether |mean_change| lies within its interval's half-width plus ``mean_allowance``.
    variance_identity : VarianceIdentity or None
        Pre-integration only: Var after against Var g − τ̄²_u(g).
    freeze_change : Estimate or None
        Freezing only: measured E[(f(x) − f(x_{−u}, c))²] / σ² at the chosen values.
    freeze_bound : Estimate or None
        Freezing only: 2 τ̄²_u / σ², the mean squared change at a value drawn from the law.
    """

    name: str
    before: OutputResult
    after: OutputResult
    mean_change: Estimate
    mean_allowance: float
    mean_agrees: bool
    variance_identity: VarianceIdentity | None = None
    freeze_change: Estimate | None = None
    freeze_bound: Estimate | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "before": self.before.to_dict(),
            "after": self.after.to_dict(),
            "mean_change": self.mean_change.to_dict(),
            "mean_allowance": _num(self.mean_allowance),
            "mean_agrees": self.mean_agrees,
            "variance_identity": _opt(self.variance_identity),
            "freeze_change": _opt(self.freeze_change),
            "freeze_bound": _opt(self.freeze_bound),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> OutputShift:
        vi, fc, fb = d.get("variance_identity"), d.get("freeze_change"), d.get("freeze_bound")
        return cls(
            name=d["name"],
            before=OutputResult.from_dict(d["before"]),
            after=OutputResult.from_dict(d["after"]),
            mean_change=Estimate.from_dict(d["mean_change"]),
            mean_allowance=_unnum(d.get("mean_allowance")),
            mean_agrees=bool(d["mean_agrees"]),
            variance_identity=None if vi is None else VarianceIdentity.from_dict(vi),
            freeze_change=None if fc is None else Estimate.from_dict(fc),
            freeze_bound=None if fb is None else Estimate.from_dict(fb),
        )


@dataclass(frozen=True)
class SimplifiedResult(Displayable):
    """What one ``simplify`` run wrote and measured.

    Attributes
    ----------
    model, inputs, design : dict, list of dict, dict
        The source model, its inputs and the design of its audit (as in
        :class:`~audit.results.AuditResult`).
    written : dict
        ``path``, ``format``, ``sha256``, ``inputs`` (the kept names),
        ``evaluations_per_row`` and ``metadata`` (what the file records).
    outputs : list of OutputShift
        Empty when the run was not audited (``check=False``).
    notices : list of str
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    written: dict[str, Any]
    outputs: list[OutputShift] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)

    kind = KIND

    @property
    def integrated(self) -> list[dict[str, Any]]:
        return list(self.written.get("metadata", {}).get("integrated", []))

    @property
    def frozen(self) -> list[dict[str, Any]]:
        return list(self.written.get("metadata", {}).get("frozen", []))

    def output(self, name: str) -> OutputShift:
        for o in self.outputs:
            if o.name == name:
                return o
        raise KeyError(f"no output named {name!r}; outputs: {[o.name for o in self.outputs]}")

    def to_dict(self) -> dict[str, Any]:
        return {
            "tool": "netdim",
            "schema": SCHEMA,
            "kind": self.kind,
            "model": dict(self.model),
            "inputs": [dict(i) for i in self.inputs],
            "design": dict(self.design),
            "written": dict(self.written),
            "outputs": [o.to_dict() for o in self.outputs],
            "notices": list(self.notices),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> SimplifiedResult:
        check_header(d, KIND, "simplify")
        return cls(
            model=d["model"],
            inputs=d["inputs"],
            design=d["design"],
            written=dict(d["written"]),
            outputs=[OutputShift.from_dict(o) for o in d.get("outputs", [])],
            notices=list(d.get("notices", [])),
        )
