"""A fictional greenhouse-climate simulator in closed form.

This module is the demo scenario of netdim: a small, vectorised, steady-state
energy and vapour balance of a greenhouse compartment. It is NOT a validated
crop or climate model; its coefficients are round numbers picked so that the
outputs stay in plausible ranges and the inputs interact in several ways:

* vents only act above an opening of ``VENT_THRESHOLD`` (0.2): the effective
  opening is ``max(0, opening - 0.2) / 0.8``, a kink;
* wind multiplies the effect of the vents (vent x wind interaction);
* the thermal screen both shades the sun and insulates the cover
  (screen x irradiance and screen x outside temperature interactions);
* the leaves split absorbed sunlight into sensible heat and transpiration
  (leaf area x irradiance), which drives inside humidity;
* the inside air temperature is a ratio of conductance-weighted sums, so every
  heat source interacts with every conductance.

Inputs (columns of ``x``, in this order; uniform laws over the given ranges) are
listed in :data:`FEATURES`; outputs are the inside air temperature (°C) and the
inside relative humidity (%), see :data:`OUTPUTS`.

An audit of a model's sensitivity is not a safety validation. Where a model
informs or controls equipment, defer to the applicable codes and to qualified
engineers.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "FEATURES",
    "OUTPUTS",
    "VENT_THRESHOLD",
    "Feature",
    "lower_bounds",
    "sample_inputs",
    "simulate",
    "simulate_humidity",
    "simulate_temperature",
    "upper_bounds",
]


@dataclass(frozen=True)
class Feature:
    """One input of the simulator.

    Attributes
    ----------
    name : str
        Feature name (used in input specs and reports).
    unit : str
        Physical unit.
    low, high : float
        Range of the uniform law.
    note : str
        One line of description.
    """

    name: str
    unit: str
    low: float
    high: float
    note: str


FEATURES: tuple[Feature, ...] = (
    Feature("outside_temperature", "°C", -5.0, 30.0, "air temperature outside the greenhouse"),
    Feature("solar_irradiance", "W/m²", 0.0, 900.0, "global irradiance on a horizontal plane"),
    Feature("vent_opening", "1", 0.0, 1.0, "roof vent opening; vents act above 0.2 only"),
    Feature("pipe_temperature", "°C", 20.0, 70.0, "heating-pipe water temperature"),
    Feature("outside_humidity", "%", 30.0, 95.0, "outside relative humidity"),
    Feature("screen_closure", "1", 0.0, 1.0, "thermal / shade screen closure"),
    Feature("leaf_area_index", "m²/m²", 0.5, 4.0, "leaf area per floor area"),
    Feature("wind_speed", "m/s", 0.0, 12.0, "outside wind speed"),
)
"""The eight inputs, in model input order."""

OUTPUTS: tuple[tuple[str, str], ...] = (
    ("inside_temperature", "°C"),
    ("inside_humidity", "%"),
)
"""Output names and units, in output order."""

VENT_THRESHOLD = 0.2
"""Vent opening below which the vents do not ventilate (the kink)."""

# Round-number coefficients of the fictional compartment (per m² of floor).
_HEIGHT = 4.0  # m, mean air height
_AIR_HEAT = 1.2 * 1005.0 * _HEIGHT / 3600.0  # W/(m² K) per air change an hour
_LEAK_ACH = 0.5  # air changes an hour through leaks
_LEAK_WIND = 0.03  # extra leak air changes an hour per m/s of wind
_VENT_ACH = 8.0  # air changes an hour of fully open vents, no wind
_VENT_WIND = 3.5  # extra vent air changes an hour per m/s of wind
_COVER_U = 8.0  # W/(m² K), cover heat loss without screen or wind
_SCREEN_INSULATION = 0.55  # share of cover loss a closed screen saves
_COVER_WIND = 0.04  # relative increase of cover loss per m/s of wind
_PIPE_U = 2.0  # W/(m² K), pipe-to-air conductance per floor area
_TRANSMISSION = 0.6  # share of sunlight that reaches the crop
_SCREEN_SHADE = 0.7  # share of sunlight a closed screen stops
_LATENT_MAX = 0.6  # largest share of absorbed sun used for transpiration
_LEAF_EXTINCTION = 0.7  # per unit of leaf area index
_NIGHT_TRANSPIRATION = 4.0  # W/m² of latent heat per unit of leaf area index
_CONDENSATION = 1.5 * _HEIGHT / 3600.0  # m/s, vapour sink on the cover (1.5 air changes/h)
_LATENT_HEAT = 2.45e6  # J/kg
_WATER_GAS = 461.5  # J/(kg K)
_SOFT_CAP = 12.0  # sharpness of the smooth 100 % cap on relative humidity


def lower_bounds() -> np.ndarray:
    """Lower ends of the input ranges, shape (8,)."""
    return np.array([f.low for f in FEATURES])


def upper_bounds() -> np.ndarray:
    """Upper ends of the input ranges, shape (8,)."""
    return np.array([f.high for f in FEATURES])


def sample_inputs(n: int, seed: int | np.random.Generator | None = None) -> np.ndarray:
    """Independent uniform draws over the input ranges.

    Parameters
    ----------
    n : int
        Number of rows.
    seed : int, Generator or None
        Seed of :func:`numpy.random.default_rng`.

    Returns
    -------
    ndarray, shape (n, 8)
    """
    if n < 0:
        raise ValueError(f"n must be non-negative, got {n}")
    rng = np.random.default_rng(seed)
    lo, hi = lower_bounds(), upper_bounds()
    return lo + (hi - lo) * rng.random((int(n), len(FEATURES)))


def _check(x: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=np.float64)
    if x.ndim != 2 or x.shape[1] != len(FEATURES):
        raise ValueError(
            f"x must have shape (n, {len(FEATURES)}) with columns {[f.name for f in FEATURES]}; got shape {x.shape}"
        )
    return x


def _saturation_pressure(t: np.ndarray) -> np.ndarray:
    """Saturation vapour pressure over water in Pa (common empirical fit), t in °C."""
    return 610.8 * np.exp(17.27 * t / (t + 237.3))


def _balance(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    t_out, sun, vent, pipe, rh_out, screen, lai, wind = x.T
    vent_eff = np.maximum(vent - VENT_THRESHOLD, 0.0) / (1.0 - VENT_THRESHOLD)
    ach = _LEAK_ACH + _LEAK_WIND * wind + vent_eff * (_VENT_ACH + _VENT_WIND * wind)
    g_vent = _AIR_HEAT * ach
    g_cover = _COVER_U * (1.0 - _SCREEN_INSULATION * screen) * (1.0 + _COVER_WIND * wind)
    absorbed = _TRANSMISSION * sun * (1.0 - _SCREEN_SHADE * screen)
    latent_share = _LATENT_MAX * (1.0 - np.exp(-_LEAF_EXTINCTION * lai))
    sensible = absorbed * (1.0 - latent_share)
    g_loss = g_vent + g_cover
    t_in = (g_loss * t_out + _PIPE_U * pipe + sensible) / (g_loss + _PIPE_U)

    latent = absorbed * latent_share + _NIGHT_TRANSPIRATION * lai
    flow = _HEIGHT * ach / 3600.0 + _CONDENSATION * (1.0 - 0.5 * screen)
    e_out = rh_out / 100.0 * _saturation_pressure(t_out)
    rho_out = e_out / (_WATER_GAS * (t_out + 273.15))
    rho_in = rho_out + latent / _LATENT_HEAT / flow
    e_in = rho_in * _WATER_GAS * (t_in + 273.15)
    ratio = e_in / _saturation_pressure(t_in)
    rh_in = 100.0 * ratio / (1.0 + ratio**_SOFT_CAP) ** (1.0 / _SOFT_CAP)
    return t_in, rh_in


def simulate_temperature(x: np.ndarray) -> np.ndarray:
    """Inside air temperature in °C.

    Parameters
    ----------
    x : array_like, shape (n, 8)
        Inputs in the order of :data:`FEATURES`, physical units.

    Returns
    -------
    ndarray, shape (n,)
    """
    return _balance(_check(x))[0]


def simulate_humidity(x: np.ndarray) -> np.ndarray:
    """Inside relative humidity in % (smoothly capped below 100 %).

    Parameters
    ----------
    x : array_like, shape (n, 8)
        Inputs in the order of :data:`FEATURES`, physical units.

    Returns
    -------
    ndarray, shape (n,)
    """
    return _balance(_check(x))[1]


def simulate(x: np.ndarray) -> np.ndarray:
    """Inside air temperature (°C) and inside relative humidity (%).

    Parameters
    ----------
    x : array_like, shape (n, 8)
        Inputs in the order of :data:`FEATURES`, physical units.

    Returns
    -------
    ndarray, shape (n, 2)
        Columns ``inside_temperature`` and ``inside_humidity``.
    """
    t_in, rh_in = _balance(_check(x))
    return np.column_stack([t_in, rh_in])
