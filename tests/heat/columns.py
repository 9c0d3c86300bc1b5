"""Scenarios of a 1D streambed column with [heat], and the analytic solutions the checks use.

Stallman (1965) periodic solution in the forms of Hatch et al. (2006) (references.md section 9):
with depth z positive downward, Darcy flux q positive downward, bulk volumetric heat capacity
rho c, bulk conductivity lambda, thermal front velocity v = q rho_w c_w / (rho c) and effective
diffusivity kappa = lambda / (rho c) (no dispersion),

    T(z, t) = T_mean + A exp(-a z) cos(omega t - b z)
    a = (sqrt((alpha + v^2) / 2) - v) / (2 kappa),  b = sqrt((alpha - v^2) / 2) / (2 kappa)
    alpha = sqrt(v^4 + (8 pi kappa / P)^2)

so the amplitude ratio between depths z1 < z2 is exp(-a dz) and the phase lag b dz P / (2 pi).
"""
from __future__ import annotations

import numpy as np

WATER = 4.18e6  # rho_w c_w (J m-3 K-1), references.md section 9


def stallman_ratio_lag(q_down: float, dz: float, conductivity: float, bulk: float, period: float = 86400.0):
    """Amplitude ratio and phase lag (s) between two depths ``dz`` apart (Stallman 1965; Hatch et al.
    2006 forms; ``q_down`` positive downward)."""
    kappa = conductivity / bulk
    v = q_down * WATER / bulk
    alpha = np.sqrt(v**4 + (8.0 * np.pi * kappa / period) ** 2)
    a = (np.sqrt((alpha + v**2) / 2.0) - v) / (2.0 * kappa)
    b = np.sqrt((alpha - v**2) / 2.0) / (2.0 * kappa)
    return np.exp(-a * dz), b * dz * period / (2.0 * np.pi)


def column(dz: float, depth: float, kv: float, head_difference: float, heat: dict, time: dict | None,
           porosity: float = 0.3, conductivity: float = 1.4, solid: float = 1.78e6, bottom: str | None = "head") -> dict:
    """A one-column section: ground at 0, stage 0.5 m, base at ``-depth`` held at stage +
    ``head_difference`` (upward flow when positive) or no-flow (``bottom=None``)."""
    d = {
        "title": "streambed column",
        "grid": {"x": [0.0, 1.0], "bottom": -depth, "dx": 1.0, "dz": dz},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "bed", "kh": kv, "kv": kv, "specific_storage": 1e-6, "porosity": porosity,
                  "thermal_conductivity": conductivity, "heat_capacity": solid}],
        "stream": {"stage": 0.5},
        "sides": {"bottom": {"head": 0.5 + head_difference}} if bottom == "head" else {},
        "heat": heat,
    }
    if time is not None:
        d["time"] = time
    return d


def harmonic(t: np.ndarray, values: np.ndarray, period: float) -> tuple[np.ndarray, np.ndarray]:
    """Amplitude and phase (rad) of the ``period`` harmonic of ``values`` (time along axis 0) by least
    squares on mean, cos and sin over whole periods."""
    w = 2.0 * np.pi / period
    X = np.column_stack([np.ones_like(t), np.cos(w * t), np.sin(w * t)])
    coef, *_ = np.linalg.lstsq(X, values, rcond=None)
    return np.hypot(coef[1], coef[2]), np.arctan2(coef[2], coef[1])
