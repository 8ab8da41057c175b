"""Results of an audit: outputs, hidden units and layers, and the whole run."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .base import (
    SCHEMA,
    Displayable,
    Estimate,
    FeatureEstimate,
    _num,
    _opt_dict,
    _opt_estimate,
    check_header,
    first_order_position,
    position,
)

__all__ = ["AuditResult", "LayerResult", "OutputResult", "PairEstimate", "UnitResult"]


#: Words of the JSON for an index outside its possible range (``outside_range``): its 95 % interval
#: reaches back into the range, or even the interval lies outside (the text report's two marks).
_OUTSIDE = {"noise": "within noise", "beyond": "beyond noise"}


def _placed(f: FeatureEstimate, where: str) -> dict[str, Any]:
    """``f`` as JSON, with ``outside_range`` when it lies outside [0, 1] (or a first-order index above its total)."""
    d = f.to_dict()
    if where in _OUTSIDE:
        d["outside_range"] = _OUTSIDE[where]
    return d


def _nu(e: Estimate | None, d: int | None) -> dict[str, Any] | None:
    """A mean dimension as JSON, with ``outside_range`` when it lies outside [1, d] (``d`` known)."""
    out = _opt_dict(e)
    if out is not None and e is not None and d:
        where = position(e, 1.0, float(d))
        if where in _OUTSIDE:
            out["outside_range"] = _OUTSIDE[where]
    return out


@dataclass(frozen=True)
class PairEstimate:
    """Superset importance of a pair of inputs, Σ_{u ⊇ {j, k}} σ²_u / σ², with its interval."""

    first: str
    second: str
    value: Estimate

    def to_dict(self) -> dict[str, Any]:
        return {"inputs": [self.first, self.second], **self.value.to_dict()}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> PairEstimate:
        a, b = d["inputs"]
        return cls(str(a), str(b), Estimate.from_dict(d))


@dataclass(frozen=True)
class OutputResult:
    """ANOVA summary of one scalar output.

    Attributes
    ----------
    name : str
        Output unit name.
    mean, variance : Estimate
        Mean and variance of the output under the input laws.
    mean_dimension : Estimate or None
        Mean dimension in the superposition sense; ``None`` when the output
        is inert (zero variance).
    total_index, first_order : list of FeatureEstimate
        Normalised total and first-order Sobol' indices in input order
        (empty when inert; ``first_order`` is empty for the fast estimator).
    inert : bool
        True when the output does not vary at all under the input laws.
    unreliable : str
        Why the estimates say nothing ("" when they do): an interval of ν wholly
        outside [1, d] or wider than that range, or of an index outside [0, 1]
        (see :func:`audit.estimators.inert.unreliable`).
    relation : str
        When the output is an exact affine function of earlier outputs, that function
        (``"= 1 − probabilities[0]"``); "" otherwise.
    pairs : list of PairEstimate
        Superset importance of the pairs measured (when asked for), strongest first.
    dimension_spread : Estimate or None
        Variance of the dimension |u| (|u| drawn with probability σ²_u / σ²), from the
        pairs of every input; when only K inputs were paired, that of |u ∩ K|.
    """

    name: str
    mean: Estimate
    variance: Estimate
    mean_dimension: Estimate | None
    total_index: list[FeatureEstimate] = field(default_factory=list)
    first_order: list[FeatureEstimate] = field(default_factory=list)
    inert: bool = False
    unreliable: str = ""
    relation: str = ""
    pairs: list[PairEstimate] = field(default_factory=list)
    dimension_spread: Estimate | None = None

    @property
    def additive_share(self) -> float:
        """Sum of first-order indices: the share of variance of the additive part."""
        return float(sum(f.value.estimate for f in self.first_order))

    def ranked(self) -> list[FeatureEstimate]:
        """Total indices, largest first."""
        return sorted(self.total_index, key=lambda f: -f.value.estimate)

    def to_dict(self, d: int | None = None) -> dict[str, Any]:
        """JSON; ``d`` (inputs or groups, default: one per total index) bounds ν for ``outside_range``."""
        totals = {f.feature: f.value for f in self.total_index}
        return {
            "name": self.name,
            "inert": self.inert,
            "mean": self.mean.to_dict(),
            "variance": self.variance.to_dict(),
            "mean_dimension": _nu(self.mean_dimension, d or len(self.total_index)),
            "total_index": [_placed(f, position(f.value, 0.0, 1.0)) for f in self.total_index],
            "first_order": [
                _placed(f, first_order_position(f.value, totals.get(f.feature))) for f in self.first_order
            ],
            **({"unreliable": self.unreliable} if self.unreliable else {}),
            **({"relation": self.relation} if self.relation else {}),
            **({"pairs": [p.to_dict() for p in self.pairs]} if self.pairs else {}),
            **({"dimension_spread": self.dimension_spread.to_dict()} if self.dimension_spread else {}),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> OutputResult:
        return cls(
            name=d["name"],
            mean=Estimate.from_dict(d["mean"]),
            variance=Estimate.from_dict(d["variance"]),
            mean_dimension=_opt_estimate(d.get("mean_dimension")),
            total_index=[FeatureEstimate.from_dict(x) for x in d.get("total_index", [])],
            first_order=[FeatureEstimate.from_dict(x) for x in d.get("first_order", [])],
            inert=bool(d.get("inert", False)),
            unreliable=str(d.get("unreliable", "")),
            relation=str(d.get("relation", "")),
            pairs=[PairEstimate.from_dict(x) for x in d.get("pairs", [])],
            dimension_spread=_opt_estimate(d.get("dimension_spread")),
        )


@dataclass(frozen=True)
class UnitResult:
    """Variance and mean dimension of one hidden unit (``unreliable`` as for :class:`OutputResult`)."""

    unit: str
    variance: Estimate
    mean_dimension: Estimate | None
    inert: bool = False
    total_index: list[FeatureEstimate] = field(default_factory=list)
    unreliable: str = ""

    def to_dict(self, d: int | None = None) -> dict[str, Any]:
        """JSON; ``d`` (inputs or groups, default: one per total index, if any) bounds ν for ``outside_range``."""
        out = {
            "unit": self.unit,
            "inert": self.inert,
            "variance": self.variance.to_dict(),
            "mean_dimension": _nu(self.mean_dimension, d or len(self.total_index)),
        }
        if self.total_index:
            out["total_index"] = [f.to_dict() for f in self.total_index]
        if self.unreliable:
            out["unreliable"] = self.unreliable
        return out

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> UnitResult:
        return cls(
            unit=d["unit"],
            variance=Estimate.from_dict(d["variance"]),
            mean_dimension=_opt_estimate(d.get("mean_dimension")),
            inert=bool(d.get("inert", False)),
            total_index=[FeatureEstimate.from_dict(x) for x in d.get("total_index", [])],
            unreliable=str(d.get("unreliable", "")),
        )


@dataclass(frozen=True)
class LayerResult:
    """Mean dimension of every unit of one hidden layer, and a summary.

    ``summary`` holds ``units``, ``inert_units``, ``unreliable_units``, the
    quantiles ``nu_min``, ``nu_median``, ``nu_p90``, ``nu_max`` of the unit
    estimates (inert and unreliable units left out) and ``nu_weighted``, the
    variance-weighted mean of ν over the units kept, with its interval.
    """

    name: str
    op: str
    shape: tuple[int, ...]
    summary: dict[str, Any]
    units: list[UnitResult]

    def to_dict(self, d: int | None = None) -> dict[str, Any]:
        """JSON; ``d`` (inputs or groups) bounds the units' ν for ``outside_range``."""
        return {
            "name": self.name,
            "op": self.op,
            "shape": list(self.shape),
            "summary": {k: (_num(v) if isinstance(v, float) else v) for k, v in self.summary.items()},
            "units": [u.to_dict(d) for u in self.units],
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> LayerResult:
        summary = {k: (math.nan if v is None else v) for k, v in d["summary"].items()}
        return cls(
            name=d["name"],
            op=d.get("op", ""),
            shape=tuple(d.get("shape", ())),
            summary=summary,
            units=[UnitResult.from_dict(u) for u in d["units"]],
        )


@dataclass(frozen=True, repr=False)
class AuditResult(Displayable):
    """Everything one audit measured.

    Attributes
    ----------
    model : dict
        Where the model came from: ``source``, ``format``, ``input_shape``...
    inputs : list of dict
        One entry per feature: ``name`` and its law (``law`` plus parameters).
    design : dict
        ``points``, ``replicates``, ``seed``, ``sampler``, ``estimator``,
        ``evaluations``, ``interval`` (how intervals were made) and timings.
    outputs : list of OutputResult
    layers : list of LayerResult
    notices : list of str
        Things the user should know about the run (rounded N, ...).
    replicates : dict
        The per-randomization values the intervals came from (JSON-ready arrays), so
        that a later comparison can pair a new model with this audit on the same points
        (see :mod:`audit.studies.replicates`).
    groups : list of dict
        In a grouped run (``design["view"] == "groups"``): each group's ``name`` and
        its ``inputs``; the indices and ν are then those of the groups, and their
        ``feature`` names are group names. Empty for a run over single inputs.
    by_group : AuditResult or None
        The grouped view of a run that asked for both views (on the same points).
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputResult]
    layers: list[LayerResult] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)
    replicates: dict[str, Any] = field(default_factory=dict, repr=False)
    groups: list[dict[str, Any]] = field(default_factory=list)
    by_group: AuditResult | None = None

    kind = "audit"

    @property
    def grouped(self) -> bool:
        """True when the indices of this result are those of groups of inputs."""
        return bool(self.groups)

    @property
    def dimension(self) -> int:
        """The most ν can be: the number of groups in a grouped run, else of inputs."""
        return len(self.groups) if self.groups else len(self.inputs)

    def output(self, name: str) -> OutputResult:
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
            "outputs": [o.to_dict(self.dimension) for o in self.outputs],
            "layers": [layer.to_dict(self.dimension) for layer in self.layers],
            "notices": list(self.notices),
            **({"replicates": self.replicates} if self.replicates else {}),
            **({"groups": [dict(g) for g in self.groups]} if self.groups else {}),
            **({"by_group": self.by_group.to_dict()} if self.by_group is not None else {}),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> AuditResult:
        check_header(d)
        return cls(
            model=d["model"],
            inputs=d["inputs"],
            design=d["design"],
            outputs=[OutputResult.from_dict(o) for o in d["outputs"]],
            layers=[LayerResult.from_dict(x) for x in d.get("layers", [])],
            notices=list(d.get("notices", [])),
            replicates=dict(d.get("replicates", {})),
            groups=[dict(g) for g in d.get("groups", [])],
            by_group=cls.from_dict(d["by_group"]) if d.get("by_group") else None,
        )
