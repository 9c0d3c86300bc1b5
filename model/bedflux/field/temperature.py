"""The temperature sheet: sensor records at depths in the bed to vertical fluxes through time.

Each site holds a rod of sensors at two or more depths. Every pair of adjacent depths gives a
flux record (:func:`bedflux.field.thermal.flux_from_temperature`) at the pair's mid-depth, with
the bed's thermal properties from the sites sheet (per site: ``sediment`` for the published
defaults, or ``thermal_conductivity``, ``heat_capacity``, ``porosity``).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.field.flags import Flags
from bedflux.field.sheets import Rejected, Sheet, reject_duplicates, reject_where
from bedflux.field.sites import Sites
from bedflux.field.thermal import DEFAULT_ACCURACY, FLAGS, flux_from_temperature
from bedflux.field.thermal_properties import SEDIMENTS, BedThermal, user_properties

#: The method whose flux is the site's flux (the others are kept beside it): the amplitude ratio
#: is the most sensitive of the three and gives the direction (Hatch et al. 2006).
SHEET_METHOD = "amplitude"
#: Default sediment of a site whose row gives no thermal properties.
DEFAULT_SEDIMENT = "sand"


@dataclass
class TemperatureReduction:
    """Readings (SI; time in s since the origin), per-window fluxes per sensor pair, the bed
    properties used per site, and the date-time origin (None for elapsed times)."""

    readings: pd.DataFrame
    fluxes: pd.DataFrame
    properties: dict[str, dict]
    origin: str | None


def timed_readings(sheet: Sheet, rejected: Rejected) -> tuple[Sheet, str | None]:
    """The readings of a temperature or logger sheet with ``time`` in seconds since the origin,
    rows without a readable time and repeats of (site, depth, time) rejected and listed; and the
    date-time origin (None for elapsed times)."""
    if sheet.has("time"):
        missing = ~np.isfinite(sheet.numbers["time"])
        sheet = reject_where(sheet, missing, "time", "empty cell; 'time' is required (or use a 'datetime' column)",
                             rejected, "empty")
    sheet, seconds, origin = _reading_times(sheet, rejected)
    sheet.numbers["time"] = seconds
    sheet = reject_duplicates(sheet, ("site", "depth", "time"), rejected)
    return sheet, origin


def _reading_times(sheet: Sheet, rejected: Rejected) -> tuple[Sheet, np.ndarray, str | None]:
    """Seconds since the origin: the ``time`` column, or ``datetime`` since the first day's midnight."""
    if not sheet.has("datetime"):
        return sheet, sheet.numbers["time"], None
    parsed = pd.to_datetime(pd.Series(sheet.texts["datetime"]), errors="coerce", format="ISO8601")
    bad = parsed.isna().to_numpy()
    sheet = reject_where(sheet, bad, "datetime",
                         [f"'{c}' is not a date and time; write ISO 8601, e.g. 2026-07-01 14:00" if c else
                          "empty cell; 'datetime' is required (date and time of the reading)"
                          for c in sheet.texts["datetime"][bad]], rejected, "not_a_number")
    parsed = parsed[~bad]
    if parsed.empty:
        return sheet, np.empty(0), None
    if parsed.dt.tz is not None:
        parsed = parsed.dt.tz_convert("UTC").dt.tz_localize(None)
    origin = parsed.min().normalize()
    return sheet, ((parsed - origin).dt.total_seconds()).to_numpy(), origin.isoformat()


def site_properties(sites: Sites, site: str) -> BedThermal:
    """The bed thermal properties of ``site`` from the sites sheet.

    The site's own ``thermal_conductivity``, ``heat_capacity`` or ``porosity`` where given (with
    the +/- 15 % band of :func:`user_properties`), the defaults of its ``sediment`` (sand when
    none is named) for the rest.

    Raises
    ------
    InputError
        For a sediment word other than those of :data:`SEDIMENTS` at a site that does not give
        its conductivity and its heat capacity (or porosity).
    """
    i = sites.index(site)
    opt = sites.optional
    nan = np.full(len(sites.ids), np.nan)
    lam, rc, n = (float(opt.get(c, nan)[i]) for c in ("thermal_conductivity", "heat_capacity", "porosity"))
    word = str(opt.get("sediment", np.array([""] * len(sites.ids)))[i]).strip().lower() or DEFAULT_SEDIMENT
    complete = np.isfinite(lam) and (np.isfinite(rc) or np.isfinite(n))
    if complete:
        return user_properties(lam, rc if np.isfinite(rc) else None, n if np.isfinite(n) else None)
    if word not in SEDIMENTS:
        line = opt.get("line")
        raise InputError(f"sediment '{word}' of site '{site}' is not one of {', '.join(SEDIMENTS)}; for another "
                         "bed give its thermal_conductivity and heat_capacity (or porosity)",
                         "sites.csv", f"line {line[i]}, column 'sediment'" if line is not None else None)
    base = SEDIMENTS[word]
    if not (np.isfinite(lam) or np.isfinite(rc) or np.isfinite(n)):
        return base
    given = user_properties(lam if np.isfinite(lam) else base.thermal_conductivity,
                            rc if np.isfinite(rc) else None, n if np.isfinite(n) else None, word)
    if np.isfinite(lam):
        return given
    # the sediment's conductivity with its published range, the site's own heat capacity
    return BedThermal(base.thermal_conductivity, given.heat_capacity, given.porosity, base.conductivity_range,
                      given.heat_capacity_range, f"{word} conductivity ({base.source}); {given.source}")


