"""How far two models agree on which inputs matter: interval-aware rank agreement and the leading set.

Both measures look only at the inputs that matter (total index at least
``matter`` in either model) and never count noise as a disagreement:

* :func:`rank_agreement` — the share of pairs of those inputs kept in order. A
  pair counts as swapped only when both models separate its inputs (their
  intervals do not overlap) and in opposite orders; ties and overlapping
  intervals agree. Per randomization, each separated pair whose order differs
  between the two models' values counts, which gives the measure an interval
  over the randomizations.
* :func:`top_k_kept` — the share of the old model's ``k`` leading inputs that
  are not clearly out of the new model's ``k`` leading ones (clearly out: the
  input's interval lies wholly below the new ``k``-th input's).

References
----------
.. [1] Rank agreement as a share of concordant pairs, in the spirit of
   Kendall's tau; the interval-aware counting is our own rule (common
   practice, no source).
"""

from __future__ import annotations

from collections.abc import Sequence
from itertools import combinations

import numpy as np

from ..estimators.intervals import t_interval
from ..results import Estimate
from .summarize import estimate

__all__ = ["rank_agreement", "top_k_kept"]


def _separated(a: Estimate, b: Estimate) -> int:
    """+1 when a lies wholly above b, −1 wholly below, 0 when their intervals overlap."""
    if a.ci_low > b.ci_high:
        return 1
    if a.ci_high < b.ci_low:
        return -1
    return 0


def rank_agreement(
    old: Sequence[Estimate],
    new: Sequence[Estimate],
    old_reps: np.ndarray,
    new_reps: np.ndarray,
    matter: float,
) -> tuple[Estimate | None, int, int]:
    """Interval-aware rank agreement over the inputs that matter.

    Parameters
    ----------
    old, new : sequence of Estimate
        Normalised total indices, input order.
    old_reps, new_reps : ndarray, shape (R, d)
        Their per-randomization values (the same points for both models).
    matter : float
        Inputs with a total index at least this in either model are compared.

    Returns
    -------
    agreement : Estimate or None
        Share of pairs kept in order, with its interval (``None`` with fewer than two inputs that matter).
    inputs, swapped : int
        Inputs compared, and pairs swapped in the pooled estimates.
    """
    keep = [j for j in range(len(old)) if old[j].estimate >= matter or new[j].estimate >= matter]
    pairs = list(combinations(keep, 2))
    if not pairs:
        return None, len(keep), 0
    separated = []
    swapped = 0
    for i, j in pairs:
        a, b = _separated(old[i], old[j]), _separated(new[i], new[j])
        if a and b:
            separated.append((i, j))
            swapped += a != b
    per_rep = np.ones(old_reps.shape[0])
    if separated:
        i, j = np.array(separated).T
        flips = np.sign(old_reps[:, i] - old_reps[:, j]) != np.sign(new_reps[:, i] - new_reps[:, j])
        per_rep = 1.0 - flips.sum(axis=1) / len(pairs)
    return estimate(t_interval(per_rep)), len(keep), swapped


def top_k_kept(old: Sequence[Estimate], new: Sequence[Estimate], k: int) -> tuple[float, int]:
    """Share of the old ``k`` leading inputs not clearly out of the new ``k`` leading ones, and k used."""
    k = min(k, len(old))
    if k == 0:
        return float("nan"), 0
    top_old = sorted(range(len(old)), key=lambda j: -old[j].estimate)[:k]
    kth_new = sorted(new, key=lambda e: -e.estimate)[k - 1]
    out = sum(1 for j in top_old if new[j].ci_high < kth_new.ci_low)
    return 1.0 - out / k, k
