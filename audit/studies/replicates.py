"""The per-randomization values of an audit, kept in its report so a later comparison can pair with it.

A comparison pairs two models on the same points: the per-randomization
differences of ν and of each index give intervals far narrower than two
independent audits. When the released model's audit is kept as a baseline,
its report must hold what pairing needs: the design (points, replicates, seed,
point set, estimator), the laws, and the un-normalised per-randomization sums
of every output (mean, variance, Σ total, total and first-order per input) and
of every hidden unit (variance, Σ total). :func:`to_json` writes them;
:func:`from_json` rebuilds the :class:`~audit.studies.summarize.GroupStats`.
A new model audited with the same design sees exactly the same points, so the
pairing is exact (up to the rounding of the JSON's 17 significant digits).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .summarize import GroupStats

__all__ = ["FORMAT", "from_json", "to_json"]

#: Written with the values; a report with another format is not used for pairing.
FORMAT = 1


def _arr(x: np.ndarray | None) -> Any:
    return None if x is None else np.asarray(x, dtype=np.float64).tolist()


def _group(stats: GroupStats) -> dict[str, Any]:
    return {
        "mean": _arr(stats.mean),
        "variance": _arr(stats.var),
        "total_sum": _arr(stats.total_sum),
        "total": _arr(stats.total),
        "first": _arr(stats.first),
        "eps": _arr(stats.eps),
    }


def to_json(outputs: GroupStats, layers: dict[str, GroupStats]) -> dict[str, Any]:
    """The per-randomization sums of an audit's outputs and hidden layers, as JSON-ready lists."""
    return {
        "format": FORMAT,
        "count": int(outputs.var.shape[0]),
        "outputs": _group(outputs),
        "layers": {name: {k: v for k, v in _group(st).items() if k in ("mean", "variance", "total_sum", "eps")}
                   for name, st in layers.items()},
    }  # fmt: skip


def _stats(d: dict[str, Any]) -> GroupStats:
    def get(key: str) -> np.ndarray | None:
        return None if d.get(key) is None else np.asarray(d[key], dtype=np.float64)

    return GroupStats.from_arrays(
        get("mean"),
        get("variance"),
        get("total"),
        get("first"),
        get("total_sum"),
        get("eps"),  # type: ignore[arg-type]
    )


def from_json(data: dict[str, Any]) -> tuple[GroupStats, dict[str, GroupStats]]:
    """Rebuild the outputs' and layers' :class:`GroupStats` from :func:`to_json`'s form.

    Raises
    ------
    ValueError
        When the values are missing or of another format.
    """
    if not data or data.get("format") != FORMAT:
        raise ValueError("the report keeps no per-randomization values of this version")
    return _stats(data["outputs"]), {name: _stats(v) for name, v in data.get("layers", {}).items()}
