"""A progress bar for long audits, on standard error.

:class:`RunProgress` counts model evaluations and shows evaluations done out of
the total, the rate, the time left and the current phase (``"randomization
3/8"``). It draws only when standard error (or the console given) is an
interactive terminal; when quiet, disabled, or writing to a file or pipe it
writes nothing at all, so logs and redirected output stay clean.
"""

from __future__ import annotations

import threading
from types import TracebackType

from rich.console import Console
from rich.progress import (
    BarColumn,
    Progress,
    ProgressColumn,
    Task,
    TaskID,
    TextColumn,
    TimeRemainingColumn,
)
from rich.text import Text

__all__ = ["RunProgress", "compact_count"]


def compact_count(n: float) -> str:
    """A short count for a narrow column: ``950``, ``12.3k``, ``8.91M``, ``1.20G``.

    Parameters
    ----------
    n : float
        A non-negative count or rate.

    Returns
    -------
    str
        At most three significant digits past a thousand.
    """
    if n != n or n < 0:  # NaN or negative
        return "?"
    for limit, suffix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if n >= limit:
            v = n / limit
            return f"{v:.3g}{suffix}" if v < 1000 else f"{v:.0f}{suffix}"
    return f"{n:.0f}"


class _CountColumn(ProgressColumn):
    def render(self, task: Task) -> Text:
        total = compact_count(task.total) if task.total is not None else "?"
        return Text(f"{compact_count(task.completed)}/{total} evaluations")


class _RateColumn(ProgressColumn):
    def render(self, task: Task) -> Text:
        speed = task.finished_speed or task.speed
        return Text("" if speed is None else f"{compact_count(speed)}/s", style="dim")


class RunProgress:
    """Progress of a run, counted in model evaluations.

    Parameters
    ----------
    total : int
        Evaluations the run will make.
    enabled : bool, optional
        Set false to switch the bar off.
    quiet : bool, optional
        Set true (the command line's quiet option) to switch the bar off.
    completed : int, optional
        Evaluations already done (a resumed run).
    console : rich.console.Console, optional
        Where to draw (default: a console on standard error). The bar is off
        unless this console is an interactive terminal.
    transient : bool, optional
        Remove the bar when the run ends (default true).

    Examples
    --------
    >>> with RunProgress(1000, enabled=False) as p:
    ...     p.advance(500, phase="randomization 1/2")
    ...     p.advance(500, phase="randomization 2/2")
    >>> p.completed
    1000
    """

    def __init__(
        self,
        total: int,
        *,
        enabled: bool = True,
        quiet: bool = False,
        completed: int = 0,
        console: Console | None = None,
        transient: bool = True,
    ) -> None:
        if total < 0 or completed < 0:
            raise ValueError(f"total and completed must be 0 or more, got {total} and {completed}")
        self.total = int(total)
        self.completed = int(completed)
        self.phase = ""
        self._lock = threading.Lock()
        self._console = console if console is not None else Console(stderr=True)
        self.enabled = bool(enabled and not quiet and self._console.is_terminal and not self._console.is_dumb_terminal)
        self._progress: Progress | None = None
        self._task: TaskID | None = None
        self._transient = transient

    def __enter__(self) -> RunProgress:
        if self.enabled:
            self._progress = Progress(
                TextColumn("{task.fields[phase]}"),
                BarColumn(bar_width=24),
                _CountColumn(),
                _RateColumn(),
                TimeRemainingColumn(),
                console=self._console,
                transient=self._transient,
                redirect_stdout=False,
                refresh_per_second=4,
            )
            self._task = self._progress.add_task("audit", total=self.total, completed=self.completed, phase=self.phase)
            self._progress.start()
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.close()

    def advance(self, n_evaluations: int, *, phase: str | None = None) -> None:
        """Count ``n_evaluations`` more evaluations; optionally change the phase text.

        Safe to call from several threads.
        """
        with self._lock:
            self.completed += int(n_evaluations)
            if phase is not None:
                self.phase = phase
            if self._progress is not None and self._task is not None:
                self._progress.update(self._task, completed=self.completed, phase=self.phase)

    def set_phase(self, phase: str) -> None:
        """Change the phase text without counting evaluations."""
        self.advance(0, phase=phase)

    def close(self) -> None:
        """Stop drawing (called on leaving the ``with`` block)."""
        with self._lock:
            if self._progress is not None:
                self._progress.stop()
                self._progress = None
                self._task = None
