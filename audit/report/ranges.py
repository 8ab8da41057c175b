"""Estimates outside their possible range, marked: within noise when the interval allows it, or beyond it.

A normalised Sobol' index lies in [0, 1], a first-order index at or below the
total index of the same input, and a mean dimension ν in [1, d]. An estimate
of a negligible index can still come out slightly below 0, and ν of a nearly
additive unit slightly below 1: sampling noise. Reports show every estimate
as estimated (never clamped) and mark those outside their range:

:data:`NOISE`
    the 95 % interval reaches back into the range (for a first-order index:
    its interval reaches the total index's): within noise.
:data:`BEYOND`
    even the interval lies outside: more than noise (too few points for a
    near-constant value, or a problem worth a look); shown in the alert tone.

:class:`Marks` makes the cells and, once a table is built, the note that
explains the marks it used.
"""

from __future__ import annotations

from collections.abc import Sequence

from ..results import Estimate
from ..results.base import first_order_position, position
from .document import Cell, Note
from .text import SIGNIFICANT_DIGITS, finite, fmt

__all__ = ["BEYOND", "NOISE", "Marks", "place"]

NOISE = "†"
BEYOND = "‡"


#: ``"inside"``, ``"noise"`` or ``"beyond"`` (:func:`audit.results.base.position`; the JSON says the same).
place = position


class Marks:
    """Cells of estimates, marked when outside their range, and the note for the marks used."""

    def __init__(self) -> None:
        self.used: set[str] = set()

    def _cell(self, text: str, where: str) -> str | Cell:
        if where == "noise":
            self.used.add(NOISE)
            return f"{text} {NOISE}"
        if where == "beyond":
            self.used.add(BEYOND)
            return Cell(f"{text} {BEYOND}", "alert")
        return text

    def index(self, e: Estimate, digits: int = SIGNIFICANT_DIGITS) -> str | Cell:
        """A normalised index: marked outside [0, 1]."""
        return self._cell(fmt(e.estimate, digits), place(e, 0.0, 1.0))

    def first_order(self, e: Estimate, total: Estimate | None, digits: int = SIGNIFICANT_DIGITS) -> str | Cell:
        """A first-order index: marked outside [0, 1] or above the total index of the same input."""
        return self._cell(fmt(e.estimate, digits), first_order_position(e, total))

    def nu(self, e: Estimate, d: int, digits: int = SIGNIFICANT_DIGITS) -> str | Cell:
        """A mean dimension: marked outside [1, d]."""
        return self._cell(fmt(e.estimate, digits), place(e, 1.0, float(max(d, 1))))

    def summary_nu(
        self,
        value: float | None,
        d: int,
        units: Sequence[Estimate] = (),
        intervals: bool = True,
        digits: int = SIGNIFICANT_DIGITS,
    ) -> str:
        """ν of a layer summary (a quantile of its units' ν), marked outside [1, d].

        ``units`` are the ν of the units the summary counts: beyond the range when one of those outside it
        on the same side is beyond it by its own interval, else within noise. Without units (a layer saved
        with its summary only), within noise when the run had intervals (``intervals``): summaries leave
        out the units whose interval lies wholly outside [1, d].
        """
        text = fmt(value, digits)
        high = float(max(d, 1))
        if value is None or not finite(value) or 1.0 <= value <= high:
            return text
        side = [e for e in units if finite(e.estimate) and (e.estimate < 1.0 if value < 1.0 else e.estimate > high)]
        beyond = any(place(e, 1.0, high) == "beyond" for e in side) if side else not intervals
        mark = BEYOND if beyond else NOISE
        self.used.add(mark)
        return f"{text} {mark}"

    def note(self) -> Note | None:
        """The note explaining the marks used so far (``None`` when none was)."""
        parts = []
        if NOISE in self.used:
            parts.append(
                f"{NOISE} outside its possible range ([0, 1] for an index, at most the total index for a first-order "
                "index, [1, d] for ν) by less than its 95 % interval: sampling noise, shown as estimated."
            )
        if BEYOND in self.used:
            parts.append(
                f"{BEYOND} outside its possible range even at the end of its 95 % interval: more than noise; more "
                "points, or a look at the model, are needed before relying on it."
            )
        return Note(" ".join(parts)) if parts else None
