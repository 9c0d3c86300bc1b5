"""The observation table that calibration reads: kind, x, depth, time, value, sigma (SI).

kind is ``seepage`` (bed flux, m/s, positive upward, depth 0), ``vhg`` (vertical hydraulic
gradient, positive upward, at the piezometer opening depth) or ``head`` (m, where the manometer
sheet gives the stage). depth is below the bed (m), time is seconds since the campaign origin.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

COLUMNS = ["kind", "x", "depth", "time", "value", "sigma"]


def observation_table(meters: pd.DataFrame, piezometers: pd.DataFrame) -> pd.DataFrame:
    """Observations from the per-meter and per-piezometer tables.

    Every sigma is positive: each carries at least the reading resolution.
    """
    parts = []
    if not meters.empty:
        parts.append(pd.DataFrame({
            "kind": "seepage", "x": meters["x [m]"], "depth": 0.0, "time": meters["time [s]"],
            "value": meters["mean [m/s]"], "sigma": meters["sigma [m/s]"],
        }))
    if not piezometers.empty:
        parts.append(pd.DataFrame({
            "kind": "vhg", "x": piezometers["x [m]"], "depth": piezometers["depth [m]"],
            "time": piezometers["time [s]"], "value": piezometers["vhg [1]"],
            "sigma": piezometers["vhg_sigma [1]"],
        }))
        heads = piezometers[np.isfinite(piezometers["head [m]"])]
        parts.append(pd.DataFrame({
            "kind": "head", "x": heads["x [m]"], "depth": heads["depth [m]"], "time": heads["time [s]"],
            "value": heads["head [m]"], "sigma": heads["head_sigma [m]"],
        }))
    parts = [p for p in parts if not p.empty]
    if not parts:
        return pd.DataFrame(columns=COLUMNS)
    return pd.concat(parts, ignore_index=True)[COLUMNS]
