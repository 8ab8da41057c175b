"""Results of a slopes study: derivative-based bounds, active directions, and a screened audit.

JSON layout (kind ``"slopes"``): ``outputs`` (per output: ``bounds`` of every
input beside its total index, ``bound_sum``, ``lipschitz``, ``directions``),
``layers`` (the directions each hidden layer's units span together) and, for a
screening run, ``screening`` (inputs kept and left out, the indices measured
on the kept ones and the bound on what the rest carry).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from .base import SCHEMA, Displayable, Estimate, FeatureEstimate, _num, _opt_dict, _opt_estimate, _unnum, check_header

__all__ = [
    "Direction",
    "DirectionSummary",
    "InputBound",
    "LayerSlopes",
    "OutputSlopes",
    "ScreenedOutput",
    "Screening",
    "SlopesResult",
]


@dataclass(frozen=True)
class Direction:
    """One leading direction: its share of ``tr C``, its largest loadings ``(input, weight)`` and the whole
    unit vector in standardised coordinates (input order, its largest component positive)."""

    share: float
    loadings: list[tuple[str, float]]
    vector: list[float] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "share": _num(self.share),
            "loadings": [{"feature": f, "weight": _num(w)} for f, w in self.loadings],
            "vector": [_num(w) for w in self.vector],
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Direction:
        loadings = [(x["feature"], _unnum(x["weight"])) for x in d["loadings"]]
        return cls(_unnum(d["share"]), loadings, [_unnum(w) for w in d.get("vector", [])])


@dataclass(frozen=True)
class DirectionSummary:
    """Eigen-structure of ``C = E[∇f ∇fᵀ]`` in standardised coordinates.

    Attributes
    ----------
    eigenvalues : list of Estimate
        The leading eigenvalues, over the randomizations, divided by the variance
        (outputs: their sum bounds ν) or by ``tr C`` (layers: shares).
    shares : list of float
        Pooled shares of ``tr C`` of the leading eigenvalues.
    count : int
        Directions r: the fewest whose eigenvalues hold all but ``residual_share ≤ 1 %`` of ``tr C``.
    nonzero : int
        Eigenvalues above the rounding floor of the gradients and of the eigensolver.
    few : bool
        r counts as few for d inputs (``r < d`` and ``r ≤ max(3, d / 4)``): the output is close to a
        ridge function of r directions.
    gap : float
        ``λ_r / λ_{r+1}`` (the next eigenvalue floored at the rounding floor).
    largest_gap_at : int
        The k ≤ r with the largest ``λ_k / λ_{k+1}``.
    residual_share : float
        Share of ``tr C`` beyond the r directions.
    spread_degrees : float
        Largest angle between a randomization's ``largest_gap_at`` leading directions and the pooled ones.
    directions : list of Direction
        The leading directions (at most three).
    ridge_error : Estimate or None
        With every input normal: ``Σ_{k>r} λ_k / σ²``, a bound on the share of the variance
        that the best function of the r directions misses; ``None`` otherwise.
    """

    eigenvalues: list[Estimate]
    shares: list[float]
    count: int
    nonzero: int
    gap: float
    largest_gap_at: int
    residual_share: float
    spread_degrees: float
    directions: list[Direction] = field(default_factory=list)
    ridge_error: Estimate | None = None
    few: bool = False

    @property
    def gap_share(self) -> float:
        """Share of ``tr C`` held by the ``largest_gap_at`` leading directions (of those kept in ``shares``)."""
        return float(sum(self.shares[: self.largest_gap_at]))

    def to_dict(self) -> dict[str, Any]:
        return {
            "few": self.few,
            "eigenvalues": [e.to_dict() for e in self.eigenvalues],
            "shares": [_num(s) for s in self.shares],
            "count": self.count,
            "nonzero": self.nonzero,
            "gap": _num(self.gap),
            "largest_gap_at": self.largest_gap_at,
            "residual_share": _num(self.residual_share),
            "spread_degrees": _num(self.spread_degrees),
            "leading": [x.to_dict() for x in self.directions],
            "ridge_error": _opt_dict(self.ridge_error),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> DirectionSummary:
        return cls(
            [Estimate.from_dict(e) for e in d["eigenvalues"]],
            [_unnum(s) for s in d["shares"]],
            int(d["count"]),
            int(d["nonzero"]),
            _unnum(d["gap"]),
            int(d["largest_gap_at"]),
            _unnum(d["residual_share"]),
            _unnum(d["spread_degrees"]),
            [Direction.from_dict(x) for x in d.get("leading", [])],
            _opt_estimate(d.get("ridge_error")),
            bool(d.get("few", False)),
        )


@dataclass(frozen=True)
class InputBound:
    """One input of one output: the derivative-based bound on its total index, beside the index.

    ``bound`` is ``E[(∂f/∂z)²] / σ²`` (normalised, an upper bound on the total index);
    ``mean_square`` is ``E[(∂f/∂z)²]`` itself; ``total`` the Jansen estimate (``None``
    when not measured).
    """

    feature: str
    bound: Estimate
    mean_square: Estimate
    total: Estimate | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "feature": self.feature,
            "bound": self.bound.to_dict(),
            "mean_square_slope": self.mean_square.to_dict(),
            "total_index": _opt_dict(self.total),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> InputBound:
        return cls(
            d["feature"],
            Estimate.from_dict(d["bound"]),
            Estimate.from_dict(d["mean_square_slope"]),
            _opt_estimate(d.get("total_index")),
        )


@dataclass(frozen=True)
class OutputSlopes:
    """Bounds and directions of one output.

    ``bound_sum`` is ``Σ_j bound_j`` (``tr C / σ²``, an upper bound on ν); ``lipschitz``
    the largest gradient length seen at the points, ``lipschitz_bound`` = lipschitz² / σ²
    (the Lipschitz form of the bound on ν); ``mean_dimension`` the Jansen ν.
    """

    name: str
    variance: Estimate
    bounds: list[InputBound]
    bound_sum: Estimate | None
    lipschitz: float
    lipschitz_bound: float
    mean_dimension: Estimate | None = None
    directions: DirectionSummary | None = None
    inert: bool = False

    def ranked(self) -> list[InputBound]:
        """Bounds, largest first."""
        return sorted(self.bounds, key=lambda b: -b.bound.estimate if b.bound.estimate == b.bound.estimate else 0.0)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "inert": self.inert,
            "variance": self.variance.to_dict(),
            "bounds": [b.to_dict() for b in self.bounds],
            "bound_sum": _opt_dict(self.bound_sum),
            "lipschitz": {"largest_slope": _num(self.lipschitz), "bound": _num(self.lipschitz_bound)},
            "mean_dimension": _opt_dict(self.mean_dimension),
            "directions": None if self.directions is None else self.directions.to_dict(),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> OutputSlopes:
        lip = d.get("lipschitz") or {}
        return cls(
            d["name"],
            Estimate.from_dict(d["variance"]),
            [InputBound.from_dict(b) for b in d["bounds"]],
            _opt_estimate(d.get("bound_sum")),
            _unnum(lip.get("largest_slope")),
            _unnum(lip.get("bound")),
            _opt_estimate(d.get("mean_dimension")),
            None if d.get("directions") is None else DirectionSummary.from_dict(d["directions"]),
            bool(d.get("inert", False)),
        )


@dataclass(frozen=True)
class LayerSlopes:
    """The directions a hidden layer's units span together (their ``Σ_u E[∇h_u ∇h_uᵀ]``)."""

    name: str
    op: str
    units: int
    directions: DirectionSummary
    nu_median: float | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "op": self.op,
            "units": self.units,
            "directions": self.directions.to_dict(),
            "nu_median": _num(self.nu_median),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> LayerSlopes:
        nu = d.get("nu_median")
        return cls(d["name"], d.get("op", ""), int(d["units"]), DirectionSummary.from_dict(d["directions"]),
                   None if nu is None else float(nu))  # fmt: skip


