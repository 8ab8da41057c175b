"""Pipeline gates of a comparison: limits on what may change between two model versions.

A :class:`Gates` object holds the limits; :func:`judge` checks a comparison's
per-output changes against them and returns one :class:`~audit.results.GateCheck`
per gate set, saying what it compared. :func:`rank_agreement` measures how far
the total-index rankings of two versions agree; :func:`parse_output_map` reads
``OLD=NEW`` pairs of outputs.

References
----------
.. [1] Kendall's tau is :func:`scipy.stats.kendalltau`; judging a limit on the
   end of a paired interval nearest zero is common practice, no source.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..errors import UserError
from ..results import GateCheck, OutputChange, OutputResult

__all__ = ["ROUNDINGS", "Gates", "beyond", "judge", "parse_output_map", "rank_agreement"]


@dataclass(frozen=True)
class Gates:
    """Limits a comparison must respect to pass (``None``: not checked).

    Attributes
    ----------
    max_dimension_rise : float, optional
        Largest allowed rise of ν for any output, judged on the lower end of the
        paired interval (noise alone never fails it).
    min_rank_agreement : float, optional
        Smallest allowed Kendall τ between the old and new total-index rankings.
    max_index_shift : float, optional
        Largest allowed change of any input's normalised total index, judged on the
        end of its interval nearest 0 (0 when the interval contains 0).
    """

    max_dimension_rise: float | None = None
    min_rank_agreement: float | None = None
    max_index_shift: float | None = None


def parse_output_map(text: str, old_names: Sequence[str], new_names: Sequence[str]) -> list[tuple[int, int]]:
    """Parse ``OLD=NEW,...`` (names or 0-based indices) into index pairs."""

    def index(tok: str, names: Sequence[str], side: str) -> int:
        tok = tok.strip()
        if tok in names:
            return list(names).index(tok)
        if tok.isdigit() and int(tok) < len(names):
            return int(tok)
        raise UserError(
            f"`output_map`: '{tok}' is not an output of the {side} model; its outputs are "
            f"{', '.join(names)} (or indices 0..{len(names) - 1})."
        )

    pairs = []
    for item in text.split(","):
        if "=" not in item:
            raise UserError(
                f"`output_map` takes OLD=NEW pairs separated by commas, e.g. 'y=temp,1=2'; got '{item}'."
            )
        a, b = item.split("=", 1)
        pairs.append((index(a, old_names, "old"), index(b, new_names, "new")))
    return pairs


def rank_agreement(a: OutputResult, b: OutputResult, top_k: int) -> tuple[float, float, int]:
    """Kendall τ of the two total-index rankings, the overlap of the top-k sets, and k."""
    from scipy import stats

    if a.inert or b.inert or not a.total_index:
        return float("nan"), float("nan"), 0
    x = [f.value.estimate for f in a.total_index]
    y = [f.value.estimate for f in b.total_index]
    tau = round(float(stats.kendalltau(x, y).statistic), 12) if len(x) > 1 else 1.0  # 1 − 1e-16 is 1
    k = min(top_k, len(x))
    top_a = {f.feature for f in a.ranked()[:k]}
    top_b = {f.feature for f in b.ranked()[:k]}
    return tau, len(top_a & top_b) / k, k


#: Changes within this many machine epsilons of the coarser model's values are rounding, not change.
ROUNDINGS = 64


def beyond(lo: float, hi: float, floor: float) -> float:
    """How far an interval of a change lies from zero (0 when it contains zero or only rounding)."""
    shift = 0.0 if lo <= 0 <= hi else min(abs(lo), abs(hi))
    return 0.0 if max(abs(lo), abs(hi)) <= floor else shift


def judge(outputs: list[OutputChange], gates: Gates, floor: float = 0.0) -> list[GateCheck]:
    """One check per gate that is set; changes within ``floor`` (rounding) count as none."""
    checks = []
    if gates.max_dimension_rise is not None:
        lows = [(o.mean_dimension_change.ci_low, o.name) for o in outputs if o.mean_dimension_change is not None]
        value, where = max(lows) if lows else (float("-inf"), "")
        checks.append(
            GateCheck(
                "max_dimension_rise",
                gates.max_dimension_rise,
                value,
                value <= gates.max_dimension_rise,
                f"largest lower end of a ν change: {value:.4g} ({where})" if where else "no comparable outputs",
            )
        )
    if gates.min_rank_agreement is not None:
        taus = [(o.kendall_tau, o.name) for o in outputs if np.isfinite(o.kendall_tau)]
        value, where = min(taus) if taus else (float("nan"), "")
        checks.append(
            GateCheck(
                "min_rank_agreement",
                gates.min_rank_agreement,
                value,
                bool(taus) and value >= gates.min_rank_agreement,
                f"lowest Kendall τ of the total-index rankings: {value:.4g} ({where})" if where else "no rankings",
            )
        )
    if gates.max_index_shift is not None:
        worst, where = 0.0, ""
        for o in outputs:
            for c in o.total_index_change:
                lo, hi = c.value.ci_low, c.value.ci_high
                shift = beyond(lo, hi, floor)
                if shift > worst:
                    worst, where = shift, f"{c.feature} in {o.name}"
        checks.append(
            GateCheck(
                "max_index_shift",
                gates.max_index_shift,
                worst,
                worst <= gates.max_index_shift,
                f"largest total-index shift (interval end nearest 0): {worst:.4g}" + (f" ({where})" if where else ""),
            )
        )
    return checks
