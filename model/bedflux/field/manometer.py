"""Manometers on mini-piezometers: head difference, vertical hydraulic gradient, their uncertainty.

An inverted U-tube joins a piezometer leg and a stream leg; the bend holds air or a light oil
of density rho_f. The interfaces stand higher in the leg with the higher head, and
dh = reading (rho_w - rho_f) / rho_w (hydrostatics). The gradient is positive upward.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from bedflux.errors import InputError
from bedflux.field.flags import Flags
from bedflux.field.sheet_specs import WATER_DENSITY
from bedflux.field.sheets import Rejected, Sheet, reject_duplicates, reject_where
from bedflux.field.sites import Sites
from bedflux.field.stats import repeat_statistics

#: Standard uncertainty of a reading with resolution d: d / sqrt(12) (uniform over +/- d/2;
#: JCGM 100:2008, the GUM, F.2.2.1).
_UNIFORM = 1.0 / np.sqrt(12.0)
#: Standard uncertainty of the depth of a driven mini-piezometer's opening below the bed: about
#: a centimetre, the unevenness of a sand bed around the pipe (common practice). It is the
#: between-piezometer term: two piezometers driven to the same nominal depth sample heads a
#: centimetre or so apart along the gradient.
DEPTH_SIGMA = 0.01


def amplification(fluid_density: ArrayLike, water_density: ArrayLike = WATER_DENSITY) -> np.ndarray:
    """Manometer amplification: reading per unit head difference, rho_w / (rho_w - rho_f)."""
    rf = np.asarray(fluid_density, dtype=float)
    rw = np.asarray(water_density, dtype=float)
    if np.any(~(rf >= 0)) or np.any(~(rf < rw)):
        raise InputError("the manometer fluid must be lighter than water: 0 <= fluid_density < water_density")
    return rw / (rw - rf)


def manometer_head_difference(
    reading: ArrayLike, fluid_density: ArrayLike, water_density: ArrayLike = WATER_DENSITY
) -> np.ndarray:
    """Head difference (m of water) from an inverted U-tube reading.

    Parameters
    ----------
    reading
        Interface level in the piezometer leg minus that in the stream leg, m.
    fluid_density
        Density of the air or light oil in the bend, kg/m^3 (below ``water_density``).
    water_density
        Density of the water, kg/m^3.

    Returns
    -------
    numpy.ndarray
        Piezometer head minus stream stage, m: reading (rho_w - rho_f) / rho_w.
    """
    return np.asarray(reading, dtype=float) / amplification(fluid_density, water_density)


def vertical_gradient(head_difference: ArrayLike, depth: ArrayLike) -> np.ndarray:
    """Vertical hydraulic gradient, positive upward: (piezometer head - stage) / opening depth.

    Parameters
    ----------
    head_difference
        Piezometer head minus stream stage, m.
    depth
        Depth of the piezometer opening below the bed, m (> 0).
    """
    d = np.asarray(depth, dtype=float)
    if np.any(~(d > 0)):
        raise InputError("depth of the piezometer opening must be > 0 m")
    return np.asarray(head_difference, dtype=float) / d


def head_resolution(reading_resolution: ArrayLike, fluid_density: ArrayLike,
                    water_density: ArrayLike = WATER_DENSITY) -> np.ndarray:
    """Head resolved by a reading of the given resolution: resolution / amplification (m)."""
    return np.asarray(reading_resolution, dtype=float) / amplification(fluid_density, water_density)


def gradient_sigma(reading_resolution: ArrayLike, depth: ArrayLike, fluid_density: ArrayLike,
                   water_density: ArrayLike = WATER_DENSITY) -> np.ndarray:
    """Standard uncertainty of one gradient reading from the reading resolution.

    The head resolution (reading resolution / amplification) is taken as uniform over +/- half
    of it, so sigma_h = resolution_h / sqrt(12), and sigma_vhg = sigma_h / depth.
    """
    return vertical_gradient(head_resolution(reading_resolution, fluid_density, water_density) * _UNIFORM, depth)


@dataclass
class ManometerResult:
    """Per reading and per piezometer (site and opening depth) tables (SI)."""

    readings: pd.DataFrame
    piezometers: pd.DataFrame


def reduce_manometer(sheet: Sheet, sites: Sites, rejected: Rejected, flags: Flags,
                     velocity_head: dict[str, float]) -> ManometerResult:
    """Head differences and gradients per reading; repeat statistics per piezometer.

    Parameters
    ----------
    sheet
        A read manometer sheet (unknown sites already rejected).
    sites
        The campaign's sites.
    rejected, flags
        Collect rejected rows and raised flags.
    velocity_head
        Mean velocity head per site (m); a head difference within it is flagged, because flow
        over the bed lowers the pressure the stream leg sees.
    """
    sheet = reject_duplicates(sheet, ("site", "depth", "time"), rejected)
    n = sheet.numbers
    heavy = ~(n["fluid_density"] < n["water_density"])
    sheet = reject_where(sheet, heavy, "fluid_density",
                         "the fluid in an inverted U-tube must be lighter than the water", rejected, "below_limit")
    n = sheet.numbers
    dh = manometer_head_difference(n["reading"], n["fluid_density"], n["water_density"])
    vhg = vertical_gradient(dh, n["depth"])
    sig_h = head_resolution(n["resolution"], n["fluid_density"], n["water_density"]) * _UNIFORM
    readings = pd.DataFrame(
        {
            "line": sheet.line,
            "site": sheet.texts["site"],
            "time [s]": n["time"],
            "depth [m]": n["depth"],
            "amplification [1]": amplification(n["fluid_density"], n["water_density"]),
            "head_difference [m]": dh,
            "head_sigma [m]": sig_h,
            "vhg [1]": vhg,
            "vhg_sigma [1]": sig_h / n["depth"],
            "head [m]": n["stage"] + dh,
        }
    )
    rows = []
    for (site_id, depth), g in readings.groupby(["site", "depth [m]"], sort=True):
        s_v = repeat_statistics(g["vhg [1]"].to_numpy())
        s_h = repeat_statistics(g["head [m]"].to_numpy())
        res_v = float(g["vhg_sigma [1]"].max())
        res_h = float(g["head_sigma [m]"].max())
        within_v = np.hypot(s_v.stderr, res_v) if s_v.n >= 2 else res_v
        within_h = np.hypot(s_h.stderr, res_h) if s_h.n >= 2 else res_h
        between_h = abs(s_v.mean) * DEPTH_SIGMA
        sig_v = np.hypot(within_v, between_h / depth)
        sig_h = np.hypot(within_h, between_h)
        dh_mean = float(g["head_difference [m]"].mean())
        item = f"{site_id} at {depth:g} m"
        flag = []
        if abs(s_v.mean) < 2 * within_v:
            flag.append("within_resolution")
            flags.add("piezometers", item, "within_resolution",
                      f"|vhg| {abs(s_v.mean):.3g} < 2 sigma ({2 * within_v:.3g}); the sign is not resolved")
        vh = velocity_head.get(site_id)
        if vh is not None and abs(dh_mean) < vh:
            flag.append("velocity_head")
            flags.add("piezometers", item, "velocity_head",
                      f"|head difference| {abs(dh_mean):.3g} m < velocity head {vh:.3g} m at the site; "
                      "flow over the bed can reverse the apparent gradient (Sickbert & Peterson 2014)")
        i = sites.index(site_id)
        rows.append(
            {
                "site": site_id,
                "x [m]": sites.x[i],
                "y [m]": sites.y[i],
                "depth [m]": depth,
                "opening_elevation [m]": sites.bed_elevation[i] - depth,
                "time [s]": float(g["time [s]"].mean()),
                "n": s_v.n,
                "head_difference [m]": dh_mean,
                "vhg [1]": s_v.mean,
                "vhg_std [1]": s_v.std,
                "vhg_within_sigma [1]": within_v,
                "vhg_between_sigma [1]": between_h / depth,
                "vhg_sigma [1]": sig_v,
                "head [m]": s_h.mean,
                "head_within_sigma [m]": within_h,
                "head_between_sigma [m]": between_h,
                "head_sigma [m]": sig_h,
                "flags": " ".join(flag),
            }
        )
    return ManometerResult(readings, pd.DataFrame(rows))
