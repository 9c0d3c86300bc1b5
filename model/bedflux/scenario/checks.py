"""Named checks for user input, all raising :class:`InputError` with one message template.

A message names the place (``zone 'bed': kv``), what was given and what is allowed, e.g.
``zone 'bed': kv = 5 (m/s) is above 1 m/s; did you mean '5 m/d'?``.
"""
from __future__ import annotations

from typing import Any, Iterable, Mapping

from bedflux.errors import InputError
from bedflux.scenario.units import DIMENSIONS, parse_quantity

_MISSING = object()


def reject_unknown(table: Mapping[str, Any], allowed: Iterable[str], where: str,
                   renamed: Mapping[str, str] | None = None) -> None:
    """Raise if ``table`` has keys outside ``allowed``; a key of ``renamed`` (old -> new name) is
    refused with the new name."""
    for old, new in (renamed or {}).items():
        if old in table:
            raise InputError(f"'{old}' was renamed; write {new} = {_toml_value(table[old])}", where=where)
    allowed = list(allowed)
    unknown = [k for k in table if k not in allowed]
    if unknown:
        raise InputError(
            f"unknown key '{unknown[0]}'; allowed keys are: {', '.join(allowed)}", where=where
        )


def _toml_value(value: Any) -> str:
    """``value`` as it is written in a TOML file (text in double quotes)."""
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, bool):
        return "true" if value else "false"
    return repr(value)


def table(parent: Mapping[str, Any], key: str, where: str, required: bool = False) -> dict:
    """A sub-table (TOML table) of ``parent``; empty when absent and not required."""
    if key not in parent:
        if required:
            raise InputError(f"the table [{key}] is required", where=where)
        return {}
    value = parent[key]
    if not isinstance(value, Mapping):
        raise InputError(f"'{key}' must be a table (written [{key}] or {{...}}); got {value!r}", where=where)
    return dict(value)


def quantity(
    t: Mapping[str, Any],
    key: str,
    dimension: str,
    where: str,
    default: Any = _MISSING,
    low: float | None = None,
    high: float | None = None,
    low_inclusive: bool = True,
    high_hint: str | None = None,
) -> Any:
    """Read ``t[key]`` as an SI float of the given dimension and check its range.

    Parameters
    ----------
    t, key
        The table and the key inside it.
    dimension
        A dimension word of :data:`bedflux.scenario.units.DIMENSIONS`.
    where
        The location for messages, e.g. ``zone 'bed'``.
    default
        Returned when the key is absent; without it the key is required.
    low, high
        Allowed range (SI). ``high`` is a plausibility limit: values above it are errors that
        suggest the unit the user probably meant (``high_hint``).
    """
    place = f"{where}: {key}" if where else key
    if key not in t:
        if default is _MISSING:
            raise InputError(f"the key '{key}' is required ({DIMENSIONS[dimension][2]})", where=where or None)
        return default
    raw = t[key]
    try:
        value = parse_quantity(raw, dimension)
    except InputError as err:
        raise err.located(where=place) from None
    si = DIMENSIONS[dimension][1]
    shown = (f"{raw!r} ({si})" if si else f"{raw!r}") if not isinstance(raw, str) else repr(raw)
    if low is not None and (value < low or (value == low and not low_inclusive)):
        rel = ">=" if low_inclusive else ">"
        raise InputError(f"{key} = {shown} is not allowed; it must be {rel} {low:g}{' ' + si if si else ''}",
                         where=where or None)
    if high is not None and value > high:
        hint = ""
        if high_hint and not isinstance(raw, str):
            try:
                suggested = parse_quantity(f"{raw:g} {high_hint}", dimension)
            except InputError:
                suggested = float("inf")
            if suggested <= high:
                hint = f"; did you mean '{raw:g} {high_hint}'?"
        raise InputError(f"{key} = {shown} is above {high:g}{' ' + si if si else ''}{hint}", where=where or None)
    return value


def number(t: Mapping[str, Any], key: str, where: str, default: Any = _MISSING,
           low: float | None = None, high: float | None = None) -> Any:
    """A plain dimensionless number (no unit allowed) within ``[low, high]``."""
    return quantity(t, key, "dimensionless", where, default=default, low=low, high=high)


def interval(t: Mapping[str, Any], key: str, where: str, dimension: str = "length",
             default: Any = _MISSING) -> Any:
    """A pair ``[a, b]`` with ``a < b`` (SI)."""
    if key not in t:
        if default is _MISSING:
            raise InputError(f"the key '{key}' is required (a pair [a, b])", where=where or None)
        return default
    raw = t[key]
    if not isinstance(raw, (list, tuple)) or len(raw) != 2:
        raise InputError(f"{key} must be a pair [a, b]; got {raw!r}", where=where or None)
    a, b = (quantity({key: v}, key, dimension, where) for v in raw)
    if not a < b:
        raise InputError(f"{key} = {raw!r} must be increasing (a < b)", where=where or None)
    return (a, b)


def choice(t: Mapping[str, Any], key: str, options: Iterable[str], where: str, default: Any = _MISSING) -> Any:
    """One of a fixed set of words."""
    options = list(options)
    if key not in t:
        if default is _MISSING:
            raise InputError(f"the key '{key}' is required, one of: {', '.join(options)}", where=where or None)
        return default
    v = t[key]
    if v not in options:
        raise InputError(f"{key} = {v!r} is not allowed; use one of: {', '.join(options)}", where=where or None)
    return v


def flag(t: Mapping[str, Any], key: str, where: str, default: bool = False) -> bool:
    """A boolean written true or false."""
    if key not in t:
        return default
    v = t[key]
    if not isinstance(v, bool):
        raise InputError(f"{key} must be true or false; got {v!r}", where=where or None)
    return v


def text(t: Mapping[str, Any], key: str, where: str, default: Any = _MISSING) -> Any:
    """A string value."""
    if key not in t:
        if default is _MISSING:
            raise InputError(f"the key '{key}' is required (text)", where=where or None)
        return default
    v = t[key]
    if not isinstance(v, str):
        raise InputError(f"{key} must be text in quotes; got {v!r}", where=where or None)
    return v


def integer(t: Mapping[str, Any], key: str, where: str, default: Any = _MISSING, low: int | None = None,
            high: int | None = None) -> Any:
    """A whole number within ``[low, high]``."""
    if key not in t:
        if default is _MISSING:
            raise InputError(f"the key '{key}' is required (a whole number)", where=where or None)
        return default
    v = t[key]
    if isinstance(v, bool) or not isinstance(v, int):
        raise InputError(f"{key} must be a whole number; got {v!r}", where=where or None)
    if (low is not None and v < low) or (high is not None and v > high):
        raise InputError(f"{key} = {v} is not allowed; it must lie in [{low}, {high}]", where=where or None)
    return v
