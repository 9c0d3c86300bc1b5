"""The logger sheet: single temperature loggers in the bed, read as they are.

Each reading becomes a ``temperature`` observation (degC at the logger's depth below the bed, at
its time) for a scenario with ``[heat]`` to predict; no flux is derived from it. Its sigma is the
logger's stated accuracy read as a uniform error, accuracy / sqrt(3) (GUM, JCGM 100:2008
F.2.2.1), the rule the temperature sheet uses for its readings.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from bedflux.field.sheets import Rejected, Sheet
from bedflux.field.sites import Sites
from bedflux.field.temperature import timed_readings
from bedflux.field.thermal import DEFAULT_ACCURACY

COLUMNS = ["site", "x [m]", "depth [m]", "time [s]", "temperature [degC]", "accuracy [degC]", "sigma [degC]"]


def reduce_loggers(sheet: Sheet, sites: Sites, rejected: Rejected) -> tuple[pd.DataFrame, str | None]:
    """The readings of a logger sheet with their place and sigma.

    Rows with an empty or unreadable time, and repeats of (site, depth, time), are rejected
    and listed.

    Returns
    -------
    readings
        One row per kept reading (SI columns in brackets, :data:`COLUMNS`), sorted by site,
        depth and time.
    origin
        The date-time origin of a ``datetime`` column (its first day's midnight), else None.
    """
    sheet, origin = timed_readings(sheet, rejected)
    accuracy = np.where(np.isfinite(sheet.numbers["accuracy"]), sheet.numbers["accuracy"], DEFAULT_ACCURACY)
    x = np.array([sites.x[sites.index(s)] for s in sheet.texts["site"]], dtype=float)
    readings = pd.DataFrame({
        "site": sheet.texts["site"], "x [m]": x, "depth [m]": sheet.numbers["depth"],
        "time [s]": sheet.numbers["time"], "temperature [degC]": sheet.numbers["temperature"],
        "accuracy [degC]": accuracy, "sigma [degC]": accuracy / np.sqrt(3.0),
    }, columns=COLUMNS)
    return readings.sort_values(["site", "depth [m]", "time [s]"], kind="stable").reset_index(drop=True), origin
