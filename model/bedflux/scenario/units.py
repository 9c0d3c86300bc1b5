"""Quantities with units: parse "5 m/d", "30 cm", "2 h" into SI floats with pint.

A bare number is SI. The dimension expected for each input is named by a short word
(``length``, ``velocity``, ``time``, ``per_length``, ``rate`` ...), so messages can say what was
expected and what was given.
"""
from __future__ import annotations

import re
from functools import lru_cache
from typing import TYPE_CHECKING, Any

import numpy as np

from bedflux.errors import InputError

if TYPE_CHECKING:
    import pint

#: Seconds in a day.
SECONDS_PER_DAY = 86400.0

#: Display units of fluxes (figures, report, the ``--units`` options) -> factor from m/s
FLUX_UNITS = {"m/d": 86400.0, "mm/d": 86400e3, "cm/d": 8.64e6, "cm/s": 100.0, "m/s": 1.0}


def flux_factor(unit: str) -> float:
    """Factor from m/s to a display unit of :data:`FLUX_UNITS`."""
    if unit not in FLUX_UNITS:
        raise ValueError(f"display unit {unit!r} not one of {', '.join(FLUX_UNITS)}")
    return FLUX_UNITS[unit]


#: Dimension words used in messages, with the pint dimensionality and the SI unit.
DIMENSIONS: dict[str, tuple[str, str, str]] = {
    "length": ("[length]", "m", "a length"),
    "velocity": ("[length] / [time]", "m/s", "a conductivity or flux (length/time)"),
    "time": ("[time]", "s", "a time"),
    "per_length": ("1 / [length]", "1/m", "a specific storage (1/length)"),
    "dimensionless": ("", "", "a dimensionless number"),
    "area": ("[length] ** 2", "m^2", "an area"),
    "volume": ("[length] ** 3", "m^3", "a volume"),
    "mass": ("[mass]", "kg", "a mass"),
    "density": ("[mass] / [length] ** 3", "kg/m^3", "a density"),
    "acceleration": ("[length] / [time] ** 2", "m/s^2", "an acceleration"),
    "area_rate": ("[length] ** 2 / [time]", "m^2/s", "a flow per unit length (length^2/time)"),
    "per_time": ("1 / [time]", "1/s", "a rate (1/time)"),
    "temperature": ("[temperature]", "degC", "a temperature (degC)"),
    "temperature_difference": ("[temperature]", "delta_degC", "a temperature difference (degC or K)"),
    "thermal_conductivity": ("[power] / [length] / [temperature]", "W/m/K", "a thermal conductivity (W/m/K)"),
    "heat_capacity": ("[energy] / [length] ** 3 / [temperature]", "J/m**3/K",
                      "a volumetric heat capacity (J/m^3/K)"),
}

#: Temperature units read as a difference (an amplitude) rather than a reading.
_DIFFERENCE_UNITS = {"degC": "delta_degC", "°C": "delta_degC", "celsius": "delta_degC",
                     "degF": "delta_degF", "°F": "delta_degF", "fahrenheit": "delta_degF"}

#: A number followed by a unit (the unit must parse as a unit alone: no factors, no arithmetic).
_QUANTITY = re.compile(r"^\s*[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?(?P<unit>.*)$")

#: A CSV header cell: ``name [unit]`` or a bare ``name`` (no brackets in either).
_HEADER = re.compile(r"^\s*(?P<name>[^\[\]]+?)\s*(?:\[(?P<unit>[^\[\]]*)\]\s*)?$")

#: Tokens that mean "per day" etc. written the way field notes do.
_ALIASES = {"m/d": "m/day", "cm/d": "cm/day", "mm/d": "mm/day", "m/yr": "m/year", "mm/yr": "mm/year"}


def split_header(cell: str) -> tuple[str, str | None] | None:
    """Name and unit of a CSV header cell ``name [unit]`` (both stripped; the unit ``None`` for a
    bare ``name``), or ``None`` when the cell is neither (no name, or brackets that are not one
    pair at its end)."""
    m = _HEADER.match(cell)
    if not m:
        return None
    unit = m.group("unit")
    return m.group("name"), None if unit is None else unit.strip()


