"""Seepage meters: bag volume (or mass) change over pan area and time, meter statistics, transects.

Sign: a positive flux is upward, groundwater discharging into the stream (the bag gained water);
a bag that lost water shows recharge (negative flux).
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
from bedflux.field.stats import BetweenTerm, robust_outliers, repeat_statistics

#: Net bag change below which a reading sits near the detection floor (Cable et al. 1997), m^3.
DETECTION_VOLUME = 150e-6
#: Bag fill fractions outside which meter efficiency is unreliable (Rosenberry et al. 2020).
FILL_LOW, FILL_HIGH = 0.20, 0.65
#: Repeat scatter above which a meter is flagged (common practice).
CV_LIMIT = 0.30
#: Relative error given to a meter read once: replicate meters agree within about 20 %
#: relative RMS error (Belanger & Montgomery 1992).
SINGLE_READING_RELATIVE_ERROR = 0.20
#: Between-meter scatter (relative) used when a campaign cannot estimate its own: about 30 %
#: (common practice; the figure of CV_LIMIT).
DEFAULT_BETWEEN_METER = 0.30
#: Degrees of freedom (meters minus transects) needed to estimate the between-meter scatter
#: from the campaign itself.
MIN_BETWEEN_DOF = 4
#: Meter flags that keep a meter out of the between-meter estimate and, by default, out of the
#: observations: its value does not stand for the bed flux the section model can represent.
EXCLUDING_FLAGS = ("robust_outlier", "repeat_scatter")


def _positive(name: str, value: np.ndarray) -> None:
    bad = ~(value > 0)
    if np.any(bad):
        raise InputError(f"{name} must be > 0; got {value[bad].ravel()[0]!r}")


def seepage_flux(
    volume_change: ArrayLike, duration: ArrayLike, area: ArrayLike, efficiency: ArrayLike = 1.0
) -> np.ndarray:
    """Bed flux from a seepage meter: q = dV / (A dt) / efficiency.

    Parameters
    ----------
    volume_change
        Water gained by the bag, m^3 (negative when the bag lost water).
    duration
        Bag attachment time, s (> 0).
    area
        Bed area covered by the pan, m^2 (> 0).
    efficiency
        Fraction of the true flux the meter captures (> 0); 1 returns the metered flux.

    Returns
    -------
    numpy.ndarray
        Flux in m/s, positive upward (discharge into the stream).
    """
    dv = np.asarray(volume_change, dtype=float)
    dt = np.asarray(duration, dtype=float)
    a = np.asarray(area, dtype=float)
    e = np.asarray(efficiency, dtype=float)
    _positive("duration", dt)
    _positive("area", a)
    _positive("efficiency", e)
    return dv / (a * dt) / e


def volume_from_mass(mass: ArrayLike, water_density: ArrayLike = WATER_DENSITY) -> np.ndarray:
    """Volume of water (m^3) of a mass (kg) at the given density (kg/m^3)."""
    rho = np.asarray(water_density, dtype=float)
    _positive("water_density", rho)
    return np.asarray(mass, dtype=float) / rho


def pan_area(diameter: ArrayLike) -> np.ndarray:
    """Bed area covered by a round pan of the given inner diameter: pi D^2 / 4 (m^2)."""
    d = np.asarray(diameter, dtype=float)
    _positive("pan diameter", d)
    return np.pi * d**2 / 4.0


def detection_flux(duration: ArrayLike, area: ArrayLike, efficiency: ArrayLike = 1.0) -> np.ndarray:
    """Smallest flux a reading resolves: 150 mL net bag change (Cable et al. 1997) over A dt."""
    return seepage_flux(DETECTION_VOLUME, duration, area, efficiency)


def between_meter_scatter(means: ArrayLike, within_sigma: ArrayLike, transect: ArrayLike,
                          minimum_dof: int = MIN_BETWEEN_DOF,
                          default: float = DEFAULT_BETWEEN_METER) -> BetweenTerm:
    """Estimate the relative between-meter scatter from the meters of each transect.

    Meters of one transect stand at one distance along the reach, where a section model has one
    bed flux; their means scatter by their own (within-meter) error and by the between-meter
    term. The method-of-moments estimate of a one-way random-effects model (as DerSimonian &
    Laird 1986) gives tau^2 = sum((q - qbar)/qbar)^2 / (n - T) - mean((s/qbar)^2), clipped at 0,
    summed over the transects with at least two meters of one sign.

    Parameters
    ----------
    means, within_sigma
        Meter means and their within-meter standard errors, m/s.
    transect
        Transect label of each meter ("" for none; such meters are not used).
    minimum_dof, default
        With fewer degrees of freedom than ``minimum_dof`` the ``default`` is returned.
    """
    q = np.asarray(means, dtype=float)
    s = np.asarray(within_sigma, dtype=float)
    label = np.asarray(transect).astype(str)
    squares, rel_var, dof = 0.0, [], 0
    for t in np.unique(label[label != ""]):
        g = (label == t) & np.isfinite(q) & np.isfinite(s)
        if g.sum() < 2:
            continue
        qbar = q[g].mean()
        if not (np.all(q[g] > 0) or np.all(q[g] < 0)):
            continue  # a transect of mixed sign has no relative scatter
        squares += float(np.sum(((q[g] - qbar) / qbar) ** 2))
        rel_var += list((s[g] / qbar) ** 2)
        dof += int(g.sum()) - 1
    if dof < minimum_dof:
        return BetweenTerm(default, "default", dof)
    tau2 = max(squares / dof - float(np.mean(rel_var)), 0.0)
    return BetweenTerm(float(np.sqrt(tau2)), "estimated", dof)


@dataclass
class SeepageResult:
    """Reduced seepage sheet: per reading, per meter and per transect tables (SI), and the
    between-meter term used in every meter's sigma."""

    readings: pd.DataFrame
    meters: pd.DataFrame
    transects: pd.DataFrame
    between: BetweenTerm


