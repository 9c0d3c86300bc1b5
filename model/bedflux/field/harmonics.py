"""The daily harmonic of a temperature record in moving windows, by least squares.

In each window the record is fitted by ``m0 + m1 t + c cos(w t) + s sin(w t)``: a mean, a linear
drift (a flood or a weather change shifts the mean over a day) and the harmonic of the period.
The amplitude is ``sqrt(c^2 + s^2)`` and the phase ``atan2(s, c)`` (the wave is
``A cos(w t - phase)``), with their covariance from the fit.

Why least squares rather than a band-pass filter: it takes uneven sampling and gaps as they are,
needs no run-in at the ends of a record, keeps each window independent of its neighbours (so
the windows' fluxes are independent observations), and gives the standard errors of amplitude
and phase directly from the residuals. A filter needs even sampling and smears a change of flux
over its impulse response.

All windows are fitted at once: the normal equations of a window are differences of running
sums of the products of the regressors, so there is no loop over windows.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: A window needs at least this many readings per period to fit the harmonic (project rule:
#: well above the Nyquist limit of 2, so that the four coefficients are overdetermined).
MIN_READINGS_PER_PERIOD = 8
#: ... and no stretch without readings longer than 1 - MIN_COVERAGE of the window (at its ends included).
MIN_COVERAGE = 0.75


@dataclass(frozen=True)
class Harmonics:
    """The harmonic of each window (arrays over windows).

    ``amplitude`` and ``phase`` (rad) with their standard errors; ``cov`` the (n, 2, 2)
    covariance of the cosine and sine coefficients ``c, s``; ``readings`` per window and
    ``complete`` whether the window has enough readings spread over it.
    """

    centre: np.ndarray
    c: np.ndarray
    s: np.ndarray
    cov: np.ndarray
    readings: np.ndarray
    complete: np.ndarray
    residual_sd: np.ndarray

    @property
    def amplitude(self) -> np.ndarray:
        """Amplitude sqrt(c^2 + s^2) (degC)."""
        return np.hypot(self.c, self.s)

    @property
    def phase(self) -> np.ndarray:
        """Phase atan2(s, c) (rad)."""
        return np.arctan2(self.s, self.c)


def window_centres(time: np.ndarray, window: float, step: float) -> np.ndarray:
    """Centres of the windows of length ``window`` stepping by ``step`` from the first reading; the
    last window may run past the last reading by up to ``1 - MIN_COVERAGE`` of its length (a
    record read every hour for 20 days ends an hour short of day 20 and still has 20 windows)."""
    t0, t1 = float(np.min(time)), float(np.max(time))
    if t1 - t0 < window * MIN_COVERAGE:
        return np.empty(0)
    n = int(np.floor((t1 - t0 - MIN_COVERAGE * window) / step + 1e-9)) + 1
    return t0 + window / 2.0 + step * np.arange(max(n, 1))


def _gapped(t: np.ndarray, centres: np.ndarray, window: float, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Windows with a stretch longer than ``(1 - MIN_COVERAGE) window`` without readings."""
    longest = (1.0 - MIN_COVERAGE) * window
    if t.size == 0:
        return np.ones(centres.size, dtype=bool)
    big = np.flatnonzero(np.diff(t) > longest)
    inside = np.searchsorted(big, hi - 1) - np.searchsorted(big, lo) > 0
    first = t[np.minimum(lo, t.size - 1)] - (centres - window / 2.0)
    last = (centres + window / 2.0) - t[np.maximum(hi - 1, 0)]
    return inside | (first > longest) | (last > longest) | (hi <= lo)


def fit_windows(time: np.ndarray, temperature: np.ndarray, centres: np.ndarray, window: float,
                period: float, accuracy: float = 0.0) -> Harmonics:
    """Fit the harmonic of ``period`` in every window ``[centre - window/2, centre + window/2)``.

    Parameters
    ----------
    time, temperature
        The record (s, degC); NaN readings are dropped. Times need not be even.
    centres, window, period
        Window centres and length (s), and the period of the harmonic (s).
    accuracy
        Sensor accuracy (degC, a +/- bound). The standard deviation of a reading's error is taken
        as the larger of the fit residuals' and accuracy/sqrt(3) (a uniform error within +/- the
        accuracy, GUM JCGM 100:2008 F.2.2.1), so a record smoother than its sensor's stated
        accuracy is not trusted beyond it.
    """
    keep = np.isfinite(time) & np.isfinite(temperature)
    order = np.argsort(time[keep], kind="stable")
    t = time[keep][order]
    y = temperature[keep][order]
    y = y - (y.mean() if y.size else 0.0)
    w = 2.0 * np.pi / period
    tau = (t - (t[0] if t.size else 0.0)) / period
    C, S = np.cos(w * t), np.sin(w * t)
    X = np.stack([np.ones_like(t), tau, C, S])
    products = np.concatenate([(X[:, None, :] * X[None, :, :]).reshape(16, -1), X * y, (y * y)[None, :]])
    run = np.concatenate([np.zeros((products.shape[0], 1)), np.cumsum(products, axis=1)], axis=1)
    lo = np.searchsorted(t, centres - window / 2.0, side="left")
    hi = np.searchsorted(t, centres + window / 2.0, side="left")
    sums = run[:, hi] - run[:, lo]
    XtX = sums[:16].T.reshape(-1, 4, 4)
    Xty = sums[16:20].T
    yty = sums[20]
    n = hi - lo
    complete = (n >= MIN_READINGS_PER_PERIOD * window / period) & (n > 4) & ~_gapped(t, centres, window, lo, hi)
    eye = np.broadcast_to(np.eye(4), XtX.shape)
    XtX = np.where(complete[:, None, None], XtX, eye)
    beta = np.linalg.solve(XtX, np.where(complete[:, None], Xty, 0.0)[..., None])[..., 0]
    rss = np.maximum(yty - np.einsum("ij,ij->i", beta, Xty), 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        resid_var = np.where(complete, rss / np.maximum(n - 4, 1), np.nan)
    var = np.maximum(resid_var, accuracy ** 2 / 3.0)
    inv = np.linalg.inv(XtX)
    cov = inv[:, 2:, 2:] * var[:, None, None]
    nan = np.where(complete, 1.0, np.nan)
    return Harmonics(centres, beta[:, 2] * nan, beta[:, 3] * nan, cov * nan[:, None, None], n, complete,
                     np.sqrt(resid_var))
