"""The error spread of a planned temperature logger pair: what the field reduction would give.

A logger pair (two temperature sensors on one rod, ``shallow`` and ``deep`` m below the bed) is
reduced in the field to a vertical Darcy flux by the amplitude ratio of the daily wave
(:func:`bedflux.field.thermal.flux_from_temperature` with ``method="amplitude"``, the method of
the temperature sheet, :data:`bedflux.field.temperature.SHEET_METHOD`). Its planned error spread
at a predicted flux ``q`` is that reduction's own ``flux_sd`` for a record the pair would show at
``q``: Stallman's (1965) periodic solution (:func:`bedflux.field.periodic.periodic_temperature`)
sampled every :data:`READING_INTERVAL` over one period at both sensors, with the sand defaults
of the field reduction (:data:`bedflux.field.thermal_properties.SEDIMENTS`, nominal values for the
record, their ranges for the spread), the sensor accuracy and the 5 mm spacing uncertainty.

The record is noise-free, so the spread comes from the sensor accuracy (the floor of the
reading error in the harmonic fit), the spacing and the thermal properties. One window (one
period) is one datum: more days add windows whose errors from the thermal properties and the
spacing are shared, so they do not shrink that part.

The spreads are computed once per plan and pair geometry on a grid of fluxes spanning the
predicted ones (all grid fluxes in one call of the estimator: one day of record per grid flux,
the windows fitted independently), and interpolated (log of the spread, linear in
``asinh(q / FLUX_SCALE)``). Where the deep wave is too damped to read (the flag ``too_damped``;
such windows are not observations of a field campaign either) or the wave is not damped at all,
the pair measures nothing: its spread is infinite.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np

from bedflux.field.periodic import periodic_temperature
from bedflux.field.thermal import DEFAULT_ACCURACY, flux_from_temperature
from bedflux.field.thermal_properties import SEDIMENTS, WATER_HEAT_CAPACITY

#: Sensor depths of a logger pair below the bed (m): 5 and 15 cm, a 10 cm spacing near the top of
#: the bed where the daily wave is still well above the sensors' accuracy (common practice).
PAIR_DEPTHS = (0.05, 0.15)
#: Interval between logger readings (s): 15 min (common practice for stream-temperature loggers).
READING_INTERVAL = 900.0
#: Half the daily range of the stream temperature when the scenario gives no temperature wave
#: (degC): 2 degC, a 4 degC daily range, usual for a small stream in summer (common practice).
DEFAULT_DAILY_AMPLITUDE = 2.0
#: Period of the wave (s): a day.
DEFAULT_PERIOD = 86400.0
#: Flux nodes of the interpolation grid.
GRID_NODES = 81
#: Flux scale of the grid (m/s): nodes crowd within about this of zero (0.02 m/d).
FLUX_SCALE = 0.02 / 86400.0
#: Monte Carlo samples per grid flux (the spread is then good to about 2 %).
SAMPLES = 2000
#: Mean temperature of the synthetic record (degC); it cancels out of the reduction.
_MEAN_TEMPERATURE = 15.0
#: Windows with these flags measure nothing.
_UNREADABLE = ("too_damped", "no_damping", "gap")


@lru_cache(maxsize=32)
def _spread_on_grid(shallow: float, deep: float, accuracy: float, amplitude: float, period: float,
                    low: float, high: float) -> tuple[np.ndarray, np.ndarray]:
    """Grid fluxes (m/s, up > 0) and the amplitude method's ``flux_sd`` there (inf: unreadable)."""
    sand = SEDIMENTS["sand"]
    s_lo, s_hi = np.arcsinh(np.array([low, high]) / FLUX_SCALE)
    q = FLUX_SCALE * np.sinh(np.linspace(s_lo, s_hi, GRID_NODES))
    per_day = int(round(period / READING_INTERVAL))
    dt = period / per_day
    day = np.repeat(np.arange(GRID_NODES), per_day)
    t = day * period + np.tile(np.arange(per_day) * dt, GRID_NODES)
    # thermal front velocity, positive DOWNWARD in the periodic solution
    v = -q[day] * WATER_HEAT_CAPACITY / sand.heat_capacity
    shallow_t = periodic_temperature(t, shallow, v, sand.diffusivity, period, _MEAN_TEMPERATURE, amplitude)
    deep_t = periodic_temperature(t, deep, v, sand.diffusivity, period, _MEAN_TEMPERATURE, amplitude)
    est = flux_from_temperature(t, shallow_t, deep_t, deep - shallow, sand.thermal_conductivity,
                                sand.heat_capacity, period, "amplitude", accuracy=accuracy,
                                conductivity_range=sand.conductivity_range,
                                heat_capacity_range=sand.heat_capacity_range, samples=SAMPLES)
    sd = est["flux_sd"].to_numpy(dtype=float)
    flags = est["flag"].astype(str)
    bad = flags.map(lambda f: any(w in f.split() for w in _UNREADABLE)).to_numpy() | ~(sd > 0)
    return q, np.where(bad, np.inf, sd)


def logger_flux_sd(flux: np.ndarray, shallow: float, deep: float, accuracy: float = DEFAULT_ACCURACY,
                   amplitude: float = DEFAULT_DAILY_AMPLITUDE, period: float = DEFAULT_PERIOD) -> np.ndarray:
    """Planned error spread (m/s) of the flux a logger pair would give at each predicted ``flux``.

    Parameters
    ----------
    flux
        Predicted vertical Darcy flux at the pair's mid-depth (m/s, positive upward).
    shallow, deep
        Sensor depths below the bed (m), ``0 < shallow < deep``.
    accuracy
        Sensor accuracy (degC, +/-).
    amplitude, period
        Amplitude (degC) and period (s) of the stream temperature wave at the bed.

    Returns
    -------
    numpy.ndarray
        The amplitude method's ``flux_sd`` interpolated from the grid; ``inf`` where the record
        could not be read (between grid fluxes of which one is unreadable, too).
    """
    q = np.asarray(flux, dtype=float)
    if q.size == 0:
        return np.empty_like(q)
    low = float(min(np.min(q), -FLUX_SCALE))
    high = float(max(np.max(q), FLUX_SCALE))
    pad = 0.01 * (high - low)
    grid, sd = _spread_on_grid(float(shallow), float(deep), float(accuracy), float(amplitude), float(period),
                               low - pad, high + pad)
    s = np.arcsinh(q / FLUX_SCALE)
    nodes = np.arcsinh(grid / FLUX_SCALE)
    with np.errstate(divide="ignore"):
        log_sd = np.interp(s, nodes, np.log(sd))
    # an interval with an unreadable end is unreadable (inf - inf is NaN in the interpolation)
    return np.where(np.isfinite(log_sd), np.exp(log_sd), np.inf)
