"""Tests of audit.report.progress: a bar on terminals only, silent everywhere else."""

from __future__ import annotations

import io
import math

import pytest
from rich.console import Console

from audit.report import RunProgress
from audit.report.progress import compact_count


def test_progress_writes_nothing_to_a_non_terminal():
    buf = io.StringIO()
    with RunProgress(1000, console=Console(file=buf)) as p:
        for r in range(4):
            p.advance(250, phase=f"randomization {r + 1}/4")
    assert p.completed == 1000 and not p.enabled
    assert buf.getvalue() == ""


@pytest.mark.parametrize("kwargs", [{"enabled": False}, {"quiet": True}])
def test_progress_switched_off_writes_nothing_even_on_a_terminal(kwargs):
    buf = io.StringIO()
    console = Console(file=buf, force_terminal=True, width=80)
    with RunProgress(100, console=console, **kwargs) as p:
        p.advance(100, phase="randomization 1/1")
    assert buf.getvalue() == "" and p.completed == 100


def test_progress_draws_on_a_terminal(monkeypatch):
    # positive control for the two tests above
    monkeypatch.setenv("TERM", "xterm-256color")
    buf = io.StringIO()
    console = Console(file=buf, force_terminal=True, width=100)
    with RunProgress(2000, console=console, transient=False) as p:
        p.advance(500, phase="randomization 1/4")
        p.advance(1500, phase="randomization 4/4")
    out = buf.getvalue()
    assert p.enabled and "2k/2k evaluations" in out and "randomization 4/4" in out


def test_phases_counts_and_bad_totals():
    with RunProgress(10, enabled=False, completed=4) as p:
        p.set_phase("pilot")
        p.advance(6)
    assert (p.completed, p.phase) == (10, "pilot")
    with pytest.raises(ValueError, match="0 or more"):
        RunProgress(-1)
    counts = (950, 12_345, 8_910_000, 1.2e9, 2e12)
    assert [compact_count(n) for n in counts] == ["950", "12.3k", "8.91M", "1.2G", "2000G"]
    assert compact_count(math.nan) == "?" and compact_count(-1) == "?"
