"""Pipeline gates of a comparison: what may change between two model versions, judged on paired intervals.

Every gate has one tolerance, and one rule: a change counts only when its
interval (paired over the randomizations) lies wholly beyond the tolerance —
so it excludes zero **and** exceeds the minimum size even at its end nearest
zero. Noise alone never fails a gate, and a change smaller than the tolerance
never does either, whatever the number of points. Changes within the rounding
of the coarser model's values are no change at all.

Gates (``None`` switches one off; the defaults below are stated in every report):

``mean_dimension`` (0.05)
    largest change of any output's ν;
``dimension_rise`` (off)
    largest rise of any output's ν (one-sided);
``total_index`` (0.05), ``first_order`` (0.05)
    largest change of any input's normalised total / first-order index;
``ranking`` (0.9)
    least rank agreement of the total indices over the inputs that matter (total
    index ≥ ``matter``, default 0.01, in either model): the share of their pairs
    kept in order, where a pair counts as swapped only when both models separate
    its two inputs (non-overlapping intervals) in opposite orders; its interval
    comes from the randomizations; the gate fails when the interval's upper end is
    below the limit;
``top_k_kept`` (1.0)
    least share of the old model's ``top_k`` (3) leading inputs not clearly out of
    the new model's ``top_k`` (an input is clearly out when its interval lies wholly
    below the new ``top_k``-th input's);
``layer_mean_dimension`` (0.1)
    largest change of the variance-weighted ν of a hidden layer present in both;
``variance`` (0.25)
    largest relative change of an output's variance.

A gate file is TOML (keys ours): a ``[gates]`` table with the names above and
``matter``, ``top_k``.

References
----------
.. [1] Judging a limit on the end of a paired interval nearest zero is common
   practice, no source.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Sequence
from dataclasses import asdict, dataclass, fields
from pathlib import Path
from typing import Any

from ..errors import UserError, check_int, check_number, suggest
from ..results import Estimate, GateCheck

__all__ = [
    "DEFAULTS",
    "ROUNDINGS",
    "Gates",
    "beyond",
    "load_gates",
    "parse_output_map",
]

#: Changes within this many machine epsilons of the coarser model's values are rounding, not change.
ROUNDINGS = 64


@dataclass(frozen=True)
class Gates:
    """Tolerances of a comparison (``None``: the gate is off); see the module docstring."""

    mean_dimension: float | None = 0.05
    dimension_rise: float | None = None
    total_index: float | None = 0.05
    first_order: float | None = 0.05
    ranking: float | None = 0.9
    top_k_kept: float | None = 1.0
    layer_mean_dimension: float | None = 0.1
    variance: float | None = 0.25
    matter: float = 0.01
    top_k: int = 3

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name == "top_k":
                object.__setattr__(self, "top_k", check_int(value, "top_k", 1))
            elif value is not None:
                high = 1.0 if f.name in ("ranking", "top_k_kept", "matter") else None
                object.__setattr__(self, f.name, check_number(value, f.name, 0.0, high))

    def settings(self) -> dict[str, Any]:
        """The tolerances as a report records them."""
        return asdict(self)


DEFAULTS = Gates()
GATE_KEYS = tuple(f.name for f in fields(Gates))


def load_gates(path: str | Path, base: Gates | None = None) -> Gates:
    """Gates from a TOML file's ``[gates]`` table (unknown keys refused with the valid ones).

    A key set to ``false`` switches that gate off; keys not given keep ``base``'s value.
    """
    p = Path(path)
    if not p.is_file():
        raise UserError(f"The gate file '{path}' does not exist or is not a file.")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise UserError(f"The gate file '{path}' is not valid TOML: {exc}.") from exc
    table = data.get("gates")
    extra = [k for k in data if k != "gates"]
    if not isinstance(table, dict) or extra:
        raise UserError(f"The gate file '{path}' must hold one [gates] table (found {', '.join(extra) or 'none'}).")
    values = asdict(base or DEFAULTS)
    for key, value in table.items():
        if key not in GATE_KEYS:
            raise UserError(
                f"Gate file '{path}': unknown key '{key}'."
                + suggest(key, GATE_KEYS)
                + f" Valid keys: {', '.join(GATE_KEYS)}."
            )
        values[key] = None if value is False else value
    return Gates(**values)


def beyond(lo: float, hi: float, tolerance: float) -> float:
    """How far an interval of a change lies beyond ±``tolerance`` (0 when it does not lie wholly beyond)."""
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return 0.0
    if lo > tolerance:
        return lo - tolerance
    if hi < -tolerance:
        return -tolerance - hi
    return 0.0


def check_change(name: str, limit: float | None, changes: Sequence[tuple[str, Estimate]], what: str, floor: float,
                 *, rise_only: bool = False) -> GateCheck | None:  # fmt: skip
    """One gate over labelled changes: fails when a change's interval lies wholly beyond ``limit``."""
    if limit is None:
        return None
    tolerance = max(limit, floor)
    worst, where, failed = 0.0, "", []
    for label, e in changes:
        lo, hi = e.ci_low, e.ci_high
        past = (lo - tolerance if lo > tolerance else 0.0) if rise_only else beyond(lo, hi, tolerance)
        if past > 0:
            failed.append(label)
        size = max(abs(lo), abs(hi)) if math.isfinite(lo) and math.isfinite(hi) else 0.0
        if size > worst:
            worst, where = size, label
    detail = f"{len(changes)} {what} compared; largest |change| at the interval's far end {worst:.3g}"
    detail += f" ({where})" if where else ""
    if failed:
        detail += f"; beyond {limit:g} even at the near end: {', '.join(failed[:5])}"
        detail += f" and {len(failed) - 5} more" if len(failed) > 5 else ""
    return GateCheck(name, limit, worst, not failed, detail)


def check_least(name: str, limit: float | None, values: Sequence[tuple[str, Estimate]], what: str) -> GateCheck | None:
    """One gate over agreement measures: fails when a measure's interval lies wholly below ``limit``."""
    if limit is None:
        return None
    failed = [label for label, e in values if math.isfinite(e.ci_high) and e.ci_high < limit]
    lowest = min(values, key=lambda x: x[1].estimate, default=("", Estimate(math.nan, math.nan, math.nan, math.nan)))
    detail = f"{len(values)} {what} compared; lowest {lowest[1].estimate:.3g}"
    detail += f" ({lowest[0]})" if lowest[0] else ""
    if failed:
        detail += f"; below {limit:g} even at the interval's upper end: {', '.join(failed[:5])}"
    return GateCheck(name, limit, lowest[1].estimate, not failed, detail)


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
            raise UserError(f"`output_map` takes OLD=NEW pairs separated by commas, e.g. 'y=temp,1=2'; got '{item}'.")
        a, b = item.split("=", 1)
        pairs.append((index(a, old_names, "old"), index(b, new_names, "new")))
    return pairs
