"""What an advise run will cost and how far it has got: the plan printed before the run, phase lines during it.

:func:`plan_lines` states the planned evaluations per phase and in total and, from
a rate timed on the model's first block (:func:`~audit.studies.setup.probe_rate`),
an estimate of the time. :class:`PhaseLog` writes one line when a phase starts and
one when it ends, with the evaluations done and the time elapsed: the progress
report for a standard error that is not a terminal (a log, a pipe, a CI job),
where the progress bar draws nothing. Its planned total starts as the plan's
estimate and is revised as each phase ends (the node check's nodes, the inputs
the gain is measured for), so the last line's total is what the run cost.
"""

from __future__ import annotations

import time
from collections.abc import Callable

from .plan import PHASE_LABELS, AdvicePlan

__all__ = ["PhaseLog", "fmt_seconds", "plan_lines"]


def fmt_seconds(seconds: float) -> str:
    """``0.4 s``, ``38 s``, ``12.5 min``, ``3.1 h``."""
    if seconds < 10:
        return f"{seconds:.1f} s"
    if seconds < 600:
        return f"{seconds:.0f} s"
    if seconds < 36000:
        return f"{seconds / 60:.1f} min"
    return f"{seconds / 3600:.1f} h"


def plan_lines(plan: AdvicePlan, rate: float | None = None) -> list[str]:
    """The plan of an advise run as lines of text, printed before any work.

    Parameters
    ----------
    plan : AdvicePlan
    rate : float, optional
        Model evaluations a second, timed on this machine (no time estimate without it).

    Returns
    -------
    list of str
        A heading, one line per phase with evaluations (and estimated seconds), the
        total, then what is left out and what was cut to fit the budget.

    Examples
    --------
    >>> from audit.models.python import PythonModel
    >>> from audit.studies.advise import prepare_advice
    >>> plan = prepare_advice(PythonModel(lambda x: x.sum(axis=1), 4, source="sum"), "normal", seed=1)
    >>> plan_lines(plan)[-1].startswith("  total")
    True
    """
    s = plan.setup
    d = s.design
    lines = [f"netdim advise plan: {d.d} inputs, {d.points:,} points x {d.replicates} randomizations"]
    for key, n in plan.phases.items():
        if not n:
            continue
        label = PHASE_LABELS[key]
        if key in ("node_check", "preintegrated"):
            label += f" ({plan.candidates} input{'s' if plan.candidates != 1 else ''})"
        elif key == "gain" and plan.gain_features > 1:
            label += f" (up to {plan.gain_features} inputs)"
        eta = f"  about {fmt_seconds(n / rate)}" if rate else ""
        lines.append(f"  {label:<28}{n:>16,} evaluations{eta}")
    total = plan.evaluations
    if rate:
        eta = f"  about {fmt_seconds(total / rate)} (an estimate, at {rate:,.0f} evaluations/s timed on a first block)"
    else:
        eta = ""
    lines.append(f"  {'total':<28}{total:>16,} evaluations{eta}")
    for part, why in plan.skipped.items():
        lines.append(f"  not done: {part} ({why})")
    if plan.max_evaluations is not None:
        cut = "; ".join(plan.cuts) if plan.cuts else "nothing cut"
        lines.append(f"  budget {plan.max_evaluations:,} evaluations: {cut}")
    return lines


class PhaseLog:
    """One line per phase start and end, with evaluations done and time elapsed.

    Parameters
    ----------
    write : callable
        Takes one line of text (the command line writes it to standard error).
    total : int
        Planned evaluations of the whole run.

    Examples
    --------
    >>> lines = []
    >>> log = PhaseLog(lines.append, 150)
    >>> log.start("audit", 100)
    >>> log.end("audit", 100)
    >>> [line.split(",")[0] for line in lines]
    ['netdim advise: audit started', 'netdim advise: audit finished']
    >>> log.start("gain", 50)
    >>> log.end("gain", 80)  # it cost more than planned: the total is revised
    >>> "(180 of 180 planned done" in lines[-1]
    True
    """

    def __init__(self, write: Callable[[str], None], total: int) -> None:
        self.write = write
        self.total = int(total)
        self.done = 0
        self._planned = 0
        self._t0 = time.perf_counter()
        self._phase_t0 = self._t0

    def _elapsed(self) -> str:
        return fmt_seconds(time.perf_counter() - self._t0)

    def start(self, phase: str, planned: int, share: int | None = None) -> None:
        """Say that ``phase`` starts, with its planned evaluations; ``share``, the evaluations the
        planned total had counted for it, is replaced by ``planned``."""
        self._phase_t0 = time.perf_counter()
        self._planned = int(planned)
        if share is not None:
            self.revise(self._planned - int(share))
        self.write(
            f"netdim advise: {phase} started, {planned:,} evaluations planned "
            f"({self.done:,} of {self.total:,} done, {self._elapsed()} elapsed)"
        )

    def revise(self, change: int) -> None:
        """Add ``change`` (negative for work found unneeded) to the planned total."""
        self.total = max(0, self.total + int(change))

    def end(self, phase: str, evaluations: int) -> None:
        """Say that ``phase`` ended after ``evaluations`` evaluations (the planned total revised by
        the difference from what its start said)."""
        self.revise(int(evaluations) - self._planned)
        self._planned = 0
        self.done += int(evaluations)
        took = fmt_seconds(time.perf_counter() - self._phase_t0)
        self.write(
            f"netdim advise: {phase} finished, {evaluations:,} evaluations in {took} "
            f"({self.done:,} of {self.total:,} planned done, {self._elapsed()} elapsed)"
        )