@dataclass(frozen=True)
class ScreenedOutput:
    """The screened audit of one output: the kept inputs' indices and the rest as one group."""

    name: str
    kept: list[FeatureEstimate]
    kept_first: list[FeatureEstimate]
    rest_total: Estimate | None
    rest_bound: Estimate | None

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "total_index": [f.to_dict() for f in self.kept],
            "first_order": [f.to_dict() for f in self.kept_first],
            "rest_total_index": _opt_dict(self.rest_total),
            "rest_bound": _opt_dict(self.rest_bound),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> ScreenedOutput:
        return cls(
            d["name"],
            [FeatureEstimate.from_dict(x) for x in d["total_index"]],
            [FeatureEstimate.from_dict(x) for x in d.get("first_order", [])],
            _opt_estimate(d.get("rest_total_index")),
            _opt_estimate(d.get("rest_bound")),
        )


@dataclass(frozen=True)
class Screening:
    """Which inputs the gradients kept, which they left out, and what the audit of the kept ones found."""

    kept: list[str]
    left_out: list[str]
    outputs: list[ScreenedOutput]

    def to_dict(self) -> dict[str, Any]:
        outputs = [o.to_dict() for o in self.outputs]
        return {"kept": list(self.kept), "left_out": list(self.left_out), "outputs": outputs}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> Screening:
        return cls(list(d["kept"]), list(d["left_out"]), [ScreenedOutput.from_dict(o) for o in d["outputs"]])


@dataclass(frozen=True)
class SlopesResult(Displayable):
    """Everything a slopes study measured.

    Attributes
    ----------
    model, inputs : dict, list of dict
        As in :class:`~audit.results.AuditResult`; each input also has ``bound_rule``.
    design : dict
        ``gradient_points``, ``replicates``, ``seed``, ``method`` (``autograd`` or
        ``central differences``), ``evaluations_per_point``, ``cost_rule``,
        ``gradient_evaluations``, ``index_evaluations``, ``full_evaluations`` (what an
        audit of every input costs), ``cost_fraction``, ``accuracy``, ``seconds``.
    outputs : list of OutputSlopes
    layers : list of LayerSlopes
    screening : Screening or None
    notices : list of str
    """

    model: dict[str, Any]
    inputs: list[dict[str, Any]]
    design: dict[str, Any]
    outputs: list[OutputSlopes]
    layers: list[LayerSlopes] = field(default_factory=list)
    screening: Screening | None = None
    notices: list[str] = field(default_factory=list)

    kind = "slopes"

    def output(self, name: str) -> OutputSlopes:
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
            "layers": [x.to_dict() for x in self.layers],
            "screening": None if self.screening is None else self.screening.to_dict(),
            "notices": list(self.notices),
        }

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> SlopesResult:
        check_header(d)
        return cls(
            d["model"],
            d["inputs"],
            d["design"],
            [OutputSlopes.from_dict(o) for o in d["outputs"]],
            [LayerSlopes.from_dict(x) for x in d.get("layers", [])],
            None if d.get("screening") is None else Screening.from_dict(d["screening"]),
            list(d.get("notices", [])),
        )
