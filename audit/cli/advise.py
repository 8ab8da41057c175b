"""The budget options of ``netdim advise`` and what it writes on standard error before and during a run.

``--only freezing|pre-integration`` runs one part of the advice; ``--max-evaluations N``
cuts the plan to fit N model evaluations. Before any work the plan (evaluations per
phase, total, a time estimate) goes to standard error, unless ``--quiet``; while the
run goes, one line per phase start and end goes there too when standard error is not
a terminal (a terminal has the progress bar instead). Standard output keeps the report
alone, so ``--format json`` stays pure JSON. No numerics here.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from typing import Any

__all__ = ["add_budget_options", "budget_settings", "stderr_lines"]

#: Choices of ``--only`` (the parts of :data:`audit.studies.advise.plan.PARTS`).
ONLY_CHOICES = ("freezing", "pre-integration")


def _evaluations(text: str) -> int:
    try:
        v = int(text.replace("_", ""))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of model evaluations, got '{text}'") from None
    if v < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {v}")
    return v


def add_budget_options(parser: argparse.ArgumentParser) -> None:
    """Add the ``advise budget`` option group: ``--only`` and ``--max-evaluations``."""
    g = parser.add_argument_group("advise budget")
    g.add_argument(
        "--only",
        choices=ONLY_CHOICES,
        help="run one part of the advice: freezing (the audit and the freeze check) or pre-integration "
        "(candidates, their audits and the RQMC gain); the report says what was not done",
    )
    g.add_argument(
        "--max-evaluations",
        type=_evaluations,
        metavar="N",
        help="evaluation budget: cut the plan to fit (fewer gain point counts, fewer inputs integrated out, "
        "fewer starting nodes, then no gain; the report says which), or refuse when even the smallest plan "
        "needs more",
    )


def budget_settings(args: argparse.Namespace) -> dict[str, Any]:
    """``only`` and ``max_evaluations`` for :func:`audit.studies.advise.prepare_advice`."""
    return {"only": args.only, "max_evaluations": args.max_evaluations}


def _write(line: str) -> None:
    sys.stderr.write(line + "\n")
    sys.stderr.flush()


def stderr_lines(args: argparse.Namespace, drawing: bool) -> dict[str, Callable[[str], None] | None]:
    """Keywords ``log`` and ``phase_lines`` of :func:`audit.studies.advise.execute_advice`.

    The plan goes to standard error unless quiet; phase lines only when no progress
    bar is drawing there (``drawing`` false: standard error is not a terminal).
    """
    if args.quiet:
        return {"log": None, "phase_lines": None}
    return {"log": _write, "phase_lines": None if drawing else _write}
