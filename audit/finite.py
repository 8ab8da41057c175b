"""The engine's checks on the values it handles: finite inputs, and outputs whose sums fit float64.

Sobol' indices need finite model values everywhere the input laws put mass, and
variances need squares that do not overflow. A full scan of every block's outputs
costs a pass over the largest arrays of a run (hidden layers of a network), so
estimators whose sums bound the values they saw (``magnitude_bound``) are checked
on those few sums instead: NaN and infinities propagate into them, and
``|y| <= |mean| + sqrt(m2) + sqrt(max squared difference)`` bounds every value.
Only when that check fails are the outputs scanned, to refuse them with a message
naming the rows (or to accept them after all).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .errors import UserError

__all__ = ["LARGEST_OUTPUT", "NonFiniteError", "check_inputs", "check_outputs", "fits"]

#: Outputs above this in magnitude would overflow float64 when squared and summed.
LARGEST_OUTPUT = 1e150


class NonFiniteError(UserError):
    """The model returned NaN or infinite values for some sampled inputs."""


def fits(sums: Any) -> bool:
    """Whether ``sums`` prove the values they were built from finite and within ``LARGEST_OUTPUT``.

    ``False`` means "scan the values" (the sums cannot tell, or something is wrong).
    """
    bound = getattr(sums, "magnitude_bound", None)
    if bound is None:
        return False
    with np.errstate(invalid="ignore", over="ignore"):
        top = bound()
    return bool(np.isfinite(top) and top <= LARGEST_OUTPUT)


def check_inputs(job: Any, block: Any) -> None:
    """The laws' inverse CDFs must give finite inputs (an extreme law can overflow)."""
    if np.isfinite(block.X).all():
        return
    cols = np.flatnonzero(~np.isfinite(block.X).all(axis=0)) % job.design.d
    labels = job.feature_names or [f"x{j}" for j in range(job.design.d)]
    names = ", ".join(dict.fromkeys(labels[j] for j in cols[:5]))
    laws = ", ".join(dict.fromkeys(job.design.laws[job.design.input_of(j)].describe() for j in cols[:5]))
    raise UserError(
        f"The input law of {names} ({laws}) gives infinite values at the edge of its range: its "
        "inverse CDF overflows in floating point. This is not the model's doing: narrow the law "
        "(a smaller sd or log_sd, or a bounded law) in the input spec."
    )


def check_outputs(job: Any, name: str, y: np.ndarray, X: np.ndarray) -> None:
    """Finite outputs whose squares do not overflow; otherwise a message with an example row."""
    # two reductions that allocate nothing (NaN propagates through both); the absolute
    # values are formed only to describe a failure
    top = max(float(y.max()), -float(y.min())) if y.size else 0.0
    if top <= LARGEST_OUTPUT:
        return
    with np.errstate(invalid="ignore"):
        top = float(np.max(np.abs(y)))
    if top <= LARGEST_OUTPUT:
        return
    what = "outputs" if name in ("outputs", "old", "new") else f"layer '{name.split(':', 1)[-1]}'"
    if np.isfinite(y).all():
        raise UserError(
            f"The model's {what} reach {top:.3g} in magnitude: their squares would overflow float64, so "
            "no variance can be computed. Rescale the output (for instance report it in larger units) "
            "and audit again."
        )
    bad = ~np.isfinite(y.reshape(len(y), -1))
    rows = np.flatnonzero(bad.any(axis=1))
    i = rows[0]
    labels = job.feature_names or [f"x{j}" for j in range(X.shape[1])]
    example = ", ".join(f"{labels[j]}={X[i, j]:.6g}" for j in range(min(X.shape[1], 12)))
    more = " ..." if X.shape[1] > 12 else ""
    raise NonFiniteError(
        f"The model returned NaN or infinite values in its {what} for {len(rows)} of {len(y)} "
        f"sampled input rows (e.g. {example}{more}). Sobol' indices need finite values everywhere "
        "the input laws put mass: use bounded laws (uniform, triangular) or narrower ones in the "
        "input spec, or make the model finite on the whole input range."
    )
