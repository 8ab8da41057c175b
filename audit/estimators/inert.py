"""When a unit counts as constant (inert): its variance is zero up to the precision of the model.

References
----------
.. [1] float32 resolves relative changes of about 6e-8 (its machine epsilon
   is 2^-23); a threshold of 1e-6 of the mean leaves room for accumulated
   rounding (common practice, no source).
"""

from __future__ import annotations

import numpy as np

__all__ = ["INERT_ABSOLUTE_VAR", "INERT_RELATIVE_SD", "is_inert"]

#: A unit is inert when its sd is below this fraction of |mean| (plus a tiny floor):
#: float32 networks cannot resolve smaller relative changes.
INERT_RELATIVE_SD = 1e-6
INERT_ABSOLUTE_VAR = 1e-30


def is_inert(mean: np.ndarray, variance: np.ndarray) -> np.ndarray:
    """Units whose variance is zero up to the precision of a float32 network."""
    return variance <= (INERT_RELATIVE_SD * np.abs(mean)) ** 2 + INERT_ABSOLUTE_VAR
