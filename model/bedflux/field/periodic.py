"""The periodic temperature wave in a bed with steady vertical flow, and its three inversions.

With depth z positive downward, a surface temperature T0 + A0 cos(w t) over a uniform bed with a
steady Darcy flux q (positive DOWNWARD here only) gives (Stallman 1965; in the form of Hatch et
al. 2006, Goto et al. 2005)

    T(z, t) = T0 + A0 exp(-a z) cos(w t - b z),

where ``v = q rho_w c_w / (rho c)`` is the velocity of the thermal front, ``k = lambda / (rho c)``
the thermal diffusivity, and ``gamma = a + i b`` solves ``k gamma^2 + v gamma - i w = 0``:

    k (a^2 - b^2) + v a = 0,        b (2 k a + v) = w.

Between two sensors ``dz`` apart the amplitude ratio is ``exp(-a dz)`` and the lag ``b dz / w``.

Inversions (all vectorised):

- amplitude ratio and k known -> v (Hatch et al. 2006; Keery et al. 2007 wrote it as a cubic):
  with ``u = a + v / k``, ``u (u + a)^2 = w^2 / (k^2 a)``, one positive root;
- phase lag and k known -> |v| = sqrt((dz/dt)^2 - (4 pi k dt / (P dz))^2) (Hatch et al. 2006);
  it gives the magnitude only;
- both, k unknown (McCallum et al. 2012; the same result as Luce et al. 2013):
  ``v = w (b^2 - a^2) / (b (a^2 + b^2))`` and ``k = w a / (b (a^2 + b^2))``.
"""
from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

#: Newton steps of the amplitude inversion never need more than this (quadratic convergence from
#: a start above the root; see :func:`velocity_from_amplitude`).
_NEWTON_STEPS = 60


def wavenumbers(velocity: ArrayLike, diffusivity: ArrayLike, period: float) -> tuple[np.ndarray, np.ndarray]:
    """Decay ``a`` (1/m) and phase ``b`` (rad/m) of the daily wave for a thermal front velocity.

    Parameters
    ----------
    velocity
        Thermal front velocity v (m/s), positive downward.
    diffusivity
        Thermal diffusivity k (m^2/s).
    period
        Period P of the surface wave (s).

    Returns
    -------
    a, b
        ``a = (sqrt((alpha + v^2)/2) - v) / (2 k)``, ``b = sqrt((alpha - v^2)/2) / (2 k)`` with
        ``alpha = sqrt(v^4 + (8 pi k / P)^2)`` (Hatch et al. 2006, eq. 3 and 6 written with v).
    """
    v = np.asarray(velocity, dtype=float)
    k = np.asarray(diffusivity, dtype=float)
    alpha = np.sqrt(v ** 4 + (8.0 * np.pi * k / period) ** 2)
    a = (np.sqrt((alpha + v * v) / 2.0) - v) / (2.0 * k)
    b = np.sqrt((alpha - v * v) / 2.0) / (2.0 * k)
    return a, b


def periodic_temperature(time: ArrayLike, depth: ArrayLike, velocity: float, diffusivity: float,
                         period: float = 86400.0, mean: float = 0.0, amplitude: float = 1.0,
                         phase: float = 0.0) -> np.ndarray:
    """Stallman's (1965) periodic solution: temperature (degC) at ``depth`` (m, down) and ``time`` (s).

    The surface is ``mean + amplitude cos(2 pi t / period - phase)``.
    """
    t = np.asarray(time, dtype=float)
    z = np.asarray(depth, dtype=float)
    a, b = wavenumbers(velocity, diffusivity, period)
    w = 2.0 * np.pi / period
    return mean + amplitude * np.exp(-a * z) * np.cos(w * t - phase - b * z)


