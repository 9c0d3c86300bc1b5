"""The ``[heat]`` table and the thermal properties of water and of the zones.

Keys (see docs/scenario.md): ``stream_temperature`` (a value, or a daily wave ``{mean, amplitude,
period, phase}``) or ``temperature_csv`` (a series ``time, temperature [degC]``),
``groundwater_temperature`` (base and inflow through the sides), ``initial`` (a uniform start;
default the steady temperature of the forcing at t = 0) and ``ground_temperature`` (exposed ground;
without it exposed ground is insulated and recharge enters at the groundwater temperature).
Temperatures are in degC; "285 K" and "54 degF" are converted, amplitudes are differences.
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Mapping

from bedflux.errors import InputError
from bedflux.scenario import checks
from bedflux.scenario.forcing import Constant, Series, Signal, Wave, read_series

#: Volumetric heat capacity of water rho_w c_w (J m-3 K-1): 1000 kg m-3 x 4180 J kg-1 K-1 near
#: 15-20 degC (references.md section 9; handbook value).
WATER_HEAT_CAPACITY = 4.18e6
#: Default bulk thermal conductivity of saturated sediment (W m-1 K-1): the middle of 1.2-2.5
#: quoted for saturated streambed sediment (references.md section 9, from memory; Sebok & Mueller
#: 2019 measured 0.55-2.96, Markle et al. 2006 2.14-2.69 for saturated sand and gravel).
DEFAULT_THERMAL_CONDUCTIVITY = 1.8
#: Default volumetric heat capacity of the solid grains (J m-3 K-1): quartz, 2650 kg m-3 x about
#: 750 J kg-1 K-1 (from memory); with porosity 0.3 the bulk value is 2.65e6, inside the 2.5-3.2e6
#: quoted for saturated sediment (references.md section 9).
DEFAULT_HEAT_CAPACITY = 2.0e6
#: Default thermal dispersivity (m): none; thermal dispersion is commonly neglected next to
#: conduction at streambed fluxes (common practice, Hatch et al. 2006 discuss it).
DEFAULT_DISPERSIVITY = 0.0
#: Temperatures of liquid water in a streambed (degC); outside is an error that suggests a unit.
TEMPERATURE_RANGE = (-2.0, 60.0)
#: Zone keys of the thermal properties.
THERMAL_PROPERTIES = ("thermal_conductivity", "heat_capacity", "dispersivity")


@dataclass(frozen=True)
class HeatSpec:
    """Temperatures of the ``[heat]`` table (degC; signals of the run time in s).

    ``stream`` is None without a stream; ``ground`` None means insulated exposed ground;
    ``initial`` None means the steady temperature of the forcing at t = 0.
    """

    stream: Signal | None
    groundwater: float
    initial: float | None = None
    ground: Signal | None = None


def zone_thermal(z: Mapping[str, Any], where: str) -> dict[str, float]:
    """The thermal properties of one ``[[zone]]`` table (SI, defaults filled in)."""
    return {
        "thermal_conductivity": checks.quantity(z, "thermal_conductivity", "thermal_conductivity", where,
                                                default=DEFAULT_THERMAL_CONDUCTIVITY, low=0.05, high=10.0),
        "heat_capacity": checks.quantity(z, "heat_capacity", "heat_capacity", where, default=DEFAULT_HEAT_CAPACITY,
                                         low=5e5, high=5e6, high_hint="MJ/m^3/K"),
        "dispersivity": checks.quantity(z, "dispersivity", "length", where, default=DEFAULT_DISPERSIVITY,
                                        low=0.0, high=10.0),
    }


def _temperature(t: Mapping[str, Any], key: str, where: str, default: Any = None) -> float:
    kwargs = {} if default is None else {"default": default}
    v = checks.quantity(t, key, "temperature", where, **kwargs)
    low, high = TEMPERATURE_RANGE
    if not low <= v <= high:
        raw = t.get(key)
        hint = f"; did you mean '{raw:g} K'?" if isinstance(raw, (int, float)) and 250 < raw < 340 else ""
        raise InputError(f"{key} = {raw!r} is {v:g} degC, outside {low:g} to {high:g} degC where water in a "
                         f"streambed is liquid{hint}", where=where)
    return v


def _signal(t: Mapping[str, Any], key: str, where: str) -> Signal:
    """A temperature signal: a value, or an inline table ``{mean, amplitude, period, phase}``."""
    v = t[key]
    if not isinstance(v, Mapping):
        return Constant(_temperature(t, key, where))
    w = f"{where} {key}"
    v = dict(v)
    checks.reject_unknown(v, ["mean", "amplitude", "period", "phase"], where=w)
    mean = _temperature(v, "mean", w)
    amplitude = checks.quantity(v, "amplitude", "temperature_difference", w, low=0.0, high=30.0)
    period = checks.quantity(v, "period", "time", w, default=86400.0, low=60.0, low_inclusive=True)
    phase = checks.number(v, "phase", w, default=0.0)
    for extreme in (mean - amplitude, mean + amplitude):
        _temperature({"mean -/+ amplitude": extreme}, "mean -/+ amplitude", w)
    return Wave(mean, amplitude, period, phase)


def heat_table(t: Mapping[str, Any], base_dir: Path, t_end: float, has_stream: bool,
               align: Callable[[Series], Series]) -> HeatSpec:
    """Validate the ``[heat]`` table.

    ``align`` puts a date-time series on the run clock (see ``spec._Clock``).

    Raises
    ------
    InputError
        Naming the key and what is allowed.
    """
    where = "[heat]"
    checks.reject_unknown(t, ["stream_temperature", "temperature_csv", "groundwater_temperature", "initial",
                              "ground_temperature"], where=where)
    forms = [k for k in ("stream_temperature", "temperature_csv") if k in t]
    if len(forms) > 1:
        raise InputError("give either stream_temperature = V | {mean, amplitude, period, phase} or "
                         "temperature_csv = \"file.csv\", not both", where=where)
    if has_stream and not forms:
        raise InputError("the key 'stream_temperature' is required with a [stream] (a value in degC, "
                         "{mean, amplitude, period, phase} or temperature_csv = \"file.csv\")", where=where)
    stream: Signal | None = None
    if forms == ["stream_temperature"]:
        stream = _signal(t, "stream_temperature", where)
    elif forms == ["temperature_csv"]:
        name = checks.text(t, "temperature_csv", where)
        path = base_dir / name
        if not path.exists():
            raise InputError(f"the file {name!r} was not found (looked for {path.absolute()}; the path is "
                             "relative to the scenario file's folder)", where=f"{where} temperature_csv")
        try:
            stream = align(read_series(path, "temperature", None))
            stream.check_covers(t_end)
        except InputError as err:
            raise err.located(where=f"{where} temperature_csv") from None
        low, high = stream.bounds(t_end)
        if low < TEMPERATURE_RANGE[0] or high > TEMPERATURE_RANGE[1]:
            raise InputError(f"the series runs from {low:g} to {high:g} degC, outside {TEMPERATURE_RANGE[0]:g} to "
                             f"{TEMPERATURE_RANGE[1]:g} degC", source=str(path))
    groundwater = _temperature(t, "groundwater_temperature", where)
    initial = _temperature(t, "initial", where) if "initial" in t else None
    ground = _signal(t, "ground_temperature", where) if "ground_temperature" in t else None
    return HeatSpec(stream, groundwater, initial, ground)
