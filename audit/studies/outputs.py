"""Which outputs a study measures, and which of them are exact linear functions of others.

:func:`select_outputs` keeps the output units a user names (unit names such as
``probabilities[1]``, or a tensor's name for all its units); :func:`find_redundant`
evaluates a small probe and notes outputs that are exactly an affine function of
outputs before them (a binary classifier's p and 1 − p; probabilities summing to
one): their normalised indices repeat those outputs', so the report details one.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from ..design import Design
from ..errors import UserError, suggest
from ..estimators import machine_eps
from ..models.base import Model

__all__ = ["find_redundant", "select_outputs"]

#: Probe rows for the search for linear relations between outputs.
PROBE_ROWS = 256
#: A residual within this many roundings of an output's scale makes it an exact linear function.
ROUNDINGS = 1e3


def select_outputs(
    model: Model, names: Sequence[str], wanted: Sequence[str] | np.ndarray | None
) -> tuple[np.ndarray | None, list[str]]:
    """Column indices of the kept output units (``None``: all) and their names.

    Parameters
    ----------
    model : Model
    names : sequence of str
        Names of every output unit (the model's, or the spec's ``[outputs] names``).
    wanted : sequence of str, or ndarray of int, optional
        Unit names or output tensor names to keep, in the order given (or the column indices).

    Raises
    ------
    UserError
        For a name that is neither a unit nor a tensor (with the nearest and the valid ones).
    """
    if wanted is None or len(wanted) == 0:
        return None, list(names)
    if isinstance(wanted, np.ndarray):
        keep = np.asarray(wanted, dtype=np.intp)
        return keep, [names[i] for i in keep]
    tensors: dict[str, list[int]] = {}
    start = 0
    for t in model.outputs:
        tensors[t.name] = list(range(start, start + t.units))
        start += t.units
    own = {n: i for i, n in enumerate(model.output_names())}
    given = {n: i for i, n in enumerate(names)}
    keep: list[int] = []
    for w in wanted:
        if w in given:
            cols = [given[w]]
        elif w in own:
            cols = [own[w]]
        elif w in tensors:
            cols = tensors[w]
        else:
            valid = list(dict.fromkeys([*tensors, *names]))
            shown = ", ".join(valid[:12]) + (" ..." if len(valid) > 12 else "")
            held = getattr(model, "skipped_outputs", {}).get(w)
            if held is not None:
                raise UserError(
                    f"The model's output '{w}' holds {held}, not real numbers, so it is not audited (Sobol' "
                    f"indices of a class label measure which inputs flip it, rarely what is wanted). Choose "
                    f"among the outputs of real numbers: {shown}."
                )
            raise UserError(f"The model has no output named '{w}'." + suggest(w, valid) + f" Its outputs: {shown}.")
        keep += [c for c in cols if c not in keep]
    return np.array(keep, dtype=np.intp), [names[i] for i in keep]


def _affine_fits(y: np.ndarray, basis: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares fits ``y ≈ a_i + b_i · basis[:, i]``, one per column: (a, b, largest residual)."""
    xc = basis - basis.mean(axis=0)
    yc = y - y.mean()
    var = np.einsum("ni,ni->i", xc, xc)
    b = np.divide(xc.T @ yc, var, out=np.zeros(basis.shape[1]), where=var > 0)
    a = y.mean() - b * basis.mean(axis=0)
    worst = np.abs(yc[:, None] - xc * b).max(axis=0)
    return a, b, worst


def _affine_text(coef: np.ndarray, names: Sequence[str], tiny: float) -> str:
    """``1 − p0`` or ``0.5 + 2 × a − b``: the affine combination, small terms left out."""
    parts = [] if abs(coef[0]) <= tiny else [f"{coef[0]:.4g}"]
    for c, name in zip(coef[1:], names, strict=True):
        if abs(c) <= tiny:
            continue
        size = "" if abs(abs(c) - 1) <= tiny else f"{abs(c):.4g} × "
        sign = "−" if c < 0 else "+"
        parts.append(f"{sign} {size}{name}" if parts else f"{'−' if c < 0 else ''}{size}{name}")
    return " ".join(parts) if parts else "0"


def find_redundant(
    model: Model, design: Design, keep: np.ndarray | None, names: Sequence[str], dtype: type
) -> dict[str, str]:
    """Outputs that are exact affine functions of one earlier output: ``{name: "= 1 − probabilities[0]"}``.

    Only a function of a single output (y = a + b·z, b ≠ 0) has that output's indices and ν
    exactly; a combination of several (the last class of a softmax, 1 − p0 − p1) does not,
    and is kept. A probe of the design's first rows is evaluated (at most
    :data:`PROBE_ROWS`); an output that moves less than the rounding of its values on the
    probe (a saturated classifier) is never called a function of another.
    """
    if len(names) < 2:
        return {}
    n = min(PROBE_ROWS, design.points)
    x = design.block(0, 0, n).A.astype(dtype, copy=False)
    y = np.asarray(model.evaluate(x).outputs, dtype=np.float64).reshape(n, -1)
    if keep is not None:
        y = y[:, keep]
    if not np.isfinite(y).all():
        return {}
    eps = max(machine_eps(t.dtype) for t in model.outputs)
    rounding = ROUNDINGS * eps * np.maximum(np.abs(y).max(axis=0), 1e-300)
    moves = np.ptp(y, axis=0) > 100 * rounding  # far above the rounding of its values
    found: dict[str, str] = {}
    independent: list[int] = []
    for j in range(y.shape[1]):
        if independent and moves[j]:
            cols = np.array(independent)
            a, b, worst = _affine_fits(y[:, j], y[:, cols])
            fits = (worst <= rounding[j]) & moves[cols]
            if fits.any():
                i = int(np.flatnonzero(fits)[0])
                found[names[j]] = "= " + _affine_text(np.array([a[i], b[i]]), [names[cols[i]]], ROUNDINGS * eps)
                continue
        independent.append(j)
    return found
