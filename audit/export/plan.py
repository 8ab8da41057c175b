"""What a simplified model does: inputs integrated out by a Gauss rule, inputs fixed at values.

An :class:`ExportPlan` says, for a model of d inputs, which inputs are
integrated out (each with the Gauss rule of its law, as
:class:`~audit.quadrature.PreIntegrated` builds it: nodes z_q and weights w_q
summing to 1) and which are frozen at a value. With several integrated inputs
the rule is their tensor product: M = Π m_i grid points, each weight the
product of the inputs' weights. The simplified model of the kept inputs is

    g(x_kept) = Σ_q W_q f(x_kept, Z_q, c),

the conditional expectation over the integrated inputs (up to the rule's
error) with the frozen inputs at their values c. :class:`ReducedModel` is that
model in memory (netdim's evaluator; for one integrated input it equals
:class:`~audit.quadrature.PreIntegratedModel`); the writers of
:mod:`audit.export` build it as a file. :meth:`ExportPlan.metadata` is what every
written file records.

References
----------
.. [1] Tensor-product Gauss rules for integrating several independent inputs
   out are common practice, no source.
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import UserError
from ..inputs import Law
from ..models.base import Evaluation, LayerInfo, Model, TensorInfo, feature_count
from ..quadrature import MAX_ROWS, PreIntegrated, check_nodes, node_average
from ..version import __version__

__all__ = ["MAX_GRID", "ExportPlan", "Fixed", "Integrated", "ReducedModel", "file_sha256", "make_plan"]

#: Largest tensor-product rule: each row of the simplified model costs this many evaluations at most.
MAX_GRID = 1 << 14


@dataclass(frozen=True)
class Integrated:
    """One input integrated out.

    Attributes
    ----------
    feature : str
    index : int
        Its position among the model's d inputs.
    law : Law
    nodes, weights : ndarray
        The Gauss rule (weights sum to 1; nodes of zero weight dropped).
    quadrature_error : float or None
        Largest |f̃_m − f̃_2m| / sd found by the node check (``None`` when the count was given).
    converged : bool
        False when the node check never met its tolerance.
    """

    feature: str
    index: int
    law: Law
    nodes: np.ndarray
    weights: np.ndarray
    quadrature_error: float | None = None
    converged: bool = True

    @property
    def count(self) -> int:
        return len(self.weights)


@dataclass(frozen=True)
class Fixed:
    """One input frozen at ``value``; ``chosen`` says how: ``given``, ``median`` or ``best``."""

    feature: str
    index: int
    law: Law
    value: float
    chosen: str = "given"
    search_error: float | None = None


@dataclass(frozen=True)
class ExportPlan:
    """Which inputs of a d-input model are integrated out and which are frozen.

    Attributes
    ----------
    names, laws : list
        The model's d inputs.
    integrated : list of Integrated
    frozen : list of Fixed
    source : dict
        ``path``, ``format`` and ``sha256`` of the source model (what :func:`make_plan` found).
    checks : dict
        Figures measured on the source that the file should carry (set by the workflow).
    """

    names: list[str]
    laws: list[Law]
    integrated: list[Integrated] = field(default_factory=list)
    frozen: list[Fixed] = field(default_factory=list)
    source: dict[str, Any] = field(default_factory=dict)
    checks: dict[str, Any] = field(default_factory=dict)

    @property
    def d(self) -> int:
        return len(self.names)

    @property
    def kept(self) -> list[int]:
        """Positions of the inputs the simplified model still takes, in order."""
        gone = {i.index for i in self.integrated} | {f.index for f in self.frozen}
        return [j for j in range(self.d) if j not in gone]

    @property
    def kept_names(self) -> list[str]:
        return [self.names[j] for j in self.kept]

    @property
    def kept_laws(self) -> list[Law]:
        return [self.laws[j] for j in self.kept]

    @property
    def kind(self) -> str:
        """``preintegrated``, ``frozen`` or ``preintegrated+frozen``."""
        parts = (["preintegrated"] if self.integrated else []) + (["frozen"] if self.frozen else [])
        return "+".join(parts)

    @property
    def cost(self) -> int:
        """Evaluations of the source per row of the simplified model (M)."""
        return int(math.prod(i.count for i in self.integrated))

    def grid(self) -> tuple[np.ndarray, np.ndarray]:
        """The tensor-product rule: nodes (M, r) in the order of ``integrated``, weights (M,).

        The first integrated input varies slowest. With no integrated input: (1, 0) and [1.0].
        """
        if not self.integrated:
            return np.zeros((1, 0)), np.ones(1)
        mesh = np.meshgrid(*[i.nodes for i in self.integrated], indexing="ij")
        nodes = np.stack([m.reshape(-1) for m in mesh], axis=1)
        weights = np.ones(1)
        for i in self.integrated:
            weights = np.outer(weights, i.weights).reshape(-1)
        return nodes, weights

    def full_rows(self, x: np.ndarray) -> np.ndarray:
        """The (n·M, d) rows of the source for (n, kept) rows ``x``: row-major over the grid."""
        x = np.asarray(x, dtype=np.float64)
        kept = self.kept
        if x.ndim != 2 or x.shape[1] != len(kept):
            raise ValueError(f"expected an (n, {len(kept)}) array, got shape {x.shape}.")
        nodes, _ = self.grid()
        n, m = len(x), len(nodes)
        rows = np.empty((n * m, self.d))
        rows[:, kept] = np.repeat(x, m, axis=0)
        for k, i in enumerate(self.integrated):
            rows[:, i.index] = np.tile(nodes[:, k], n)
        for f in self.frozen:
            rows[:, f.index] = f.value
        return rows

    def without_integration(self) -> ExportPlan:
        """The same plan with only the frozen inputs: the model the integration starts from."""
        return replace(self, integrated=[])

    def metadata(self) -> dict[str, Any]:
        """What every written file records: netdim's version, the source, the rule, the values."""
        return {
            "tool": "netdim",
            "version": __version__,
            "kind": self.kind,
            "source": dict(self.source),
            "inputs": [{"name": self.names[j], **self.laws[j].to_dict()} for j in self.kept],
            "integrated": [
                {
                    "feature": i.feature,
                    "position": i.index,
                    **i.law.to_dict(),
                    "nodes": i.count,
                    "quadrature_error": i.quadrature_error,
                    "converged": i.converged,
                }
                for i in self.integrated
            ],
            "frozen": [
                {"feature": f.feature, "position": f.index, **f.law.to_dict(), "value": f.value, "chosen": f.chosen}
                | ({} if f.search_error is None else {"search_error": f.search_error})
                for f in self.frozen
            ],
            "evaluations_per_row": self.cost,
            "checks": dict(self.checks),
        }


