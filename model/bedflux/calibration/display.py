"""Display units of parameter values and spreads in fit and plan summaries (SI in the files)."""
from __future__ import annotations

import math

from bedflux.scenario.units import SECONDS_PER_DAY as DAY

#: Display factor (SI value times factor) and unit by the dimension of a parameter path.
_UNITS = {
    "velocity": (DAY, "m/d"),
    "rate": (1000.0 * DAY, "mm/d"),
    "per_length": (1.0, "1/m"),
    "per_time": (DAY, "1/d"),
    "length": (1.0, "m"),
    "dimensionless": (1.0, ""),
    "thermal_conductivity": (1.0, "W/m/K"),
    "heat_capacity": (1e-6, "MJ/m^3/K"),
}


def dimension_of(path: str) -> str:
    """The dimension word of a parameter path's values (for unit strings in fit and plan files)."""
    last = path.rsplit(".", 1)[-1]
    if ".retention." in path:
        # van Genuchten / exponential alpha (1/m); n and the water contents are pure numbers
        return "per_length" if last == "alpha" else "dimensionless"
    if last in ("kh", "kv", "rate", "max_rate", "flux"):
        return "velocity"
    if last == "specific_storage":
        return "per_length"
    if last == "leakance":
        return "per_time"
    if last in ("specific_yield", "porosity", "phase"):
        return "dimensionless"
    if last in ("thermal_conductivity", "heat_capacity"):
        return last
    return "length"


def display_unit(path: str) -> tuple[float, str]:
    """``(factor, unit)``: an SI value of ``path`` times ``factor`` is in ``unit``."""
    dim = "rate" if path.endswith((".rate", ".max_rate")) else dimension_of(path)
    return _UNITS[dim]


def with_unit(path: str, value: float, digits: int = 4) -> str:
    """An SI value of ``path`` in its display unit, e.g. ``1.54 m/d``."""
    if value is None or not math.isfinite(value):
        return "n/a"
    factor, unit = display_unit(path)
    if unit == "m" and abs(value) >= 10:  # elevations: keep the centimetres
        text = f"{value:.{max(digits, 2)}f}".rstrip("0").rstrip(".")
    else:
        text = f"{value * factor:.{digits}g}"
    return f"{text} {unit}".rstrip()
