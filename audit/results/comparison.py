"""Results of a comparison of two model versions on the same points."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .audit import OutputResult
from .base import SCHEMA, Displayable, Estimate, FeatureEstimate, _num, _opt_dict, _opt_estimate, _unnum

__all__ = ["ComparisonResult", "GateCheck", "LayerChange", "OutputChange"]


@dataclass(frozen=True)
class OutputChange:
    """How one output changed from the old model to the new one.

    Attributes
    ----------
    name : str
        Output name (the new model's, when mapped).
    old, new : OutputResult
        Each side's own audit, from the same points.
    mean_dimension_change : Estimate or None
        ν(new) − ν(old) with a paired interval (``None`` when a side is inert).
    total_index_change : list of FeatureEstimate
        Change of each input's normalised total index (paired intervals), input order.
    moved : list of str
        Inputs whose total index changed beyond the tolerance (interval wholly beyond it), largest first.
    kendall_tau : float
        Kendall's tau-b of the total indices of the inputs that matter (``scipy.stats.kendalltau``).
    top_k, top_k_overlap : int, float
        Size of the leading sets compared and the share of the old set not clearly out of the new one.
    rank_agreement : Estimate or None
        Interval-aware share of pairs of inputs that matter kept in order
        (:func:`audit.studies.ranking.rank_agreement`), with its interval.
    ranked_inputs, swapped : int
        Inputs that matter, and pairs both models separate in opposite orders.
    first_order_change : list of FeatureEstimate
        Change of each input's normalised first-order index (paired intervals), input order.
    variance_change : Estimate or None
        Relative change of the output's variance, Var(new) / Var(old) − 1 (paired interval).
    """

    name: str
    old: OutputResult
    new: OutputResult
    mean_dimension_change: Estimate | None
    total_index_change: list[FeatureEstimate]
    moved: list[str]
    kendall_tau: float
    top_k: int
    top_k_overlap: float
    rank_agreement: Estimate | None = None
    ranked_inputs: int = 0
    swapped: int = 0
    first_order_change: list[FeatureEstimate] = field(default_factory=list)
    variance_change: Estimate | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "old": self.old.to_dict(),
            "new": self.new.to_dict(),
            "mean_dimension_change": _opt_dict(self.mean_dimension_change),
            "total_index_change": [f.to_dict() for f in self.total_index_change],
            "moved": list(self.moved),
            "rank_agreement": {
                "kendall_tau": _num(self.kendall_tau),
                "top_k": self.top_k,
                "top_k_overlap": _num(self.top_k_overlap),
                "agreement": _opt_dict(self.rank_agreement),
                "inputs": self.ranked_inputs,
                "swapped": self.swapped,
            },
            "first_order_change": [f.to_dict() for f in self.first_order_change],
            "variance_change": _opt_dict(self.variance_change),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> OutputChange:
        ra = d.get("rank_agreement", {})
        return cls(
            name=d["name"],
            old=OutputResult.from_dict(d["old"]),
            new=OutputResult.from_dict(d["new"]),
            mean_dimension_change=_opt_estimate(d.get("mean_dimension_change")),
            total_index_change=[FeatureEstimate.from_dict(x) for x in d.get("total_index_change", [])],
            moved=list(d.get("moved", [])),
            kendall_tau=_unnum(ra.get("kendall_tau")),
            top_k=int(ra.get("top_k", 0)),
            top_k_overlap=_unnum(ra.get("top_k_overlap")),
            rank_agreement=_opt_estimate(ra.get("agreement")),
            ranked_inputs=int(ra.get("inputs", 0)),
            swapped=int(ra.get("swapped", 0)),
            first_order_change=[FeatureEstimate.from_dict(x) for x in d.get("first_order_change", [])],
            variance_change=_opt_estimate(d.get("variance_change")),
        )


@dataclass(frozen=True)
class LayerChange:
    """Change of a hidden layer present in both models (same name and unit count)."""

    name: str
    units: int
    old: dict[str, Any]
    new: dict[str, Any]
    nu_weighted_change: Estimate | None

    def to_dict(self) -> dict[str, Any]:
        clean = lambda s: {k: (_num(v) if isinstance(v, float) else v) for k, v in s.items()}  # noqa: E731
        return {
            "name": self.name,
            "units": self.units,
            "old": clean(self.old),
            "new": clean(self.new),
            "nu_weighted_change": _opt_dict(self.nu_weighted_change),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> LayerChange:
        unclean = lambda s: {k: (math.nan if v is None else v) for k, v in s.items()}  # noqa: E731
        return cls(
            d["name"], int(d["units"]), unclean(d["old"]), unclean(d["new"]), _opt_estimate(d.get("nu_weighted_change"))
        )


@dataclass(frozen=True)
class GateCheck:
    """One pipeline gate: its limit, the value judged, and whether it passed."""

    name: str
    limit: float
    value: float
    passed: bool
    detail: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "limit": _num(self.limit),
            "value": _num(self.value),
            "passed": self.passed,
            "detail": self.detail,
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> GateCheck:
        return cls(d["name"], _unnum(d["limit"]), _unnum(d["value"]), bool(d["passed"]), d.get("detail", ""))


@dataclass(frozen=True, repr=False)
class ComparisonResult(Displayable):
    """Two model versions measured on the same randomized points."""

    old_model: dict[str, Any]
    new_model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputChange]
    layers: list[LayerChange] = field(default_factory=list)
    gates: list[GateCheck] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)

    kind = "comparison"

    @property
    def passed(self) -> bool:
        return all(g.passed for g in self.gates)

    def to_dict(self) -> dict[str, Any]:
        return {
            "tool": "netdim",
            "schema": SCHEMA,
            "kind": self.kind,
            "model": {"old": dict(self.old_model), "new": dict(self.new_model)},
            "inputs": [dict(i) for i in self.inputs],
            "design": dict(self.design),
            "outputs": [o.to_dict() for o in self.outputs],
            "layers": [x.to_dict() for x in self.layers],
            "gates": {"passed": self.passed, "checks": [g.to_dict() for g in self.gates]},
            "notices": list(self.notices),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> ComparisonResult:
        if d.get("tool") != "netdim" or d.get("kind") != "comparison":
            raise ValueError("not a netdim comparison report")
        if d.get("schema") != SCHEMA:
            raise ValueError(f"report schema {d.get('schema')!r} is not supported (expected {SCHEMA})")
        return cls(
            old_model=d["model"]["old"],
            new_model=d["model"]["new"],
            inputs=d["inputs"],
            design=d["design"],
            outputs=[OutputChange.from_dict(o) for o in d["outputs"]],
            layers=[LayerChange.from_dict(x) for x in d.get("layers", [])],
            gates=[GateCheck.from_dict(g) for g in d.get("gates", {}).get("checks", [])],
            notices=list(d.get("notices", [])),
        )
