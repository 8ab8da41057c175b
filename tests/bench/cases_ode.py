"""A costly pure-numpy simulator for the Dask measure: explicit-Euler integration of a forced pendulum per row.

Each row's six inputs in [0, 1] set the damping, stiffness, forcing amplitude and
frequency, and the initial angle and velocity of θ'' = −c θ' − k sin θ + A cos(ω t);
:data:`STEPS` Euler steps of dt = 0.01 are taken for every row (vectorised over the
rows, so the cost is per row and single-threaded: numpy's element-wise operations use
one core). Outputs: the final angle and the mean kinetic energy along the path.

The workers of a local Dask cluster import it by name (``cases_ode:simulate``, with
this folder on ``PYTHONPATH``); the step count comes from the environment variable
``NETDIM_BENCH_STEPS`` so the command line and the workers agree.
"""

from __future__ import annotations

import os

import numpy as np

__all__ = ["STEPS", "simulate"]

#: Euler steps per row.
STEPS = int(os.environ.get("NETDIM_BENCH_STEPS", "2000"))
DT = 0.01


def simulate(x: np.ndarray) -> np.ndarray:
    """(n, 6) inputs in [0, 1] → (n, 2): final angle and mean kinetic energy."""
    c = 0.1 + 0.4 * x[:, 0]
    k = 1.0 + 3.0 * x[:, 1]
    amp = 0.5 * x[:, 2]
    omega = 0.5 + 1.5 * x[:, 3]
    theta = -1.0 + 2.0 * x[:, 4]
    vel = -1.0 + 2.0 * x[:, 5]
    energy = np.zeros_like(theta)
    for i in range(STEPS):
        acc = -c * vel - k * np.sin(theta) + amp * np.cos(omega * (i * DT))
        theta = theta + DT * vel
        vel = vel + DT * acc
        energy += 0.5 * vel * vel
    return np.stack([theta, energy / STEPS], axis=1)
