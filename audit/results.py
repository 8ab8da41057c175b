"""Result objects of netdim studies and their JSON form.

Every number netdim reports is an :class:`Estimate`: a pooled value and a 95 %
Student-t interval over independent randomizations. Results are plain
dataclasses with ``to_dict()`` / ``from_dict()``; the JSON report is
``to_dict()`` written with :func:`json.dump`. ``SCHEMA`` is bumped on any
breaking change of the JSON layout.

The report layer renders these objects and nothing else.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "SCHEMA",
    "AuditResult",
    "ComparisonResult",
    "Estimate",
    "FeatureEstimate",
    "GateCheck",
    "LayerChange",
    "LayerResult",
    "OutputChange",
    "OutputResult",
    "UnitResult",
]

SCHEMA = 1


def _num(x: float | None) -> float | None:
    """JSON-safe float: NaN and infinities become ``None``."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _unnum(x: Any) -> float:
    return math.nan if x is None else float(x)


@dataclass(frozen=True)
class Estimate:
    """A pooled estimate with a confidence interval.

    Attributes
    ----------
    estimate : float
        Mean of the per-randomization values.
    ci_low, ci_high : float
        Ends of the two-sided Student-t interval (``level``) over the
        independent randomizations.
    std_error : float
        Standard error of ``estimate`` (sample sd / sqrt(R)).
    """

    estimate: float
    ci_low: float
    ci_high: float
    std_error: float

    @property
    def width(self) -> float:
        return self.ci_high - self.ci_low

    def covers(self, value: float) -> bool:
        return self.ci_low <= value <= self.ci_high

    def to_dict(self) -> dict[str, Any]:
        return {
            "estimate": _num(self.estimate),
            "ci_low": _num(self.ci_low),
            "ci_high": _num(self.ci_high),
            "std_error": _num(self.std_error),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Estimate:
        return cls(
            _unnum(d["estimate"]),
            _unnum(d["ci_low"]),
            _unnum(d["ci_high"]),
            _unnum(d.get("std_error")),
        )


@dataclass(frozen=True)
class FeatureEstimate:
    """An index of one input feature (normalised by the output's variance)."""

    feature: str
    value: Estimate

    def to_dict(self) -> dict[str, Any]:
        return {"feature": self.feature, **self.value.to_dict()}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> FeatureEstimate:
        return cls(d["feature"], Estimate.from_dict(d))


def _opt_estimate(d: dict[str, Any] | None) -> Estimate | None:
    return None if d is None else Estimate.from_dict(d)


def _opt_dict(e: Estimate | None) -> dict[str, Any] | None:
    return None if e is None else e.to_dict()


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
    """

    name: str
    mean: Estimate
    variance: Estimate
    mean_dimension: Estimate | None
    total_index: list[FeatureEstimate] = field(default_factory=list)
    first_order: list[FeatureEstimate] = field(default_factory=list)
    inert: bool = False

    @property
    def additive_share(self) -> float:
        """Sum of first-order indices: the share of variance of the additive part."""
        return float(sum(f.value.estimate for f in self.first_order))

    def ranked(self) -> list[FeatureEstimate]:
        """Total indices, largest first."""
        return sorted(self.total_index, key=lambda f: -f.value.estimate)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "inert": self.inert,
            "mean": self.mean.to_dict(),
            "variance": self.variance.to_dict(),
            "mean_dimension": _opt_dict(self.mean_dimension),
            "total_index": [f.to_dict() for f in self.total_index],
            "first_order": [f.to_dict() for f in self.first_order],
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
        )


@dataclass(frozen=True)
class UnitResult:
    """Variance and mean dimension of one hidden unit."""

    unit: str
    variance: Estimate
    mean_dimension: Estimate | None
    inert: bool = False
    total_index: list[FeatureEstimate] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        d = {
            "unit": self.unit,
            "inert": self.inert,
            "variance": self.variance.to_dict(),
            "mean_dimension": _opt_dict(self.mean_dimension),
        }
        if self.total_index:
            d["total_index"] = [f.to_dict() for f in self.total_index]
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> UnitResult:
        return cls(
            unit=d["unit"],
            variance=Estimate.from_dict(d["variance"]),
            mean_dimension=_opt_estimate(d.get("mean_dimension")),
            inert=bool(d.get("inert", False)),
            total_index=[FeatureEstimate.from_dict(x) for x in d.get("total_index", [])],
        )


@dataclass(frozen=True)
class LayerResult:
    """Mean dimension of every unit of one hidden layer, and a summary.

    ``summary`` holds ``units``, ``inert_units``, the quantiles ``nu_min``,
    ``nu_median``, ``nu_p90``, ``nu_max`` of the unit estimates (inert units
    left out) and ``nu_weighted``, the variance-weighted mean of ν over units.
    """

    name: str
    op: str
    shape: tuple[int, ...]
    summary: dict[str, Any]
    units: list[UnitResult]

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "op": self.op,
            "shape": list(self.shape),
            "summary": {k: (_num(v) if isinstance(v, float) else v) for k, v in self.summary.items()},
            "units": [u.to_dict() for u in self.units],
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


@dataclass(frozen=True)
class AuditResult:
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
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputResult]
    layers: list[LayerResult] = field(default_factory=list)
    notices: list[str] = field(default_factory=list)

    kind = "audit"

    def __rich__(self) -> Any:
        """Render as the terminal report (rich consoles and Jupyter notebooks)."""
        from .report.terminal import renderable

        return renderable(self)

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
            "outputs": [o.to_dict() for o in self.outputs],
            "layers": [layer.to_dict() for layer in self.layers],
            "notices": list(self.notices),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> AuditResult:
        if d.get("tool") != "netdim":
            raise ValueError('not a netdim report (missing "tool": "netdim")')
        if d.get("schema") != SCHEMA:
            raise ValueError(f"report schema {d.get('schema')!r} is not supported (expected {SCHEMA})")
        return cls(
            model=d["model"],
            inputs=d["inputs"],
            design=d["design"],
            outputs=[OutputResult.from_dict(o) for o in d["outputs"]],
            layers=[LayerResult.from_dict(x) for x in d.get("layers", [])],
            notices=list(d.get("notices", [])),
        )


# -- compare -------------------------------------------------------------------


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
        Inputs whose total index changed significantly (interval excludes 0), largest first.
    kendall_tau : float
        Rank agreement of the total indices (``scipy.stats.kendalltau``).
    top_k, top_k_overlap : int, float
        Size of the leading sets compared and the share they have in common.
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
            },
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
        return cls(d["name"], int(d["units"]), unclean(d["old"]), unclean(d["new"]),
                   _opt_estimate(d.get("nu_weighted_change")))


@dataclass(frozen=True)
class GateCheck:
    """One pipeline gate: its limit, the value judged, and whether it passed."""

    name: str
    limit: float
    value: float
    passed: bool
    detail: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "limit": _num(self.limit), "value": _num(self.value),
                "passed": self.passed, "detail": self.detail}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> GateCheck:
        return cls(d["name"], _unnum(d["limit"]), _unnum(d["value"]), bool(d["passed"]), d.get("detail", ""))


@dataclass(frozen=True)
class ComparisonResult:
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

    def __rich__(self) -> Any:
        """Render as the comparison report (rich consoles and Jupyter notebooks)."""
        from .report.comparison import renderable

        return renderable(self)

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