def file_sha256(path: str | Path) -> str:
    """SHA-256 of a file's bytes."""
    digest = hashlib.sha256()
    with Path(path).open("rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


def _source_info(model: Model) -> dict[str, Any]:
    args = getattr(model, "open_args", None) or {}
    path = str(args.get("ref", "") or "")
    info: dict[str, Any] = {"path": path or str(getattr(model, "source", "")), "format": getattr(model, "format", "")}
    if path and Path(path).is_file():
        info["sha256"] = file_sha256(path)
    return info


def _rule(laws: Sequence[Law], index: int, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """The Gauss rule exactly as :class:`~audit.quadrature.PreIntegrated` uses it."""
    p = PreIntegrated(lambda x: x, laws, index, check_nodes(nodes))
    return p.points, p.weights


def make_plan(
    model: Model,
    names: Sequence[str],
    laws: Sequence[Law],
    *,
    integrate: dict[int, int] | None = None,
    freeze: dict[int, float] | None = None,
    errors: dict[int, tuple[float, bool]] | None = None,
    chosen: dict[int, tuple[str, float | None]] | None = None,
) -> ExportPlan:
    """An :class:`ExportPlan` for ``model``.

    Parameters
    ----------
    model : Model
        The source (for its file's path and hash).
    names, laws : sequence
        Its d inputs.
    integrate : dict of int to int
        Input position -> Gauss nodes.
    freeze : dict of int to float
        Input position -> value.
    errors : dict of int to (float, bool), optional
        Input position -> (quadrature error, converged) from the node check.
    chosen : dict of int to (str, float or None), optional
        Input position -> how its frozen value was chosen and the error measured in the search.

    Returns
    -------
    ExportPlan

    Raises
    ------
    UserError
        When an input is both integrated and frozen, none is left, or the rule is too large.

    Examples
    --------
    >>> from audit.inputs import Law
    >>> from audit.models.python import PythonModel
    >>> import numpy as np
    >>> m = PythonModel(lambda x: x.sum(axis=1), 3)
    >>> plan = make_plan(m, ["a", "b", "c"], [Law("normal")] * 3, integrate={1: 4}, freeze={2: 0.5})
    >>> plan.kept_names, plan.cost
    (['a'], 4)
    """
    names, laws = list(names), list(laws)
    integrate, freeze = dict(integrate or {}), dict(freeze or {})
    errors, chosen = dict(errors or {}), dict(chosen or {})
    if len(names) != len(laws) or len(laws) != feature_count(model):
        raise ValueError(f"the model takes {feature_count(model)} inputs; {len(names)} names, {len(laws)} laws given.")
    both = sorted(set(integrate) & set(freeze))
    if both:
        raise UserError(
            f"The input {names[both[0]]} is both integrated out and frozen; choose one for it "
            "(`integrate` or `freeze`)."
        )
    if len(set(integrate) | set(freeze)) >= len(names):
        raise UserError(
            f"Integrating out or freezing every one of the {len(names)} inputs leaves a model without inputs; "
            "keep at least one (`integrate`, `freeze`)."
        )
    cost = math.prod(int(m) for m in integrate.values())
    if cost > MAX_GRID:
        listed = ", ".join(f"{names[j]} ({integrate[j]} nodes)" for j in sorted(integrate))
        raise UserError(
            f"The tensor-product rule of {listed} has {cost} points, more than {MAX_GRID}: each row of the "
            "simplified model would cost that many evaluations. Integrate fewer inputs out, or give fewer "
            "nodes (`nodes`, `tolerance`)."
        )
    integrated = []
    for j in sorted(integrate):
        z, w = _rule(laws, j, integrate[j])
        err, ok = errors.get(j, (None, True))
        integrated.append(Integrated(names[j], j, laws[j], z, w, err, ok))
    frozen = []
    for j in sorted(freeze):
        value = float(freeze[j])
        if not math.isfinite(value):
            raise UserError(f"The value to freeze {names[j]} at must be a finite number, got {freeze[j]!r} (`freeze`).")
        how, search = chosen.get(j, ("given", None))
        frozen.append(Fixed(names[j], j, laws[j], value, how, search))
    return ExportPlan(names, laws, integrated, frozen, _source_info(model))


class ReducedModel:
    """The simplified model in memory: the source on the plan's rows, averaged with its weights.

    A :class:`~audit.models.base.Model` of the kept inputs (one float64 tensor
    ``x``); for a plan with one integrated input and nothing frozen it computes
    what :class:`~audit.quadrature.PreIntegratedModel` computes.

    Parameters
    ----------
    model : Model
        The source.
    plan : ExportPlan
    max_rows : int, optional
        At most this many source rows per call.
    """

    format = "simplified"

    def __init__(self, model: Model, plan: ExportPlan, *, max_rows: int = MAX_ROWS) -> None:
        self.model, self.plan = model, plan
        self.source = f"{model.source} simplified ({plan.kind})"
        self.inputs = [TensorInfo("x", (len(plan.kept),), "float64")]
        self.outputs = list(model.outputs)
        self.notices = list(getattr(model, "notices", []) or [])
        self._nodes, self._weights = plan.grid()
        self._per = max(1, max_rows // len(self._weights))

    @property
    def cost(self) -> int:
        return len(self._weights)

    def layers(self) -> list[LayerInfo]:
        return []

    def feature_names(self) -> list[str]:
        return self.plan.kept_names

    def output_names(self) -> list[str]:
        return list(self.model.output_names())

    def evaluate(self, x: np.ndarray, capture: Sequence[str] = ()) -> Evaluation:
        if capture:
            raise UserError("A simplified model in memory offers no hidden layers; set `layers` to none.")
        x = np.asarray(x, dtype=np.float64)
        m = self.cost
        parts = []
        for s in range(0, len(x), self._per):
            chunk = x[s : s + self._per]
            y = self.model.evaluate(self.plan.full_rows(chunk)).outputs
            if m == 1:
                parts.append(y)
                continue
            y = np.asarray(y, dtype=np.float64).reshape(len(chunk), m, -1)
            parts.append(node_average(self._weights, y))
        if not parts:
            k = sum(t.units for t in self.outputs)
            return Evaluation(np.zeros((0, k)))
        return Evaluation(np.concatenate(parts))
