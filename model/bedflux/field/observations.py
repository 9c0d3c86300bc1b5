"""The observation table that calibration reads: kind, x, depth, time, value, sigma (SI).

kind is ``seepage`` (bed flux, m/s, positive upward, depth 0), ``vhg`` (vertical hydraulic
gradient, positive upward, at the piezometer opening depth), ``head`` (m, where the manometer
sheet gives the stage) ``thermal_flux`` (vertical Darcy flux from a pair of temperature
sensors, m/s, positive upward, at the pair's mid-depth; time is the window centre) or
``temperature`` (a logger's reading, degC, at its depth and time). depth is below the bed (m), time is seconds since the campaign origin.

Rows of a meter or piezometer whose flag says its value does not stand for the bed (see
:data:`LEAVE_OUT`) are left out unless asked for; :func:`observation_table` returns them
separately with the reason, for ``flagged_observations.csv``.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

COLUMNS = ["kind", "x", "depth", "time", "value", "sigma"]
FLAGGED_COLUMNS = COLUMNS + ["site", "flags", "reason", "in_observations"]

#: Flags that leave an observation out by default, with the reason given for it (the meter flags
#: are those of :data:`bedflux.field.seepage.EXCLUDING_FLAGS`).
LEAVE_OUT = {
    "robust_outlier": "the meter mean lies far from the other meters of its transect (|modified z| > 3.5, "
                      "Iglewicz & Hoaglin 1993): a hot spot or a faulty installation that a section model "
                      "cannot represent",
    "repeat_scatter": "the meter's repeated readings disagree (coefficient of variation > 0.30, common "
                      "practice): its mean is not a steady flux",
    "velocity_head": "the head difference is smaller than the velocity head at the site: flow over the bed "
                     "can make the apparent gradient (Sickbert & Peterson 2014)",
    "too_damped": "the deep sensor's daily wave is too small to read against its noise: the window's flux "
                  "from temperature is not measured",
}


def _leave_out_reason(flags: pd.Series) -> pd.Series:
    def reason(text: str) -> str:
        return "; ".join(LEAVE_OUT[f] for f in str(text).split() if f in LEAVE_OUT)
    return flags.fillna("").map(reason)


def observation_table(meters: pd.DataFrame, piezometers: pd.DataFrame, *, keep_flagged: bool = False,
                      thermal: pd.DataFrame | None = None, loggers: pd.DataFrame | None = None
                      ) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Observations from the per-meter and per-piezometer tables.

    Parameters
    ----------
    meters, piezometers
        The per-meter and per-piezometer tables (with ``site`` and ``flags`` columns).
    keep_flagged
        Keep the rows whose meter or piezometer carries a flag of :data:`LEAVE_OUT`.
    thermal
        The per-window fluxes from temperature (:func:`bedflux.field.temperature.reduce_temperature`);
        windows without a flux (too few readings, or no damping) are not observations.
    loggers
        The logger readings (:func:`bedflux.field.loggers.reduce_loggers`): one ``temperature``
        row each.

    Returns
    -------
    observations
        ``kind, x, depth, time, value, sigma``; every sigma is positive (each carries at least
        the reading resolution and a between-instrument term).
    flagged
        Every row with a flag of :data:`LEAVE_OUT`: the observation columns, site, flags, the
        reason and whether it is in ``observations``.
    """
    parts = []
    if not meters.empty:
        parts.append(pd.DataFrame({
            "kind": "seepage", "x": meters["x [m]"], "depth": 0.0, "time": meters["time [s]"],
            "value": meters["mean [m/s]"], "sigma": meters["sigma [m/s]"],
            "site": meters["site"], "flags": meters["flags"],
        }))
    if not piezometers.empty:
        parts.append(pd.DataFrame({
            "kind": "vhg", "x": piezometers["x [m]"], "depth": piezometers["depth [m]"],
            "time": piezometers["time [s]"], "value": piezometers["vhg [1]"],
            "sigma": piezometers["vhg_sigma [1]"], "site": piezometers["site"], "flags": piezometers["flags"],
        }))
        heads = piezometers[np.isfinite(piezometers["head [m]"])]
        parts.append(pd.DataFrame({
            "kind": "head", "x": heads["x [m]"], "depth": heads["depth [m]"], "time": heads["time [s]"],
            "value": heads["head [m]"], "sigma": heads["head_sigma [m]"], "site": heads["site"],
            "flags": heads["flags"],
        }))
    if thermal is not None and not thermal.empty:
        read = thermal[np.isfinite(thermal["flux [m/s]"]) & (thermal["flux_sd [m/s]"] > 0)]
        parts.append(pd.DataFrame({
            "kind": "thermal_flux", "x": read["x [m]"], "depth": read["mid_depth [m]"], "time": read["time [s]"],
            "value": read["flux [m/s]"], "sigma": read["flux_sd [m/s]"], "site": read["site"],
            "flags": read["flags"],
        }))
    if loggers is not None and not loggers.empty:
        parts.append(pd.DataFrame({
            "kind": "temperature", "x": loggers["x [m]"], "depth": loggers["depth [m]"],
            "time": loggers["time [s]"], "value": loggers["temperature [degC]"], "sigma": loggers["sigma [degC]"],
            "site": loggers["site"], "flags": "",
        }))
    parts = [p for p in parts if not p.empty]
    if not parts:
        return pd.DataFrame(columns=COLUMNS), pd.DataFrame(columns=FLAGGED_COLUMNS)
    table = pd.concat(parts, ignore_index=True)
    table["reason"] = _leave_out_reason(table["flags"])
    flagged = table[table["reason"] != ""].copy()
    flagged["in_observations"] = keep_flagged
    kept = table if keep_flagged else table[table["reason"] == ""]
    return kept[COLUMNS].reset_index(drop=True), flagged[FLAGGED_COLUMNS].reset_index(drop=True)
