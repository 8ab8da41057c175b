"""Settings shared by every workflow, validated in one place for the command line and the Python API.

:class:`DesignOptions` says what is estimated and how precisely (points,
replicates, seed, point set, estimator); :class:`RunOptions` says how the work
is carried out (progress, checkpoint and its interval, cluster, memory limit,
block size) and never changes a number. Every study function takes these as
keyword arguments (``audit_model(model, points=4096, checkpoint="run.npz")``) and
:func:`split_options` sorts them, refusing unknown names with the valid ones.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any

import numpy as np

from ..design import SAMPLERS, round_points
from ..errors import UserError, check_choice, check_int, check_number, suggest
from ..estimators import ESTIMATORS
from ..seeds import resolve_seed
from .views import VIEWS

__all__ = ["DESIGN_OPTIONS", "RUN_OPTIONS", "DesignOptions", "RunOptions", "resume_seed", "split_options"]

Progress = Callable[[int, str], None]


@dataclass(frozen=True)
class DesignOptions:
    """What is estimated and how precisely.

    Parameters
    ----------
    points : int
        N per randomization (rounded up to a power of two for scrambled Sobol' points).
    replicates : int or None
        R independent randomizations (at least 2, for an interval); ``None``: the
        estimator's default (8; 32 for the fast estimator, whose intervals need more).
    seed : int, numpy Generator or None
        Root seed; ``None`` draws one. The int is recorded in every report.
    sampler : {"sobol", "mc"}
        Scrambled Sobol' points (randomized quasi-Monte Carlo) or plain Monte Carlo.
    estimator : {"jansen", "fast", "stairs", "separate", "superset"}
        See :data:`audit.estimators.ESTIMATORS`.
    view : {"inputs", "groups", "both"} or None
        Indices per input, per group of inputs (the spec's ``[groups]``), or both
        (:mod:`audit.studies.views`); default groups when the spec declares them.

    Attributes
    ----------
    notices : list of str
        What the validation changed (a rounded point count).
    """

    points: int = 1024
    replicates: int | None = None
    seed: int | np.random.Generator | None = None
    sampler: str = "sobol"
    estimator: str = "jansen"
    view: str | None = None
    notices: list[str] = field(default_factory=list, compare=False)

    def __post_init__(self) -> None:
        check_choice(self.sampler, "sampler", SAMPLERS)
        check_choice(self.estimator, "estimator", tuple(ESTIMATORS))
        if self.view is not None:
            check_choice(self.view, "view", VIEWS)
        points = check_int(self.points, "points", 1, why="(a power of two is best)")
        given = ESTIMATORS[self.estimator].replicates if self.replicates is None else self.replicates
        replicates = check_int(given, "replicates", 1)
        if replicates < 2:
            raise UserError(
                f"At least 2 replicates (independent randomizations) are needed for a confidence interval; "
                f"got {replicates}. Set `replicates` to 8 or more for stable intervals."
            )
        try:
            seed = resolve_seed(self.seed)
        except ValueError as exc:
            raise UserError(f"`seed` must be a whole number ≥ 0 or a numpy Generator, got {self.seed!r}.") from exc
        notices = list(self.notices)
        if self.sampler == "sobol":
            rounded = round_points(points)
            if rounded != points:
                notices.append(
                    f"points rounded up from {points} to {rounded}, a power of two, as scrambled Sobol' points need."
                )
                points = rounded
        for name, value in (("points", points), ("replicates", replicates), ("seed", seed), ("notices", notices)):
            object.__setattr__(self, name, value)


@dataclass(frozen=True)
class RunOptions:
    """How the work is carried out; none of these changes a number.

    Parameters
    ----------
    progress : callable, optional
        ``progress(model_evaluations, phase)`` as work finishes.
    checkpoint : str or Path, optional
        File that keeps finished work; the same call again resumes from it.
    checkpoint_seconds : float
        Least seconds between two checkpoint saves while a job runs (default 30).
    cluster : str, dask.distributed.Client or executor, optional
        ``"local"``, ``"local:N"`` or a scheduler address (a client is opened and closed
        around the workflow), an open ``Client``, or an object with the engine's
        ``map(job, tasks)``.
    memory_limit : int, optional
        Bytes the run may use (default: what is available).
    block : int, optional
        Points per task (default: from the memory budget).
    time_budget : float, optional
        Seconds a run may be expected to take (default one day); a run whose estimate,
        from a timed probe of the model, exceeds it is refused before any work.
        ``None`` checks nothing.
    """

    progress: Progress | None = None
    checkpoint: str | Path | None = None
    checkpoint_seconds: float = 30.0
    cluster: Any = None
    memory_limit: int | None = None
    block: int | None = None
    time_budget: float | None = 86400.0

    def __post_init__(self) -> None:
        seconds = check_number(self.checkpoint_seconds, "checkpoint_seconds", 0.0)
        object.__setattr__(self, "checkpoint_seconds", seconds)
        if self.memory_limit is not None:
            limit = check_number(self.memory_limit, "memory_limit", 0.0, low_open=True, why="(bytes)")
            object.__setattr__(self, "memory_limit", int(limit))
        if self.block is not None:
            object.__setattr__(self, "block", check_int(self.block, "block", 1))
        if self.time_budget is not None:
            budget = check_number(self.time_budget, "time_budget", 0.0, low_open=True, why="(seconds)")
            object.__setattr__(self, "time_budget", budget)
        if self.progress is not None and not callable(self.progress):
            raise UserError(f"`progress` must be callable as progress(evaluations, phase), got {self.progress!r}.")


def resume_seed(seed: Any, checkpoint: str | Path | None) -> Any:
    """``seed``, or when none was given, the seed recorded in an existing checkpoint (so the run resumes)."""
    if seed is not None or checkpoint is None:
        return seed
    from ..checkpoint import recorded_seed

    return recorded_seed(checkpoint)


DESIGN_OPTIONS = tuple(f.name for f in fields(DesignOptions) if f.name != "notices")
RUN_OPTIONS = tuple(f.name for f in fields(RunOptions))


def split_options(options: dict[str, Any], *, allowed: tuple[str, ...] = ()) -> tuple[DesignOptions, RunOptions]:
    """Sort keyword arguments into design and run options (plus ``allowed`` extra names, left in ``options``).

    Raises
    ------
    UserError
        For an unknown name (with the nearest valid one and the list), or an invalid value.
    """
    valid = (*DESIGN_OPTIONS, *RUN_OPTIONS, *allowed)
    for name in options:
        if name not in valid:
            raise UserError(
                f"Unknown setting `{name}`." + suggest(name, valid) + f" Valid settings: {', '.join(valid)}."
            )
    values = {k: options.pop(k) for k in DESIGN_OPTIONS if k in options}
    values["seed"] = resume_seed(values.get("seed"), options.get("checkpoint"))
    design = DesignOptions(**values)
    run = RunOptions(**{k: options.pop(k) for k in RUN_OPTIONS if k in options})
    return design, run
