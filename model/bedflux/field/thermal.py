"""Vertical flux through a streambed from two temperature records: the daily wave's damping and lag.

:func:`flux_from_temperature` fits the daily harmonic of both records in moving windows
(:mod:`bedflux.field.harmonics`) and inverts the periodic solution
(:mod:`bedflux.field.periodic`) by three methods: amplitude ratio, phase lag, and both together
without an assumed diffusivity. Uncertainty comes from a Monte Carlo propagation with a fixed
seed; flags mark windows that cannot be read or whose methods disagree.
"""
from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from bedflux.errors import InputError
from bedflux.field.harmonics import Harmonics, fit_windows, window_centres
from bedflux.field.periodic import velocity_and_diffusivity, velocity_from_amplitude, velocity_from_phase
from bedflux.field.thermal_properties import PLAUSIBLE_DIFFUSIVITY, WATER_HEAT_CAPACITY, user_properties

METHODS = ("amplitude", "phase", "combined")
#: Accuracy of a temperature logger when none is given (degC): +/- 0.1 degC, the figure stated for
#: common stream-temperature loggers (common practice).
DEFAULT_ACCURACY = 0.1
#: Standard deviation of the spacing of two sensors (m): a sensor's depth below an uneven, scouring
#: bed is known to about 5 mm (common practice).
DEFAULT_SPACING_SD = 0.005
#: Monte Carlo samples per window (the standard deviation is then good to about 4 %).
DEFAULT_SAMPLES = 300
#: The deep wave is "too damped to read" when its amplitude is below this many of its standard
#: errors (project rule: the amplitude is then not told from zero at about 99.7 %).
READABLE_AMPLITUDE = 3.0
#: Amplitude and phase fluxes "disagree" when they differ by more than this many combined
#: standard deviations (project rule: about 95 %).
DISAGREEMENT = 2.0
#: Lags in (-LAG_BELOW, P - LAG_BELOW] are read as they are (a negative lag is a deep wave ahead of
#: the shallow one, which no flow produces).
LAG_BELOW = 0.25

FLAGS = {
    "gap": "too few readings in the window to fit the daily wave",
    "too_damped": f"the deep sensor's daily wave is below {READABLE_AMPLITUDE:g} of its standard errors",
    "no_damping": "the deep wave is not smaller than the shallow one (sensors swapped, or the upper sensor "
                  "out of the bed)",
    "phase_out_of_range": "the lag cannot be read as a flux: negative (the deep wave ahead), or longer than "
                          "conduction alone allows (the assumed diffusivity too large, or noise near zero flow)",
    "methods_disagree": f"amplitude and phase fluxes differ by more than {DISAGREEMENT:g} standard deviations",
    "implausible_diffusivity": "the diffusivity implied by amplitude and phase together lies outside "
                               "0.028-0.180 m^2/d (Irvine et al. 2015)",
}


def _check(time: np.ndarray, shallow: np.ndarray, deep: np.ndarray, spacing: float, lam: float,
           method: str, period: float, window: float, step: float) -> None:
    if method not in METHODS:
        raise InputError(f"method {method!r} is not one of {', '.join(METHODS)}", where="method")
    if not (time.shape == shallow.shape == deep.shape and time.ndim == 1):
        raise InputError("time, shallow and deep must be 1-D arrays of one length; got shapes "
                         f"{time.shape}, {shallow.shape}, {deep.shape}")
    for name, value in (("spacing", spacing), ("thermal_conductivity", lam), ("period", period),
                        ("window", window), ("step", step)):
        if not (np.isfinite(value) and value > 0):
            raise InputError(f"{name} must be a positive number; got {value!r}", where=name)
    if window < period:
        raise InputError(f"window ({window:g} s) must cover at least one period ({period:g} s)", where="window")


def _wrap_lag(dphi: np.ndarray, w: float) -> np.ndarray:
    """The lag (s) of the deep wave from the phase difference, read in (-LAG_BELOW, 1 - LAG_BELOW] periods."""
    turn = 2.0 * np.pi
    return (np.mod(dphi + LAG_BELOW * turn, turn) - LAG_BELOW * turn) / w


def _amplitude_sd(h: Harmonics) -> np.ndarray:
    """Linearised standard error of the amplitude sqrt(c^2 + s^2)."""
    c, s, cov = h.c, h.s, h.cov
    with np.errstate(invalid="ignore", divide="ignore"):
        var = (c * c * cov[:, 0, 0] + s * s * cov[:, 1, 1] + 2 * c * s * cov[:, 0, 1]) / (c * c + s * s)
    return np.sqrt(np.maximum(var, 0.0))


