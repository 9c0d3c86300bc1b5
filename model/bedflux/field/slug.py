"""Slug tests (Hvorslev 1951; Bouwer & Rice 1976, Bouwer 1989) and the in-bed falling-head
standpipe permeameter (Chen 2000, after Hvorslev 1951).

Each method fits a straight line to the logarithm of the head displacement against time. The
basic time lag T0 is the time at which the normalised head falls to 1/e, i.e. -1/slope.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from bedflux.errors import InputError

#: Points whose normalised head is below this are left out of the fit (near the static level
#: the reading error dominates the displacement).
FIT_FLOOR = 0.1
#: A recovery is called log-linear when the fit has R^2 >= this ...
LOG_LINEAR_R2 = 0.98
#: ... and the slopes of its early and late halves differ by at most this fraction.
HALF_SLOPE_SPREAD = 0.25
#: Ratio Le/R above which Hvorslev's simplified shape factor ln(Le/R) is used (Hvorslev 1951).
SIMPLIFIED_LIMIT = 8.0
#: Range of Le/rw over which the polynomial fits of the Bouwer & Rice A, B, C curves are used.
BOUWER_RICE_RANGE = (5.0, 1000.0)
#: Cap on ln((H - Lw)/rw) in the Bouwer & Rice partial-penetration term (Bouwer & Rice 1976).
_BR_LOG_CAP = 6.0


@dataclass(frozen=True)
class RecoveryFit:
    """A log-linear fit ln(H/H0) = a + b t of a head recovery.

    Attributes
    ----------
    slope
        b, 1/s (negative for a recovery).
    time_lag
        Basic time lag T0 = -1/b, s.
    r2
        Coefficient of determination of the fit in log space.
    n
        Points used.
    log_linear
        Whether the recovery passes the R^2 and half-slope checks.
    slope_se
        Standard error of the slope (least squares, n - 2 degrees of freedom); NaN for fewer
        than three points. K is proportional to the slope, so slope_se / |slope| is the
        relative standard error of K from the fit.
    """

    slope: float
    time_lag: float
    r2: float
    n: int
    log_linear: bool
    slope_se: float = float("nan")


def fit_recovery(time: ArrayLike, head: ArrayLike, floor: float = FIT_FLOOR) -> RecoveryFit:
    """Fit ln(H/H0) against t over the points with H/H0 >= ``floor``.

    Parameters
    ----------
    time
        Times since the start of the test, s.
    head
        Displacement from the static level (either sign; H0 is the first value in time).
    floor
        Smallest normalised head used in the fit.

    Raises
    ------
    InputError
        With fewer than three usable points, or when the head does not recover.
    """
    t = np.asarray(time, dtype=float)
    h = np.asarray(head, dtype=float)
    order = np.argsort(t)
    t, h = t[order], h[order]
    if t.size == 0 or h[0] == 0:
        raise InputError("the first displacement of a test must be nonzero")
    norm = h / h[0]
    use = norm >= floor
    if use.sum() < 3:
        raise InputError(f"fewer than 3 readings with normalised head >= {floor:g}; cannot fit a recovery")
    tu, yu = t[use], np.log(norm[use])
    b, a = np.polyfit(tu, yu, 1)
    if not b < 0:
        raise InputError("the head does not recover toward the static level (log-linear slope >= 0)")
    resid = yu - (a + b * tu)
    ss = np.sum((yu - yu.mean()) ** 2)
    r2 = float(1.0 - np.sum(resid**2) / ss) if ss > 0 else 1.0
    se = float(np.sqrt(np.sum(resid**2) / (tu.size - 2) / np.sum((tu - tu.mean()) ** 2)))
    ok = r2 >= LOG_LINEAR_R2
    if tu.size >= 6:
        half = tu.size // 2
        b1 = np.polyfit(tu[: half + 1], yu[: half + 1], 1)[0]
        b2 = np.polyfit(tu[half:], yu[half:], 1)[0]
        ok = ok and abs(b1 - b2) <= HALF_SLOPE_SPREAD * abs(b)
    return RecoveryFit(float(b), float(-1.0 / b), r2, int(tu.size), bool(ok), se)


def _check_geometry(**values: float) -> None:
    for name, v in values.items():
        if not (np.isfinite(v) and v > 0):
            raise InputError(f"{name} must be a length > 0 m; got {v!r}")


def hvorslev_k_from_lag(time_lag: float, casing_radius: float, screen_radius: float, screen_length: float,
                        *, anisotropy: float = 1.0, shape: str = "auto") -> float:
    """Hvorslev (1951) conductivity from the basic time lag.

    K = r^2 F / (2 Le T0) with the shape term F = asinh(m Le / (2 R)) (exact) or ln(m Le / R)
    (simplified, for m Le / R > 8), m = sqrt(Kh/Kv).

    Parameters
    ----------
    time_lag
        T0, s.
    casing_radius, screen_radius, screen_length
        r, R and Le, m.
    anisotropy
        m = sqrt(Kh/Kv).
    shape
        ``"auto"`` (simplified for m Le/R > 8, exact otherwise), ``"simplified"`` or ``"exact"``.
    """
    _check_geometry(time_lag=time_lag, casing_radius=casing_radius, screen_radius=screen_radius,
                    screen_length=screen_length, anisotropy=anisotropy)
    ratio = anisotropy * screen_length / screen_radius
    if shape not in ("auto", "simplified", "exact"):
        raise InputError(f"shape must be 'auto', 'simplified' or 'exact'; got {shape!r}")
    simplified = shape == "simplified" or (shape == "auto" and ratio > SIMPLIFIED_LIMIT)
    term = np.log(ratio) if simplified else np.arcsinh(ratio / 2.0)
    return float(casing_radius**2 * term / (2.0 * screen_length * time_lag))


def hvorslev_k(time: ArrayLike, head: ArrayLike, casing_radius: float, screen_radius: float,
               screen_length: float, *, anisotropy: float = 1.0, shape: str = "auto") -> float:
    """Hvorslev (1951) conductivity (m/s) of a slug test in a screened piezometer.

    Parameters
    ----------
    time
        Times since the start of the test, s.
    head
        Displacement from the static level, m.
    casing_radius, screen_radius, screen_length
        r, R and Le, m.
    anisotropy, shape
        See :func:`hvorslev_k_from_lag`.
    """
    fit = fit_recovery(time, head)
    return hvorslev_k_from_lag(fit.time_lag, casing_radius, screen_radius, screen_length,
                               anisotropy=anisotropy, shape=shape)


def bouwer_rice_coefficients(ratio: float) -> tuple[float, float, float]:
    """A, B, C of the Bouwer & Rice (1976) curves at Le/rw, from polynomial fits (from memory,
    attributed to Van Rooy 1988); refused outside :data:`BOUWER_RICE_RANGE`."""
    lo, hi = BOUWER_RICE_RANGE
    if not lo <= ratio <= hi:
        raise InputError(
            f"Le/rw = {ratio:.4g} is outside {lo:g}-{hi:g}, the range over which the Bouwer & Rice "
            "curves are used; the method is refused rather than extrapolated"
        )
    x = ratio
    a = 1.4720 + 3.537e-2 * x - 8.148e-5 * x**2 + 1.028e-7 * x**3 - 6.484e-11 * x**4 + 1.573e-14 * x**5
    b = 0.2372 + 5.151e-3 * x - 2.682e-6 * x**2 - 3.491e-10 * x**3 + 4.738e-13 * x**4
    c = 0.7920 + 3.993e-2 * x - 5.743e-5 * x**2 + 3.858e-8 * x**3 - 9.659e-12 * x**4
    return float(a), float(b), float(c)


def bouwer_rice_shape(well_radius: float, screen_length: float, well_depth: float,
                      saturated_thickness: float) -> float:
    """ln(Re/rw) of Bouwer & Rice (1976) for a partially or fully penetrating well."""
    _check_geometry(well_radius=well_radius, screen_length=screen_length, well_depth=well_depth,
                    saturated_thickness=saturated_thickness)
    if well_depth > saturated_thickness:
        raise InputError("well_depth (Lw) cannot exceed saturated_thickness (H)")
    if screen_length > well_depth:
        raise InputError("screen_length (Le) cannot exceed well_depth (Lw)")
    a, b, c = bouwer_rice_coefficients(screen_length / well_radius)
    first = 1.1 / np.log(well_depth / well_radius)
    if well_depth < saturated_thickness:
        tail = min(np.log((saturated_thickness - well_depth) / well_radius), _BR_LOG_CAP)
        second = (a + b * tail) / (screen_length / well_radius)
    else:
        second = c / (screen_length / well_radius)
    return float(1.0 / (first + second))


def bouwer_rice_k_from_lag(time_lag: float, casing_radius: float, well_radius: float, screen_length: float,
                           well_depth: float, saturated_thickness: float) -> float:
    """Bouwer & Rice (1976) conductivity: K = rc^2 ln(Re/rw) / (2 Le) (1/t) ln(y0/yt), with
    (1/t) ln(y0/yt) = 1/T0 from the log-linear fit."""
    _check_geometry(time_lag=time_lag, casing_radius=casing_radius)
    shape = bouwer_rice_shape(well_radius, screen_length, well_depth, saturated_thickness)
    return float(casing_radius**2 * shape / (2.0 * screen_length * time_lag))


def bouwer_rice_k(time: ArrayLike, head: ArrayLike, casing_radius: float, well_radius: float,
                  screen_length: float, well_depth: float, saturated_thickness: float) -> float:
    """Bouwer & Rice (1976; Bouwer 1989) conductivity (m/s) of a slug test.

    Parameters
    ----------
    time, head
        Times (s) and displacements from the static level (m).
    casing_radius
        rc, where the level moves, m.
    well_radius
        rw, radial distance to the undisturbed aquifer, m.
    screen_length
        Le, m.
    well_depth
        Lw, depth of the well bottom below the static level, m.
    saturated_thickness
        H, m (Lw = H is a fully penetrating well).
    """
    fit = fit_recovery(time, head)
    return bouwer_rice_k_from_lag(fit.time_lag, casing_radius, well_radius, screen_length, well_depth,
                                  saturated_thickness)


def falling_head_fit(time: ArrayLike, head: ArrayLike) -> RecoveryFit:
    """Log-linear fit of a falling head above the stage; two readings give the exact line.

    Raises
    ------
    InputError
        For a non-positive head, or a head that does not fall.
    """
    h = np.asarray(head, dtype=float)
    t = np.asarray(time, dtype=float)
    if np.any(~(h > 0)):
        raise InputError("permeameter heads above the stage must be > 0 m")
    if t.size != 2:
        return fit_recovery(t, h)
    order = np.argsort(t)
    t, h = t[order], h[order]
    if not (t[1] > t[0] and h[1] < h[0]):
        raise InputError("the head must fall between the two readings")
    slope = float(np.log(h[1] / h[0]) / (t[1] - t[0]))
    return RecoveryFit(slope, -1.0 / slope, np.nan, 2, True)


def permeameter_kv_from_lag(time_lag: float, diameter: float, sediment_length: float,
                            anisotropy: float = 1.0) -> float:
    """Vertical conductivity of a falling-head standpipe in the bed from the time lag:
    Kv = (pi D / (11 m) + Lv) / T0 (Chen 2000, after Hvorslev 1951)."""
    _check_geometry(time_lag=time_lag, diameter=diameter, sediment_length=sediment_length,
                    anisotropy=anisotropy)
    return float((np.pi * diameter / (11.0 * anisotropy) + sediment_length) / time_lag)


def permeameter_kv(time: ArrayLike, head: ArrayLike, diameter: float, sediment_length: float,
                   anisotropy: float = 1.0) -> float:
    """Vertical conductivity (m/s) from an in-bed falling-head standpipe permeameter.

    Kv = (pi D / (11 m) + Lv) ln(h1/h2) / (t2 - t1) (Chen 2000, after Hvorslev 1951); with more
    than two readings ln(h1/h2)/(t2 - t1) is the slope of a log-linear fit.

    Parameters
    ----------
    time
        Times since the start, s.
    head
        Water height in the pipe above the stream stage, m (> 0).
    diameter
        Inner diameter D of the pipe, m.
    sediment_length
        Length Lv of the sediment column in the pipe, m.
    anisotropy
        m = sqrt(Kh/Kv).
    """
    lag = falling_head_fit(time, head).time_lag
    return permeameter_kv_from_lag(lag, diameter, sediment_length, anisotropy)