def _volumes(sheet: Sheet, rejected: Rejected) -> tuple[Sheet, np.ndarray, np.ndarray]:
    vol = sheet.has("volume_start") or sheet.has("volume_end")
    mass = sheet.has("mass_start") or sheet.has("mass_end")
    pair = ("volume_start", "volume_end") if vol else ("mass_start", "mass_end")
    if vol == mass or not all(sheet.has(c) for c in pair):
        raise InputError(
            "give the bag contents either as volume_start and volume_end or as mass_start and "
            "mass_end (with water_density); not a mix and not neither",
            sheet.source,
        )
    for c in pair:
        empty = ~np.isfinite(sheet.numbers[c])
        sheet = reject_where(sheet, empty, c, f"empty cell; '{c}' is required", rejected, "empty")
    start, end = (sheet.numbers[c] for c in pair)
    if mass:
        rho = sheet.numbers["water_density"]
        start, end = volume_from_mass(start, rho), volume_from_mass(end, rho)
    return sheet, start, end


def reduce_seepage(sheet: Sheet, sites: Sites, rejected: Rejected, flags: Flags) -> SeepageResult:
    """Fluxes per reading, repeat statistics per meter, profiles and robust outliers per transect.

    Parameters
    ----------
    sheet
        A read seepage sheet (unknown sites already rejected).
    sites
        The campaign's sites.
    rejected, flags
        Collect rejected rows and raised flags.
    """
    sheet = reject_duplicates(sheet, ("site", "time"), rejected)
    sheet, v_start, v_end = _volumes(sheet, rejected)
    pan = "pan_diameter" if sheet.has("pan_diameter") else "pan_area"
    empty = ~np.isfinite(sheet.numbers[pan])
    keep = ~empty
    sheet = reject_where(sheet, empty, pan, f"empty cell; '{pan}' is required", rejected, "empty")
    v_start, v_end = v_start[keep], v_end[keep]
    over = np.asarray(sheet.numbers["efficiency"], dtype=float) > 1.0
    if over.any():
        sheet = reject_where(sheet, over, "efficiency", "efficiency is the fraction of the true flux the meter "
                             "captures (0 to 1): write 0.77, not 77", rejected, "percent")
        v_start, v_end = v_start[~over], v_end[~over]
    n = sheet.numbers
    area = pan_area(n[pan]) if pan == "pan_diameter" else n[pan]
    dv = v_end - v_start
    q = seepage_flux(dv, n["duration"], area, n["efficiency"])
    res = n["volume_resolution"] / np.sqrt(6.0) / (area * n["duration"] * n["efficiency"])
    fill = v_end / n["bag_capacity"]
    site = sheet.texts["site"]
    readings = pd.DataFrame(
        {
            "line": sheet.line,
            "site": site,
            "time [s]": n["time"],
            "duration [s]": n["duration"],
            "volume_change [m^3]": dv,
            "pan_area [m^2]": area,
            "efficiency [1]": n["efficiency"],
            "metered_flux [m/s]": dv / (area * n["duration"]),
            "flux [m/s]": q,
            "resolution_sigma [m/s]": res,
            "fill_fraction [1]": fill,
        }
    )
    low = np.abs(dv) < DETECTION_VOLUME
    for k in np.flatnonzero(low):
        flags.add("seepage_readings", f"{site[k]} line {sheet.line[k]}", "near_detection_floor",
                  f"net bag change {dv[k] * 1e6:.0f} mL < 150 mL (Cable et al. 1997)")
    bad_fill = np.isfinite(fill) & ((fill > FILL_HIGH) | (fill < FILL_LOW))
    for k in np.flatnonzero(bad_fill):
        flags.add("seepage_readings", f"{site[k]} line {sheet.line[k]}", "bag_fill",
                  f"bag {100 * fill[k]:.0f} % full at removal, outside {100 * FILL_LOW:.0f}-"
                  f"{100 * FILL_HIGH:.0f} % (Rosenberry et al. 2020)")
    readings["flags"] = np.where(low, "near_detection_floor", "")
    readings.loc[bad_fill, "flags"] = (readings.loc[bad_fill, "flags"] + " bag_fill").str.strip()
    meters = _meters(readings, sites, flags)
    transects = _transects(meters, flags)
    return SeepageResult(readings, meters, transects, _add_between(meters))