def _robust_sd(samples: np.ndarray) -> np.ndarray:
    """Half the central 68 % range of each row's samples: the standard deviation of a normal
    spread, not blown up by the few samples in which a noisy deep wave makes an inversion wild."""
    if samples.size == 0:
        return np.empty(samples.shape[0])
    lo, hi = np.nanpercentile(samples, [15.865, 84.135], axis=1)
    return 0.5 * (hi - lo)


def _draw(h: Harmonics, rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Samples (windows x n) of the cosine and sine coefficients from their covariance."""
    cov = np.nan_to_num(h.cov)
    l11 = np.sqrt(np.maximum(cov[:, 0, 0], 0.0))
    l21 = np.divide(cov[:, 0, 1], l11, out=np.zeros_like(l11), where=l11 > 0)
    l22 = np.sqrt(np.maximum(cov[:, 1, 1] - l21 ** 2, 0.0))
    z1, z2 = rng.standard_normal((2, h.c.size, n))
    return h.c[:, None] + l11[:, None] * z1, h.s[:, None] + l21[:, None] * z1 + l22[:, None] * z2


def _fluxes(amp_s, ph_s, amp_d, ph_d, dz, lam, rc, period):
    """Upward Darcy fluxes (m/s) by the three methods, the ratio, lag and implied diffusivity."""
    w = 2.0 * np.pi / period
    ratio = amp_d / amp_s
    lag = _wrap_lag(ph_d - ph_s, w)
    k = lam / rc
    to_flux = -rc / WATER_HEAT_CAPACITY
    v_amp = velocity_from_amplitude(ratio, dz, k, period)
    v_ph = np.sign(v_amp) * velocity_from_phase(lag, dz, k, period)
    v_comb, k_comb = velocity_and_diffusivity(ratio, lag, dz, period)
    return {"amplitude": v_amp * to_flux, "phase": v_ph * to_flux, "combined": v_comb * to_flux,
            "ratio": ratio, "lag": lag, "diffusivity": k_comb}


def flux_from_temperature(time: ArrayLike, shallow: ArrayLike, deep: ArrayLike, spacing: float,
                          thermal_conductivity: float, heat_capacity: float | None,
                          period: float = 86400.0, method: str = "amplitude", *,
                          porosity: float | None = None, window: float | None = None,
                          step: float | None = None, accuracy: float = DEFAULT_ACCURACY,
                          spacing_sd: float = DEFAULT_SPACING_SD,
                          conductivity_range: tuple[float, float] | None = None,
                          heat_capacity_range: tuple[float, float] | None = None,
                          samples: int = DEFAULT_SAMPLES, seed: int = 0) -> pd.DataFrame:
    """Vertical Darcy flux (m/s, positive UPWARD = gaining) from a shallow and a deep temperature record.

    Parameters
    ----------
    time
        Reading times (s); need not be even; NaN temperatures are skipped.
    shallow, deep
        Temperatures (degC) of the upper and lower sensor at those times.
    spacing
        Vertical distance between the sensors (m).
    thermal_conductivity
        Bulk thermal conductivity of the saturated bed (W m-1 K-1).
    heat_capacity
        Bulk volumetric heat capacity of the saturated bed (J m-3 K-1); ``None`` builds it from
        ``porosity`` (:func:`bedflux.field.thermal_properties.bulk_heat_capacity`).
    period
        Period of the wave (s), a day by default.
    method
        ``"amplitude"`` (amplitude ratio with the diffusivity lambda/(rho c); Hatch et al. 2006,
        Keery et al. 2007), ``"phase"`` (lag with that diffusivity; Hatch et al. 2006; the sign
        is taken from the amplitude method) or ``"combined"`` (amplitude and lag together, no
        assumed diffusivity; McCallum et al. 2012, Luce et al. 2013). All three are returned;
        ``method`` chooses the one in ``flux`` and ``flux_sd``.
    porosity
        Porosity, used only when ``heat_capacity`` is None (default: that of sand, 0.35).
    window, step
        Window length (s, at least one period; default one period) and the step between window
        centres (default: the window, so windows do not overlap and their fluxes are
        independent).
    accuracy
        Sensor accuracy (degC, +/-); floors the reading error (:func:`fit_windows`).
    spacing_sd
        Standard deviation of the spacing (m).
    conductivity_range, heat_capacity_range
        (low, high) sampled uniformly; default +/- 15 % about the values given.
    samples, seed
        Monte Carlo samples per window and the seed (fixed: the same input gives the same output).

    Returns
    -------
    pandas.DataFrame
        One row per window: ``time`` (window centre, s), ``flux``, ``flux_sd`` (m/s, the chosen
        method), ``flag`` (space-separated flag words of :data:`FLAGS`, "" when none), then
        ``flux_amplitude``, ``flux_phase``, ``flux_combined`` and their ``_sd``, ``amplitude_shallow``,
        ``amplitude_deep`` (degC), ``amplitude_ratio``, ``phase_lag`` (s), ``diffusivity``
        (m^2/s, implied by the combined method) and ``readings`` (of the deep record).

    Raises
    ------
    InputError
        For an unknown method, arrays of different shapes, or a spacing, conductivity, period or
        window that is not positive.
    """
    t = np.asarray(time, dtype=float)
    ts = np.asarray(shallow, dtype=float)
    td = np.asarray(deep, dtype=float)
    window = float(period if window is None else window)
    step = float(window if step is None else step)
    _check(t, ts, td, float(spacing), float(thermal_conductivity), method, float(period), window, step)
    props = user_properties(thermal_conductivity, heat_capacity, porosity)
    lam_range = conductivity_range or props.conductivity_range
    rc_range = heat_capacity_range or props.heat_capacity_range

    centres = window_centres(t[np.isfinite(t)], window, step) if np.isfinite(t).any() else np.empty(0)
    hs = fit_windows(t, ts, centres, window, period, accuracy)
    hd = fit_windows(t, td, centres, window, period, accuracy)
    nominal = _fluxes(hs.amplitude, hs.phase, hd.amplitude, hd.phase, float(spacing),
                      props.thermal_conductivity, props.heat_capacity, period)

    rng = np.random.default_rng(seed)
    cs, ss = _draw(hs, rng, samples)
    cd, sd = _draw(hd, rng, samples)
    dz = np.maximum(spacing + spacing_sd * rng.standard_normal(samples), 0.1 * spacing)
    lam = rng.uniform(*lam_range, samples)
    rc = rng.uniform(*rc_range, samples)
    drawn = _fluxes(np.hypot(cs, ss), np.arctan2(ss, cs), np.hypot(cd, sd), np.arctan2(sd, cd), dz, lam, rc,
                    period)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        spread = {m: _robust_sd(drawn[m]) for m in METHODS}
    spread = {m: np.where(np.isfinite(nominal[m]), s, np.nan) for m, s in spread.items()}

    flags = _flags(hs, hd, nominal, spread)
    out = pd.DataFrame({
        "time": centres, "flux": nominal[method], "flux_sd": spread[method], "flag": flags,
        "flux_amplitude": nominal["amplitude"], "flux_amplitude_sd": spread["amplitude"],
        "flux_phase": nominal["phase"], "flux_phase_sd": spread["phase"],
        "flux_combined": nominal["combined"], "flux_combined_sd": spread["combined"],
        "amplitude_shallow": hs.amplitude, "amplitude_deep": hd.amplitude,
        "amplitude_ratio": nominal["ratio"], "phase_lag": nominal["lag"], "diffusivity": nominal["diffusivity"],
        "readings": hd.readings,
    })
    out.attrs.update(method=method, thermal_conductivity=props.thermal_conductivity,
                     heat_capacity=props.heat_capacity, spacing=float(spacing), period=float(period),
                     window=window, step=step, samples=samples, seed=seed)
    return out


def _flags(hs: Harmonics, hd: Harmonics, nominal: dict, spread: dict) -> np.ndarray:
    """Space-separated flag words per window."""
    words = []
    complete = hs.complete & hd.complete
    damped = complete & ~(hd.amplitude >= READABLE_AMPLITUDE * _amplitude_sd(hd))
    undamped = complete & ~damped & ~(nominal["ratio"] < 1.0)
    phase_bad = complete & ~damped & ~undamped & ~np.isfinite(nominal["phase"])
    with np.errstate(invalid="ignore"):
        diff = np.abs(nominal["amplitude"] - nominal["phase"])
        disagree = complete & ~damped & (diff > DISAGREEMENT * np.hypot(spread["amplitude"], spread["phase"]))
        k = nominal["diffusivity"]
        lo, hi = PLAUSIBLE_DIFFUSIVITY
        implausible = complete & ~damped & np.isfinite(k) & ~((k >= lo) & (k <= hi))
    for i in range(complete.size):
        w = [name for name, on in (("gap", not complete[i]), ("too_damped", damped[i]), ("no_damping", undamped[i]),
                                   ("phase_out_of_range", phase_bad[i]), ("methods_disagree", disagree[i]),
                                   ("implausible_diffusivity", implausible[i])) if on]
        words.append(" ".join(w))
    return np.array(words, dtype=object)