def velocity_from_amplitude(ratio: ArrayLike, spacing: ArrayLike, diffusivity: ArrayLike,
                            period: float) -> np.ndarray:
    """Thermal front velocity (m/s, positive down) from the amplitude ratio deep/shallow.

    Solves ``u (u + a)^2 = c`` with ``a = -ln(ratio) / dz``, ``c = w^2 / (k^2 a)`` and
    ``v = k (u - a)`` (the amplitude equation of Hatch et al. 2006 rearranged; Keery et al. 2007
    solved the same cubic). On ``u > 0`` the left side rises monotonically and is convex, so
    Newton's method started at ``u0 = c^(1/3)`` (where the left side is >= c) descends onto the
    one positive root without overshoot; the iteration runs on whole arrays at once.

    Ratios at or above 1 (no damping) give NaN.
    """
    ar = np.asarray(ratio, dtype=float)
    dz = np.asarray(spacing, dtype=float)
    k = np.asarray(diffusivity, dtype=float)
    ar, dz, k = np.broadcast_arrays(ar, dz, k)
    with np.errstate(divide="ignore", invalid="ignore"):
        a = -np.log(ar) / dz
        ok = np.isfinite(a) & (a > 0) & (k > 0)
        a = np.where(ok, a, 1.0)
        kk = np.where(ok, k, 1.0)
        w = 2.0 * np.pi / period
        c = w * w / (kk * kk * a)
        u = np.cbrt(c)
        for _ in range(_NEWTON_STEPS):
            h = u * (u + a) ** 2 - c
            dh = (u + a) * (3.0 * u + a)
            step = h / dh
            u = u - step
            if np.all(np.abs(step) <= 1e-14 * np.abs(u)):
                break
        v = kk * (u - a)
    return np.where(ok, v, np.nan)


def velocity_from_phase(lag: ArrayLike, spacing: ArrayLike, diffusivity: ArrayLike,
                        period: float) -> np.ndarray:
    """Magnitude of the thermal front velocity (m/s) from the lag (s) of the deep wave.

    ``|v| = sqrt((dz/dt)^2 - (4 pi k dt / (P dz))^2)`` (Hatch et al. 2006, the phase equation
    solved for v). A lag <= 0, or a lag longer than pure conduction allows (the square root of
    a negative number: an assumed diffusivity too large, or noise about the no-flow lag), gives
    NaN: the lag cannot be read as a flux.
    """
    dt = np.asarray(lag, dtype=float)
    dz = np.asarray(spacing, dtype=float)
    k = np.asarray(diffusivity, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        v2 = (dz / dt) ** 2 - (4.0 * np.pi * k * dt / (period * dz)) ** 2
        return np.where((dt > 0) & (v2 >= 0), np.sqrt(np.maximum(v2, 0.0)), np.nan)


def velocity_and_diffusivity(ratio: ArrayLike, lag: ArrayLike, spacing: ArrayLike,
                             period: float) -> tuple[np.ndarray, np.ndarray]:
    """Thermal front velocity (m/s, positive down) and diffusivity (m^2/s) from both the amplitude
    ratio and the lag, with no assumed diffusivity (McCallum et al. 2012; Luce et al. 2013).

    With ``A = -ln(ratio)`` and ``B = w dt`` (the lag in radians):
    ``v = w dz (B^2 - A^2) / (B (A^2 + B^2))`` and ``k = w dz^2 A / (B (A^2 + B^2))``.
    """
    ar = np.asarray(ratio, dtype=float)
    dt = np.asarray(lag, dtype=float)
    dz = np.asarray(spacing, dtype=float)
    w = 2.0 * np.pi / period
    with np.errstate(divide="ignore", invalid="ignore"):
        A = -np.log(ar)
        B = w * dt
        ok = (A > 0) & (B > 0) & np.isfinite(A) & np.isfinite(B)
        s = A * A + B * B
        v = w * dz * (B * B - A * A) / (B * s)
        k = w * dz * dz * A / (B * s)
    return np.where(ok, v, np.nan), np.where(ok, k, np.nan)