def flagged_meters(meters: pd.DataFrame) -> np.ndarray:
    """Which meters carry a flag of :data:`EXCLUDING_FLAGS`."""
    if meters.empty:
        return np.zeros(0, dtype=bool)
    return meters["flags"].str.split().map(lambda f: any(x in EXCLUDING_FLAGS for x in f)).to_numpy(bool)


def _add_between(meters: pd.DataFrame) -> BetweenTerm:
    """Estimate the between-meter term from the unflagged meters and fold it into every sigma.

    The term is relative, with a floor at the meter's detection flux (Cable et al. 1997): a
    meter cannot tell fluxes apart below it.
    """
    if meters.empty:
        return BetweenTerm(DEFAULT_BETWEEN_METER, "default", 0)
    clean = ~flagged_meters(meters)
    between = between_meter_scatter(meters.loc[clean, "mean [m/s]"], meters.loc[clean, "within_sigma [m/s]"],
                                    meters.loc[clean, "transect"])
    scale = np.maximum(meters["mean [m/s]"].abs(), meters["detection_flux [m/s]"])
    meters["between_sigma [m/s]"] = between.value * scale
    meters["sigma [m/s]"] = np.hypot(meters["within_sigma [m/s]"], meters["between_sigma [m/s]"])
    return between


def _meters(readings: pd.DataFrame, sites: Sites, flags: Flags) -> pd.DataFrame:
    rows = []
    for site_id, g in readings.groupby("site", sort=True):
        s = repeat_statistics(g["flux [m/s]"].to_numpy())
        res2 = float(np.mean(g["resolution_sigma [m/s]"].to_numpy() ** 2))
        if s.n >= 2:
            within = np.sqrt(s.stderr**2 + res2 / s.n)
        else:
            within = np.sqrt((SINGLE_READING_RELATIVE_ERROR * s.mean) ** 2 + res2)
        floor = float(np.mean(detection_flux(g["duration [s]"].to_numpy(), g["pan_area [m^2]"].to_numpy(),
                                             g["efficiency [1]"].to_numpy())))
        mid = float(np.mean(g["time [s]"] + g["duration [s]"] / 2))
        flag = ""
        if s.n >= 2 and not (s.cv <= CV_LIMIT):
            flag = "repeat_scatter"
            flags.add("seepage_meters", site_id, flag,
                      f"coefficient of variation {s.cv:.2f} > {CV_LIMIT:.2f} over {s.n} readings")
        i = sites.index(site_id)
        rows.append(
            {
                "site": site_id,
                "x [m]": sites.x[i],
                "y [m]": sites.y[i],
                "bed_elevation [m]": sites.bed_elevation[i],
                "transect": sites.transect[i],
                "station": sites.station[i],
                "time [s]": mid,
                **s.columns("m/s"),
                "within_sigma [m/s]": within,
                "detection_flux [m/s]": floor,
                "between_sigma [m/s]": np.nan,
                "sigma [m/s]": within,
                "flags": flag,
            }
        )
    return pd.DataFrame(rows)


def _transects(meters: pd.DataFrame, flags: Flags) -> pd.DataFrame:
    meters["robust_outlier"] = False
    if meters.empty or "transect" not in meters:
        # every reading was rejected: the run's trust check reports the sheet
        return pd.DataFrame(columns=["transect", "meters", "outliers", "n", "mean [m/s]", "std [m/s]"])
    rows = []
    for label, g in meters[meters["transect"] != ""].groupby("transect", sort=True):
        g = g.sort_values("y [m]")
        out = robust_outliers(g["mean [m/s]"].to_numpy())
        meters.loc[g.index[out], "robust_outlier"] = True
        for site_id in g["site"].to_numpy()[out]:
            flags.add("seepage_meters", site_id, "robust_outlier",
                      f"|modified z| > 3.5 among the meters of transect {label} (Iglewicz & Hoaglin 1993)")
        s = repeat_statistics(g["mean [m/s]"].to_numpy()[~out])
        rows.append(
            {
                "transect": label,
                "meters": len(g),
                "outliers": int(out.sum()),
                **s.columns("m/s"),
                "x [m]": float(g["x [m]"].mean()),
            }
        )
    meters["flags"] = np.where(
        meters["robust_outlier"], (meters["flags"] + " robust_outlier").str.strip(), meters["flags"]
    )
    return pd.DataFrame(
        rows,
        columns=["transect", "meters", "outliers", "n", "mean [m/s]", "std [m/s]", "cv [1]",
                 "stderr [m/s]", "ci95_low [m/s]", "ci95_high [m/s]", "x [m]"],
    )
