"""A map of bed flux from the meters by ordinary kriging, and the reach-total discharge.

The variogram is fitted by pykrige to the meter means (spherical model, least squares on the
experimental variogram). The reach total integrates the kriged flux over the rectangle that the
meters span; its standard error is the ordinary block-kriging standard deviation of the
rectangle's mean flux under the same variogram.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from pykrige.ok import OrdinaryKriging

#: Fewest meters for which a variogram is fitted and a map drawn.
MIN_METERS = 5
#: Variogram model fitted to the meter fluxes.
VARIOGRAM_MODEL = "spherical"
#: Normal quantile of the 95 % interval of the reach total.
_Z95 = 1.959963984540054


@dataclass(frozen=True)
class BedMap:
    """Kriged bed flux on a grid and the reach total.

    Attributes
    ----------
    x, y
        Grid node coordinates, m (1D).
    flux, variance
        Kriged flux (m/s) and kriging variance ((m/s)^2), shape (len(y), len(x)).
    area
        Area of the mapped rectangle, m^2.
    mean_flux, mean_sigma
        Block-kriged mean flux over the rectangle and its standard deviation, m/s.
    variogram
        Model name and fitted parameters in (m/s)^2 and m.
    """

    x: np.ndarray
    y: np.ndarray
    flux: np.ndarray
    variance: np.ndarray
    area: float
    mean_flux: float
    mean_sigma: float
    variogram: dict

    @property
    def total(self) -> float:
        """Reach-total discharge through the mapped bed, m^3/s (positive when the reach gains)."""
        return self.mean_flux * self.area

    @property
    def total_interval(self) -> tuple[float, float]:
        """95 % interval of the reach total (normal, from the block-kriging variance), m^3/s."""
        half = _Z95 * self.mean_sigma * self.area
        return self.total - half, self.total + half


def krige_bed_flux(x: ArrayLike, y: ArrayLike, flux: ArrayLike, nx: int = 50, ny: int = 20) -> BedMap:
    """Ordinary kriging of meter fluxes over the rectangle the meters span.

    Parameters
    ----------
    x, y
        Meter positions along and across the reach, m.
    flux
        Meter mean fluxes, m/s (positive upward).
    nx, ny
        Grid nodes along and across.

    Returns
    -------
    BedMap

    Raises
    ------
    ValueError
        For fewer than :data:`MIN_METERS` meters, meters that do not span an area, or fluxes
        that are all equal (no variogram to fit). Callers report the map as not drawn.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    q = np.asarray(flux, dtype=float)
    if q.size < MIN_METERS:
        raise ValueError(f"{q.size} meters; a map needs at least {MIN_METERS}")
    if np.ptp(x) == 0 or np.ptp(y) == 0:
        raise ValueError("the meters lie on one line; they span no area to map")
    scale = float(np.std(q))
    if scale == 0:
        raise ValueError("all meter fluxes are equal; no variogram can be fitted")
    ok = OrdinaryKriging(x, y, q / scale, variogram_model=VARIOGRAM_MODEL, nlags=6)
    params = np.asarray(ok.variogram_model_parameters, dtype=float)
    if not np.all(np.isfinite(params)) or params[0] <= 0 or params[1] <= 0:
        raise ValueError(f"the variogram fit failed (parameters {params.tolist()})")
    gx = np.linspace(x.min(), x.max(), nx)
    gy = np.linspace(y.min(), y.max(), ny)
    est, var = ok.execute("grid", gx, gy)
    gamma = _variogram(ok)
    mean, sigma = _block_mean(x, y, q / scale, gx, gy, gamma)
    return BedMap(
        gx, gy, np.asarray(est) * scale, np.asarray(var) * scale**2,
        float(np.ptp(x) * np.ptp(y)), mean * scale, sigma * scale,
        {"model": VARIOGRAM_MODEL, "sill [(m/s)^2]": float(params[0] * scale**2),
         "range [m]": float(params[1]), "nugget [(m/s)^2]": float(params[2] * scale**2)},
    )


def _variogram(ok: OrdinaryKriging):
    params = ok.variogram_model_parameters
    func = ok.variogram_function

    def gamma(h: np.ndarray) -> np.ndarray:
        return np.where(h > 0, func(params, h), 0.0)

    return gamma


def _block_mean(x: np.ndarray, y: np.ndarray, q: np.ndarray, gx: np.ndarray, gy: np.ndarray,
                gamma) -> tuple[float, float]:
    """Ordinary block kriging of the rectangle's mean (the block discretised by the grid nodes)."""
    bx, by = (a.ravel() for a in np.meshgrid(gx, gy))
    n = q.size
    d = np.hypot(x[:, None] - x[None, :], y[:, None] - y[None, :])
    lhs = np.ones((n + 1, n + 1))
    lhs[:n, :n] = gamma(d)
    lhs[n, n] = 0.0
    point_block = gamma(np.hypot(x[:, None] - bx[None, :], y[:, None] - by[None, :])).mean(axis=1)
    rhs = np.append(point_block, 1.0)
    sol = np.linalg.solve(lhs, rhs)
    lam, mu = sol[:n], sol[n]
    block_block = gamma(np.hypot(bx[:, None] - bx[None, :], by[:, None] - by[None, :])).mean()
    variance = float(lam @ point_block + mu - block_block)
    return float(lam @ q), float(np.sqrt(max(variance, 0.0)))
