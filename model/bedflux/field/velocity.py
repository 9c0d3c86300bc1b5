"""Velocity head read on a pitot-style manometer: v = sqrt(2 g dh) (Bernoulli) and its inverse."""
from __future__ import annotations

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from bedflux.errors import InputError
from bedflux.field.sheets import Rejected, Sheet, reject_duplicates

#: Standard gravity, m/s^2.
G = 9.80665


def velocity_from_head(head_difference: ArrayLike, g: float = G) -> np.ndarray:
    """Flow velocity (m/s) from a velocity head (m): sqrt(2 g dh)."""
    dh = np.asarray(head_difference, dtype=float)
    if np.any(~(dh >= 0)):
        raise InputError("a velocity head must be >= 0 m")
    return np.sqrt(2.0 * g * dh)


def head_from_velocity(velocity: ArrayLike, g: float = G) -> np.ndarray:
    """Velocity head (m) of a flow velocity (m/s): v^2 / (2 g)."""
    return np.asarray(velocity, dtype=float) ** 2 / (2.0 * g)


def reduce_velocity(sheet: Sheet, rejected: Rejected) -> pd.DataFrame:
    """Velocity per reading (duplicates of site and time rejected)."""
    sheet = reject_duplicates(sheet, ("site", "time"), rejected)
    dh = sheet.numbers["head_difference"]
    return pd.DataFrame(
        {
            "line": sheet.line,
            "site": sheet.texts["site"],
            "time [s]": sheet.numbers["time"],
            "head_difference [m]": dh,
            "velocity [m/s]": velocity_from_head(dh),
        }
    )