@lru_cache(maxsize=1)
def registry() -> "pint.UnitRegistry":
    """The shared unit registry (created once)."""
    import pint

    ureg = pint.UnitRegistry()
    return ureg


def _normalise(text: str) -> str:
    t = text.strip()
    for short, long in _ALIASES.items():
        if t.endswith(" " + short) or t == short:
            t = t[: len(t) - len(short)] + long
    return t.replace("^", "**")


def unit_factor(unit: str, dimension: str) -> float:
    """Factor that converts a value in ``unit`` to SI for the given dimension word.

    Raises
    ------
    InputError
        If the unit is unknown or has the wrong dimension.
    """
    dim, si, words = DIMENSIONS[dimension]
    ureg = registry()
    try:
        q = ureg.Quantity(1.0, ureg.parse_units(_normalise(unit))) if unit.strip() else ureg.Quantity(1.0)
    except Exception:
        raise InputError(f"unknown unit '{unit}'; expected {words} such as '{si or '1'}' (one unit, "
                         "no numbers or arithmetic)") from None
    if not _has_dimension(q, dim):
        raise InputError(f"unit '{unit}' is not {words} (expected a unit like '{si or '1'}')")
    if dim == "[temperature]":
        q = _temperature(q, unit, dimension)
    return float(q.to(si).magnitude) if si else float(q.to("dimensionless").magnitude)


def _temperature(q: "pint.Quantity", unit: str, dimension: str) -> "pint.Quantity":
    """A temperature scale as a factor: temperatures only in degC (kelvin and Fahrenheit have
    offsets that a factor cannot carry); a difference in degC or degF as a difference."""
    ureg = registry()
    offset = ureg.Quantity(0.0, q.units).to("kelvin").magnitude != 0.0
    if dimension == "temperature":
        if ureg.Quantity(0.0, q.units).to("degC").magnitude != 0.0:
            raise InputError(f"unit '{unit}' is not degC; temperatures are read in degC only (convert the "
                             "column: kelvin and Fahrenheit scales have offsets)")
        return q
    return ureg.Quantity(1.0, "delta_" + str(q.units)) if offset else q


def _has_dimension(q: "pint.Quantity", dim: str) -> bool:
    if dim == "":
        return q.dimensionless
    return q.check(dim)


def parse_quantity(value: Any, dimension: str) -> float:
    """Parse one value to an SI float.

    Parameters
    ----------
    value
        A number (taken as SI) or a string with a unit, e.g. ``"5 m/d"``.
    dimension
        A key of :data:`DIMENSIONS`.

    Returns
    -------
    float
        The value in SI units.

    Raises
    ------
    InputError
        If the value is neither a number nor a quantity of the expected dimension.
    """
    dim, si, words = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise InputError(f"expected {words}; got the boolean {value!r}")
    if isinstance(value, (int, float, np.floating, np.integer)):
        v = float(value)
        if not np.isfinite(v):
            raise InputError(f"expected a finite number for {words}; got {value!r}")
        return v
    if not isinstance(value, str):
        raise InputError(f"expected {words} as a number or a string like '5 {si or ''}'; got {value!r}")
    m = _QUANTITY.match(value)
    form = (f"write one number and a unit, e.g. '5 {si}', or a bare SI number; arithmetic, lists "
            "and several units are not allowed") if si else \
        "write one number (arithmetic is not allowed)"
    if not m:
        raise InputError(f"cannot read '{value}' as {words}: {form}")
    number = float(value[: m.start("unit")])
    text = m.group("unit").strip()
    if not text:
        out = number
    else:
        ureg = registry()
        if dimension == "temperature_difference":
            text = _DIFFERENCE_UNITS.get(text, text)
        try:
            unit = ureg.parse_units(_normalise(text))
        except Exception:
            raise InputError(f"cannot read '{value}' as {words}: '{text}' is not a unit; {form}") from None
        q = ureg.Quantity(number, unit)
        if not _has_dimension(q, dim):
            raise InputError(f"must be {words}; got '{value}'")
        out = float(q.to(si).magnitude) if si else float(q.to("dimensionless").magnitude)
    if not np.isfinite(out):
        raise InputError(f"expected a finite value for {words}; got '{value}'")
    return out