def reduce_temperature(sheet: Sheet, sites: Sites, rejected: Rejected, flags: Flags) -> TemperatureReduction:
    """Flux records from a temperature sheet.

    Rows with an empty or unreadable time, and repeats of (site, depth, time), are rejected.
    A site with readings at one depth only gets the flag ``single_depth``.

    Returns
    -------
    TemperatureReduction
        ``fluxes`` has one row per site, sensor pair and window, with SI columns in brackets:
        site, x, shallow and deep depth, mid_depth, mid_elevation, time, flux, flux_sd, flags,
        then the three methods' fluxes, amplitudes, ratio, lag and implied diffusivity.
    """
    sheet, origin = timed_readings(sheet, rejected)
    readings = pd.DataFrame({
        "site": sheet.texts["site"], "depth": sheet.numbers["depth"], "time": sheet.numbers["time"],
        "temperature": sheet.numbers["temperature"], "accuracy": sheet.numbers["accuracy"],
    })
    parts, used = [], {}
    for site, group in readings.groupby("site", sort=True):
        depths = np.sort(group["depth"].unique())
        if depths.size < 2:
            flags.add("temperature", site, "single_depth",
                      f"readings at one depth only ({depths[0]:g} m); a flux needs two depths")
            continue
        props = site_properties(sites, site)
        used[site] = {"thermal_conductivity [W/(m K)]": props.thermal_conductivity,
                      "heat_capacity [J/(m^3 K)]": props.heat_capacity, "porosity [1]": props.porosity,
                      "thermal_conductivity_range": list(props.conductivity_range),
                      "heat_capacity_range": list(props.heat_capacity_range), "source": props.source}
        wide = group.pivot_table(index="time", columns="depth", values="temperature", aggfunc="first")
        accuracy = group.groupby("depth")["accuracy"].max()
        i = sites.index(site)
        for upper, lower in zip(depths[:-1], depths[1:]):
            pair = wide[[upper, lower]].dropna()
            given = [a for a in (accuracy[upper], accuracy[lower]) if np.isfinite(a)]
            est = flux_from_temperature(pair.index.to_numpy(float), pair[upper].to_numpy(), pair[lower].to_numpy(),
                                        lower - upper, props.thermal_conductivity, props.heat_capacity,
                                        method=SHEET_METHOD, accuracy=max(given) if given else DEFAULT_ACCURACY,
                                        conductivity_range=props.conductivity_range,
                                        heat_capacity_range=props.heat_capacity_range)
            mid = 0.5 * (upper + lower)
            label = f"{site} {upper:g}-{lower:g} m"
            if est.empty:
                flags.add("temperature", label, "gap", "the record is shorter than one window")
                continue
            for word in sorted({w for f in est["flag"] for w in f.split()}):
                n = int(sum(word in f.split() for f in est["flag"]))
                flags.add("thermal_flux", label, word, f"{n} of {len(est)} windows: {FLAGS[word]}")
            parts.append(_table(est, site, float(sites.x[i]), float(sites.bed_elevation[i]), upper, lower, mid))
    fluxes = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame(columns=_COLUMNS)
    readings = readings.rename(columns={"depth": "depth [m]", "time": "time [s]", "temperature": "temperature [degC]",
                                        "accuracy": "accuracy [degC]"})
    return TemperatureReduction(readings, fluxes, used, origin)


_COLUMNS = ["site", "x [m]", "shallow_depth [m]", "deep_depth [m]", "mid_depth [m]", "mid_elevation [m]",
            "time [s]", "flux [m/s]", "flux_sd [m/s]", "flags", "flux_amplitude [m/s]",
            "flux_amplitude_sd [m/s]", "flux_phase [m/s]", "flux_phase_sd [m/s]", "flux_combined [m/s]",
            "flux_combined_sd [m/s]", "amplitude_shallow [degC]", "amplitude_deep [degC]",
            "amplitude_ratio [1]", "phase_lag [s]", "diffusivity [m^2/s]", "readings"]


def _table(est: pd.DataFrame, site: str, x: float, bed: float, upper: float, lower: float,
           mid: float) -> pd.DataFrame:
    out = pd.DataFrame({
        "site": site, "x [m]": x, "shallow_depth [m]": upper, "deep_depth [m]": lower, "mid_depth [m]": mid,
        "mid_elevation [m]": bed - mid, "time [s]": est["time"], "flux [m/s]": est["flux"],
        "flux_sd [m/s]": est["flux_sd"], "flags": est["flag"],
    })
    for name in ("flux_amplitude", "flux_amplitude_sd", "flux_phase", "flux_phase_sd", "flux_combined",
                 "flux_combined_sd"):
        out[f"{name} [m/s]"] = est[name]
    out["amplitude_shallow [degC]"] = est["amplitude_shallow"]
    out["amplitude_deep [degC]"] = est["amplitude_deep"]
    out["amplitude_ratio [1]"] = est["amplitude_ratio"]
    out["phase_lag [s]"] = est["phase_lag"]
    out["diffusivity [m^2/s]"] = est["diffusivity"]
    out["readings"] = est["readings"]
    return out[_COLUMNS]
