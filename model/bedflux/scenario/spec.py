"""Scenario files: TOML read into validated, immutable objects.

Every dimensional value may carry a unit (``"5 m/d"``, ``"30 cm"``, ``"2 h"``); a bare number is
SI. Errors name the file, the key and what is allowed. See docs/scenario.md for every key.
"""
from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from bedflux.scenario import checks
from bedflux.scenario.bedform import dynamic_head_amplitude
from bedflux.errors import InputError
from bedflux.scenario.units import SECONDS_PER_DAY
from bedflux.scenario.forcing import (Constant, FloodWave, Pulse, Series, Signal, Wave, parse_datetime, read_series)
from bedflux.scenario.inputfile import read_toml
from bedflux.scenario.heat import (DEFAULT_DISPERSIVITY, DEFAULT_HEAT_CAPACITY, DEFAULT_THERMAL_CONDUCTIVITY,
                                   THERMAL_PROPERTIES, HeatSpec, heat_table, zone_thermal)

#: Plausibility limits (SI). Values outside are errors that suggest the unit meant.
K_MAX = 1.0  # m/s: coarse gravel is about 1e-2 m/s (Freeze & Cherry 1979, table 2.2)
K_MIN = 1e-14  # m/s: unfractured igneous rock
SS_MAX = 1e-2  # 1/m: plastic clay is about 2.6e-3 1/m (Domenico & Mifflin 1965, via Freeze & Cherry)
RECHARGE_MAX = 1e-6  # m/s = 86 mm/d
ET_MAX = 2e-7  # m/s = 17 mm/d, above the highest recorded daily evapotranspiration
LEAKANCE_MAX = 10.0  # 1/s
HEAD_RANGE_MAX = 1000.0  # m: heads and stages this far above the model base are a unit slip
TITLE_MAX = 300  # characters
#: Effective porosity of a zone that gives none (a sand or gravel bed, common practice): it sets
#: the pore velocity of the flow paths and so their residence times.
DEFAULT_POROSITY = 0.3
STEP_MIN = 1e-3  # s: shortest time step and output interval (1 ms; a bed responds in minutes)

_TOP_KEYS = ["title", "grid", "ground", "zone", "stream", "sides", "recharge", "riparian", "time", "initial", "heat"]
_SIDE_WORDS = ["no-flow", "periodic", "stream"]
#: Zone properties a scenario sets, and the ones a parameter path ``ZONE.PROPERTY`` may change.
ZONE_PROPERTIES = ("kh", "kv", "specific_storage", "specific_yield", "porosity", *THERMAL_PROPERTIES, "depth")
#: Keys that were renamed (old -> new): an old key is refused with a message giving the new one.
RENAMED_ZONE_KEYS = {"ss": "specific_storage", "sy": "specific_yield"}
RENAMED_RIPARIAN_KEYS = {"rate": "max_rate"}


@dataclass(frozen=True)
class GridSpec:
    """Extent and spacing of the section grid (SI)."""

    x0: float
    x1: float
    bottom: float
    dx: float
    dz: float
    growth: float = 1.0
    dz_max: float = math.inf
    runs: str = "across"


@dataclass(frozen=True)
class RetentionSpec:
    """Soil water properties of a zone (see :mod:`bedflux.section.retention`): ``model`` is
    ``"van-genuchten"`` (with ``n``) or ``"exponential"``; ``alpha`` in 1/m."""

    model: str
    alpha: float
    residual: float
    saturated: float
    n: float | None = None


@dataclass(frozen=True)
class ZoneSpec:
    """One material zone. The first fills the domain; later ones override where they apply.

    Geometry: ``depth`` (a layer of that thickness below the ground, over ``x`` if given) or a box
    ``x`` and ``z``; the first zone has neither. Thermal properties (used by ``[heat]``): bulk
    ``thermal_conductivity`` of the saturated sediment (W m-1 K-1), ``heat_capacity`` of the solid
    grains (J m-3 K-1) and ``dispersivity`` (m).
    """

    name: str
    kh: float
    kv: float
    specific_storage: float
    specific_yield: float
    depth: float | None = None
    x: tuple[float, float] | None = None
    z: tuple[float, float] | None = None
    porosity: float = DEFAULT_POROSITY
    retention: RetentionSpec | None = None
    thermal_conductivity: float = DEFAULT_THERMAL_CONDUCTIVITY
    heat_capacity: float = DEFAULT_HEAT_CAPACITY
    dispersivity: float = DEFAULT_DISPERSIVITY


@dataclass(frozen=True)
class BedformSpec:
    """Dynamic head along the bed: amplitude cos(2 pi x / wavelength + phase)."""

    amplitude: float
    wavelength: float
    phase: float = 0.0


@dataclass(frozen=True)
class StreamSpec:
    """The stream: stage signal, channel limits, bed leakance and bedform head."""

    stage: Signal
    channel: tuple[float, float] | None = None
    leakance: float | None = None
    bedform: BedformSpec | None = None
    slope: float = 0.0

    def local_stage(self, t: float, x: np.ndarray | float) -> np.ndarray:
        """Stage at positions ``x``: the stage signal (which holds at x = 0) plus slope x."""
        return float(self.stage(t)) + self.slope * np.asarray(x, dtype=float)


@dataclass(frozen=True)
class BoundarySpec:
    """A side or the bottom: ``no-flow``, ``periodic``, ``stream``, ``head`` or ``flux``.

    For ``head`` the signal gives the head (m); for ``flux`` the inflow per unit face area
    (m/s, positive into the domain).
    """

    kind: str
    signal: Signal | None = None


@dataclass(frozen=True)
class RiparianSpec:
    """A riparian evapotranspiration zone over an x range."""

    x: tuple[float, float]
    max_rate: float
    extinction_depth: float
    root_depth: float = 0.0
    daily_cycle: bool = False
    uptake_heads: tuple[float, float, float, float] = (-0.1, -0.25, -4.0, -80.0)


@dataclass(frozen=True)
class TimeSpec:
    """Transient run control (s).

    ``origin`` is the clock time of ``t = 0`` in seconds since 1970-01-01 00:00 (local clock):
    ``[time] start``, or without it the first date-time of the stage series (of the first side-head
    series without one); None when neither gives a date, and then ``t = 0`` is a midnight.
    """

    end: float
    step: float
    output_every: float
    scheme: str = "backward-euler"
    origin: float | None = None

    @property
    def clock0(self) -> float:
        """Clock time of ``t = 0`` in seconds after midnight."""
        return 0.0 if self.origin is None else self.origin % SECONDS_PER_DAY


@dataclass(frozen=True)
class Scenario:
    """A validated scenario. Build with :func:`load` or :meth:`Scenario.from_dict`."""

    title: str
    grid: GridSpec
    ground: tuple[tuple[float, float], ...]
    zones: tuple[ZoneSpec, ...]
    stream: StreamSpec | None
    left: BoundarySpec
    right: BoundarySpec
    bottom: BoundarySpec
    recharge: float
    riparian: tuple[RiparianSpec, ...]
    time: TimeSpec | None
    initial_head: float | None
    source: str = "scenario"
    base_dir: str = "."
    raw: Mapping[str, Any] = field(default_factory=dict, repr=False, compare=False)
    heat: HeatSpec | None = None

    @property
    def transient(self) -> bool:
        """True when the scenario has a [time] table."""
        return self.time is not None

    @classmethod
    def from_dict(cls, d: Mapping[str, Any], base_dir: str | Path = ".", source: str = "scenario") -> "Scenario":
        """Validate a scenario given as a dictionary (the parsed TOML)."""
        try:
            return _build(dict(d), Path(base_dir), source)
        except InputError as err:
            raise err.located(source=source) from None

    def with_values(self, values: Mapping[str, float]) -> "Scenario":
        """A copy with values replaced by parameter path (SI), re-validated.

        Paths are ``ZONE.PROPERTY`` (``bed.kv``, ``aquifer.specific_storage``), ``ZONE.retention.KEY``
        (``aquifer.retention.alpha``, ``.n``, ``.residual``, ``.saturated``) or a table path
        (``recharge.rate``, ``stream.stage``, ``riparian.0.max_rate``, ``sides.left.head``,
        ``stream.bedform.amplitude``).
        """
        raw = copy.deepcopy(dict(self.raw))
        for path, value in values.items():
            _set_path(raw, path, value, self.source)
        return Scenario.from_dict(raw, self.base_dir, self.source)

    def with_plain_values(self, values: Mapping[str, float]) -> "Scenario":
        """A copy with values replaced at plain paths (see :meth:`is_plain_path`), without
        re-reading the tables: the values must be ones the scenario allows, e.g. inside an
        interval whose ends :meth:`with_values` accepted (each plain value is checked against a
        range of its own). The same scenario as :meth:`with_values` gives, at a fraction of its cost.

        Raises
        ------
        ValueError
            For a path that is not plain.
        """
        raw = dict(self.raw)
        names = self.zone_names()
        zones, riparian = list(self.zones), list(self.riparian)
        changes: dict[str, Any] = {}
        for path, value in values.items():
            if not self.is_plain_path(path):
                raise ValueError(f"'{path}' is not a plain value path")
            value = float(value)
            parts = path.split(".")
            # copy the tables along the path (the others stay shared with this scenario's)
            if parts[0] in names:
                i = names.index(parts[0])
                raw["zone"] = list(raw["zone"])
                node = raw["zone"][i] = dict(raw["zone"][i])
                new = {parts[1]: value}
                if parts[1] == "kh" and "kv" not in node:
                    new["kv"] = value  # kv defaults to kh
                zones[i] = replace(zones[i], **new)
                changes["zones"] = tuple(zones)
            elif parts[0] in ("recharge", "stream"):
                node = raw[parts[0]] = dict(raw.get(parts[0], {}))
                if parts[0] == "recharge":
                    changes["recharge"] = value
                else:
                    changes["stream"] = replace(self.stream, leakance=value)
            elif parts[0] == "sides":
                raw["sides"] = dict(raw["sides"])
                node = raw["sides"][parts[1]] = dict(raw["sides"][parts[1]])
                changes[parts[1]] = replace(getattr(self, parts[1]), signal=Constant(value))
            else:
                i = int(parts[1])
                raw["riparian"] = list(raw["riparian"])
                node = raw["riparian"][i] = dict(raw["riparian"][i])
                riparian[i] = replace(riparian[i], max_rate=value)
                changes["riparian"] = tuple(riparian)
            node[parts[-1]] = value
        return replace(self, raw=raw, **changes)

    def is_plain_path(self, path: str) -> bool:
        """True for a parameter path that sets one value checked against a range of its own and
        read nowhere else: a zone's kh, kv, specific_storage, specific_yield or porosity,
        ``recharge.rate``, ``stream.leakance``, ``sides.SIDE.head`` of a constant head and
        ``riparian.N.max_rate``."""
        parts = path.split(".")
        if len(parts) == 2 and parts[0] in self.zone_names():
            return parts[1] in ("kh", "kv", "specific_storage", "specific_yield", "porosity")
        if path == "recharge.rate":
            return True
        if path == "stream.leakance":
            return self.stream is not None
        if len(parts) == 3 and parts[0] == "sides" and parts[1] in ("left", "right", "bottom") and parts[2] == "head":
            side = getattr(self, parts[1])
            return side.kind == "head" and isinstance(side.signal, Constant)
        return (len(parts) == 3 and parts[0] == "riparian" and parts[2] == "max_rate" and parts[1].isdigit()
                and int(parts[1]) < len(self.riparian))

    def value_at(self, path: str) -> float:
        """The current SI value at a parameter path (see :meth:`with_values`)."""
        _locate(dict(self.raw), path, self.source)
        return _resolved_value(self, path)

    def zone_names(self) -> list[str]:
        """Zone names in order."""
        return [z.name for z in self.zones]

    @property
    def variably_saturated(self) -> bool:
        """True when the zones carry soil water properties (a Richards run)."""
        return self.zones[0].retention is not None


def load(path: str | Path) -> Scenario:
    """Read and validate a scenario TOML file.

    Raises
    ------
    InputError
        If the file is missing, is not valid TOML, or any value is not allowed.
    """
    path = Path(path)
    data = read_toml(path, "scenario file")
    return Scenario.from_dict(data, base_dir=path.parent, source=str(path))


# --------------------------------------------------------------------------------------------
# building

def _build(d: dict, base_dir: Path, source: str) -> Scenario:
    checks.reject_unknown(d, _TOP_KEYS, where="top level")
    title = checks.text(d, "title", "top level", default="untitled scenario")
    if len(title) > TITLE_MAX:
        raise InputError(f"title is {len(title)} characters long; at most {TITLE_MAX} are allowed (it heads "
                         "figures and the report)", where="top level")
    grid = _grid(checks.table(d, "grid", "top level", required=True))
    ground = _ground(checks.table(d, "ground", "top level", required=True), grid)
    zones = _zones(d.get("zone"), grid)
    time = _time(checks.table(d, "time", "top level"))
    t_end = time.end if time else 0.0
    clock = _Clock(time.origin if time else None)
    stream = _stream(checks.table(d, "stream", "top level"), base_dir, grid, t_end, clock)
    sides = checks.table(d, "sides", "top level")
    checks.reject_unknown(sides, ["left", "right", "bottom"], where="[sides]")
    left = _boundary(sides, "left", stream, base_dir, grid, t_end, clock)
    right = _boundary(sides, "right", stream, base_dir, grid, t_end, clock)
    bottom = _boundary(sides, "bottom", stream, base_dir, grid, t_end, clock)
    heat = None
    if "heat" in d:
        heat = heat_table(checks.table(d, "heat", "top level"), base_dir, t_end, stream is not None, clock.align)
    if time is not None and clock.origin != time.origin:
        time = replace(time, origin=clock.origin)
    if (left.kind == "periodic") != (right.kind == "periodic"):
        raise InputError("periodic sides come in pairs: set both left and right to \"periodic\"", where="[sides]")
    if bottom.kind in ("periodic", "stream"):
        raise InputError(f"bottom = {bottom.kind!r} is not allowed; the bottom is no-flow, {{head = V}} or "
                         "{flux = V}", where="[sides]")
    rech = checks.table(d, "recharge", "top level")
    checks.reject_unknown(rech, ["rate"], where="[recharge]")
    recharge = checks.quantity(rech, "rate", "velocity", "[recharge]", default=0.0,
                               low=-RECHARGE_MAX, high=RECHARGE_MAX, high_hint="mm/d")
    riparian = _riparian(d.get("riparian"), grid)
    init = checks.table(d, "initial", "top level")
    checks.reject_unknown(init, ["head"], where="[initial]")
    initial_head = checks.quantity(init, "head", "length", "[initial]", default=None)
    if initial_head is not None and time is None:
        raise InputError("[initial] head needs a [time] table (a steady run has no initial state)",
                         where="[initial]")
    if initial_head is not None and initial_head > grid.bottom + HEAD_RANGE_MAX:
        raise InputError(f"head = {initial_head:g} m is more than {HEAD_RANGE_MAX:g} m above the model base; "
                         "check the unit or the datum", where="[initial]")
    if initial_head is not None and initial_head < grid.bottom:
        raise InputError(f"head = {initial_head:g} m is below the model base ({grid.bottom:g} m)",
                         where="[initial]")
    return Scenario(title, grid, ground, zones, stream, left, right, bottom, recharge, riparian, time,
                    initial_head, source, str(base_dir), copy.deepcopy(d), heat=heat)


def _grid(g: dict) -> GridSpec:
    where = "[grid]"
    checks.reject_unknown(g, ["x", "bottom", "dx", "dz", "growth", "dz_max", "runs"], where=where)
    x0, x1 = checks.interval(g, "x", where)
    bottom = checks.quantity(g, "bottom", "length", where)
    dx = checks.quantity(g, "dx", "length", where, low=0.0, low_inclusive=False)
    dz = checks.quantity(g, "dz", "length", where, low=0.0, low_inclusive=False)
    growth = checks.number(g, "growth", where, default=1.0, low=1.0, high=2.0)
    dz_max = checks.quantity(g, "dz_max", "length", where, default=math.inf, low=dz)
    if dx > (x1 - x0) * (1 + 1e-9):
        raise InputError(f"dx = {dx:g} m is wider than the section ({x1 - x0:g} m)", where=where)
    runs = checks.choice(g, "runs", ["across", "along"], where, default="across")
    return GridSpec(x0, x1, bottom, dx, dz, growth, dz_max, runs)


def _ground(t: dict, grid: GridSpec) -> tuple[tuple[float, float], ...]:
    where = "[ground]"
    checks.reject_unknown(t, ["profile", "elevation"], where=where)
    if ("profile" in t) == ("elevation" in t):
        raise InputError("give either profile = [[x, elevation], ...] or a flat elevation = V", where=where)
    if "elevation" in t:
        z = checks.quantity(t, "elevation", "length", where)
        pts = ((grid.x0, z), (grid.x1, z))
    else:
        prof = t["profile"]
        if not isinstance(prof, list) or len(prof) < 2 or not all(
                isinstance(p, list) and len(p) == 2 for p in prof):
            raise InputError("profile must be a list of at least two [x, elevation] pairs", where=where)
        pts = tuple((checks.quantity({"x": p[0]}, "x", "length", f"{where} profile point {i + 1}"),
                     checks.quantity({"elevation": p[1]}, "elevation", "length", f"{where} profile point {i + 1}"))
                    for i, p in enumerate(prof))
        xs = [p[0] for p in pts]
        if any(b <= a for a, b in zip(xs, xs[1:])):
            raise InputError("profile x values must increase", where=where)
        if xs[0] > grid.x0 or xs[-1] < grid.x1:
            raise InputError(f"profile spans x = {xs[0]:g} to {xs[-1]:g} m but the grid spans "
                             f"{grid.x0:g} to {grid.x1:g} m; extend the profile", where=where)
    low = min(p[1] for p in pts)
    if low - grid.bottom < grid.dz * 0.5:
        raise InputError(f"the ground ({low:g} m at its lowest) must lie above the model base "
                         f"bottom = {grid.bottom:g} m by at least half a cell", where=where)
    return pts


def _conductivity(t: dict, key: str, where: str, default: Any = None) -> float:
    kwargs = {} if default is None else {"default": default}
    v = checks.quantity(t, key, "velocity", where, low=0.0, low_inclusive=False, high=K_MAX,
                        high_hint="m/d", **kwargs)
    if v < K_MIN:
        raise InputError(f"{key} = {v:g} m/s is below {K_MIN:g} m/s, tighter than unfractured rock", where=where)
    return v


def _zones(zs: Any, grid: GridSpec) -> tuple[ZoneSpec, ...]:
    if not isinstance(zs, list) or not zs:
        raise InputError("at least one [[zone]] is required (the first fills the domain)", where="top level")
    out = []
    seen = set()
    for i, z in enumerate(zs):
        if not isinstance(z, Mapping):
            raise InputError("each [[zone]] must be a table", where=f"zone {i + 1}")
        z = dict(z)
        name = checks.text(z, "name", f"zone {i + 1}")
        where = f"zone '{name}'"
        if name in seen:
            raise InputError("zone names must be unique", where=where)
        if "." in name or name in _TOP_KEYS or name == "sides" or not name.strip():
            raise InputError(f"name {name!r} is not allowed (no dots, not a table name)", where=where)
        seen.add(name)
        checks.reject_unknown(z, ["name", *ZONE_PROPERTIES, "x", "z", "retention"], where=where, renamed=RENAMED_ZONE_KEYS)
        kh = _conductivity(z, "kh", where)
        kv = _conductivity(z, "kv", where, default=kh)
        specific_storage = checks.quantity(z, "specific_storage", "per_length", where, default=1e-5, low=0.0,
                                           high=SS_MAX, high_hint="1/km")
        specific_yield = checks.number(z, "specific_yield", where, default=0.2, low=0.0, high=0.5)
        porosity = checks.number(z, "porosity", where, default=DEFAULT_POROSITY, low=0.01, high=0.7)
        depth = checks.quantity(z, "depth", "length", where, default=None, low=0.0, low_inclusive=False)
        xr = checks.interval(z, "x", where, default=None)
        zr = checks.interval(z, "z", where, default=None)
        if i == 0 and (depth is not None or xr is not None or zr is not None):
            raise InputError("the first zone fills the domain: give it no depth, x or z", where=where)
        if i > 0:
            if depth is None and zr is None:
                raise InputError("give a layer (depth below the ground, optional x = [a, b]) or a box "
                                 "(x = [a, b] and z = [low, high])", where=where)
            if depth is not None and zr is not None:
                raise InputError("give either depth (a layer) or z (a box), not both", where=where)
            if zr is not None and xr is None:
                raise InputError("a box needs x = [a, b] as well as z", where=where)
        retention = _retention(z["retention"], f"{where}: retention") if "retention" in z else None
        out.append(ZoneSpec(name, kh, kv, specific_storage, specific_yield, depth, xr, zr, porosity, retention,
                            **zone_thermal(z, where)))
    given = [z.retention is not None for z in out]
    if any(given) and not all(given):
        missing = ", ".join(repr(z.name) for z in out if z.retention is None)
        raise InputError(f"zone {missing} has no retention: when one zone has retention = {{...}}, every zone "
                         "needs it (the whole run is variably saturated)", where="[[zone]]")
    return tuple(out)


#: Plausibility limit of the van Genuchten / exponential alpha (1/m); clays are near 1 1/m,
#: coarse sands near 15 1/m (Carsel & Parrish 1988, from memory).
ALPHA_MAX = 100.0


def _retention(r: Any, where: str) -> RetentionSpec:
    if not isinstance(r, Mapping):
        raise InputError("retention must be an inline table, e.g. {model = \"van-genuchten\", alpha = \"3.6 1/m\", "
                         "n = 1.56, residual = 0.078, saturated = 0.43}", where=where)
    r = dict(r)
    model = checks.choice(r, "model", ["van-genuchten", "exponential"], where)
    keys = ["model", "alpha", "residual", "saturated"] + (["n"] if model == "van-genuchten" else [])
    checks.reject_unknown(r, keys, where=where)
    alpha = checks.quantity(r, "alpha", "per_length", where, low=0.0, low_inclusive=False, high=ALPHA_MAX,
                            high_hint="1/cm")
    n = checks.number(r, "n", where, low=1.0, high=10.0) if model == "van-genuchten" else None
    if n is not None and n <= 1.0:
        raise InputError(f"n = {n:g} is not allowed; it must be > 1", where=where)
    residual = checks.number(r, "residual", where, low=0.0, high=0.6)
    saturated = checks.number(r, "saturated", where, low=0.01, high=0.8)
    if saturated <= residual:
        raise InputError(f"saturated = {saturated:g} must exceed residual = {residual:g} (water contents)",
                         where=where)
    return RetentionSpec(model, alpha, residual, saturated, n)


class _Clock:
    """The clock of a run while its series are read: the date-time of ``t = 0`` (or None).

    Without ``[time] start`` the first series read with date-times sets it (the stage series is
    read first); every later date-time series is aligned to it.
    """

    def __init__(self, origin: float | None):
        self.origin = origin

    def align(self, series: Series) -> Series:
        if series.origin is None:
            return series
        if self.origin is None:
            self.origin = series.origin
        return series.aligned(self.origin)


def _signal_stage(t: dict, base_dir: Path, grid: GridSpec, t_end: float, clock: _Clock) -> Signal:
    forms = [k for k in ("stage", "stage_csv", "pulse", "flood_wave", "wave") if k in t]
    if len(forms) != 1:
        raise InputError("give exactly one of stage = V, stage_csv = \"file.csv\", [stream.pulse], "
                         f"[stream.flood_wave] or [stream.wave]; found {forms or 'none'}", where="[stream]")
    form = forms[0]
    if form == "stage":
        sig: Signal = Constant(checks.quantity(t, "stage", "length", "[stream]"))
    elif form == "stage_csv":
        sig = _series_from(t, "stage_csv", "[stream]", base_dir, clock)
    elif form == "pulse":
        p = checks.table(t, "pulse", "[stream]")
        w = "[stream.pulse]"
        checks.reject_unknown(p, ["base", "peak", "start", "rise", "fall"], where=w)
        sig = Pulse(checks.quantity(p, "base", "length", w), checks.quantity(p, "peak", "length", w),
                    checks.quantity(p, "start", "time", w, default=0.0, low=0.0),
                    checks.quantity(p, "rise", "time", w, low=0.0, low_inclusive=False),
                    checks.quantity(p, "fall", "time", w, low=0.0, low_inclusive=False))
    elif form == "flood_wave":
        p = checks.table(t, "flood_wave", "[stream]")
        w = "[stream.flood_wave]"
        checks.reject_unknown(p, ["base", "peak_rise", "amplitude", "duration", "decay", "start"], where=w)
        given = [k for k in ("peak_rise", "amplitude") if k in p]
        if len(given) != 1:
            raise InputError("give the flood's height as one of peak_rise (the highest rise of the stage above "
                             "base) or amplitude (Cooper & Rorabaugh's N0: half the peak rise when decay = 0), "
                             f"e.g. peak_rise = \"1.2 m\"; found {given or 'neither'}", where=w)
        height = checks.quantity(p, given[0], "length", w, low=0.0, low_inclusive=False)
        parts = (checks.quantity(p, "base", "length", w), height,
                 checks.quantity(p, "duration", "time", w, low=0.0, low_inclusive=False),
                 _rate(p, "decay", w), checks.quantity(p, "start", "time", w, default=0.0, low=0.0))
        sig = FloodWave(*parts) if given[0] == "peak_rise" else FloodWave.from_n0(*parts)
    else:
        p = checks.table(t, "wave", "[stream]")
        w = "[stream.wave]"
        checks.reject_unknown(p, ["mean", "amplitude", "period"], where=w)
        sig = Wave(checks.quantity(p, "mean", "length", w), checks.quantity(p, "amplitude", "length", w),
                   checks.quantity(p, "period", "time", w, low=0.0, low_inclusive=False))
    _check_head_signal(sig, "stage", "[stream]", grid, t_end)
    return sig


def _rate(t: dict, key: str, where: str) -> float:
    """A decay rate (1/time), written e.g. '0.1 1/d' or a bare number in 1/s."""
    return checks.quantity(t, key, "per_time", where, default=0.0, low=0.0)


def _series_from(t: dict, key: str, where: str, base_dir: Path, clock: _Clock) -> Series:
    name = checks.text(t, key, where)
    path = base_dir / name
    if not path.exists():
        raise InputError(f"the file {name!r} was not found (looked for {path.absolute()}; the path is relative to the "
                         "scenario file's folder)", where=f"{where} {key}")
    try:
        return clock.align(read_series(path, "length", None))
    except InputError as err:
        raise err.located(where=f"{where} {key}") from None


def _check_head_signal(sig: Signal, key: str, where: str, grid: GridSpec, t_end: float) -> None:
    if isinstance(sig, Series):
        sig.check_covers(t_end)
    low, high = sig.bounds(t_end)
    if low < grid.bottom:
        raise InputError(f"{key} falls to {low:g} m, below the model base bottom = {grid.bottom:g} m; "
                         "lower [grid] bottom or check the stage datum", where=where)
    if high > grid.bottom + HEAD_RANGE_MAX:
        raise InputError(f"{key} rises to {high:g} m, more than {HEAD_RANGE_MAX:g} m above the model base "
                         f"({grid.bottom:g} m); check the unit or the datum", where=where)


def _stream(t: dict, base_dir: Path, grid: GridSpec, t_end: float, clock: _Clock) -> StreamSpec | None:
    if not t:
        return None
    where = "[stream]"
    checks.reject_unknown(t, ["stage", "stage_csv", "pulse", "flood_wave", "wave", "channel", "leakance",
                              "bedform", "slope"], where=where)
    stage = _signal_stage(t, base_dir, grid, t_end, clock)
    channel = checks.interval(t, "channel", where, default=None)
    leak = checks.quantity(t, "leakance", "per_time", where, default=None, low=0.0, low_inclusive=False,
                           high=LEAKANCE_MAX, high_hint="1/d")
    bedform = None
    if "bedform" in t:
        bedform = _bedform(checks.table(t, "bedform", where))
    slope = checks.number(t, "slope", where, default=0.0, low=-0.1, high=0.1)
    low = min(stage.bounds(t_end)[0] + slope * x for x in (grid.x0, grid.x1))
    if low < grid.bottom:
        raise InputError(f"with slope = {slope:g} the stage falls to {low:g} m, below the model base "
                         f"bottom = {grid.bottom:g} m", where=where)
    return StreamSpec(stage, channel, leak, bedform, slope)


def _bedform(b: dict) -> BedformSpec:
    where = "[stream.bedform]"
    checks.reject_unknown(b, ["amplitude", "wavelength", "phase", "velocity", "height", "depth"], where=where)
    wavelength = checks.quantity(b, "wavelength", "length", where, low=0.0, low_inclusive=False)
    phase = checks.number(b, "phase", where, default=0.0)
    has_amp = "amplitude" in b
    derived = [k for k in ("velocity", "height", "depth") if k in b]
    if has_amp and derived:
        raise InputError("give either amplitude or velocity, height and depth (Elliott & Brooks 1997)",
                         where=where)
    if has_amp:
        amp = checks.quantity(b, "amplitude", "length", where, low=0.0)
    else:
        if len(derived) != 3:
            raise InputError("without amplitude, give velocity (mean stream velocity), height (bedform "
                             "height) and depth (stream depth)", where=where)
        u = checks.quantity(b, "velocity", "velocity", where, low=0.0, high=10.0)
        h = checks.quantity(b, "height", "length", where, low=0.0, low_inclusive=False)
        d = checks.quantity(b, "depth", "length", where, low=0.0, low_inclusive=False)
        amp = dynamic_head_amplitude(u, h, d)
    return BedformSpec(amp, wavelength, phase)


def _boundary(sides: dict, key: str, stream: StreamSpec | None, base_dir: Path, grid: GridSpec,
              t_end: float, clock: _Clock) -> BoundarySpec:
    where = "[sides]"
    v = sides.get(key, "no-flow")
    if isinstance(v, str):
        if v not in _SIDE_WORDS:
            raise InputError(f"{key} = {v!r} is not allowed; use \"no-flow\", \"periodic\", \"stream\", "
                             "{head = V}, {head_csv = \"file.csv\"} or {flux = V}", where=where)
        if v == "stream" and stream is None:
            raise InputError(f"{key} = \"stream\" needs a [stream] table with the stage", where=where)
        return BoundarySpec(v)
    if not isinstance(v, Mapping) or len(v) != 1:
        raise InputError(f"{key} must be a word or an inline table with one key: {{head = V}}, "
                         f"{{head_csv = \"file.csv\"}} or {{flux = V}}; got {v!r}", where=where)
    (k, _), = v.items()
    w = f"[sides] {key}"
    if k == "head":
        h = checks.quantity(dict(v), "head", "length", w)
        sig: Signal = Constant(h)
        _check_head_signal(sig, "head", w, grid, t_end)
        return BoundarySpec("head", sig)
    if k == "head_csv":
        sig = _series_from(dict(v), "head_csv", w, base_dir, clock)
        _check_head_signal(sig, "head", w, grid, t_end)
        return BoundarySpec("head", sig)
    if k == "flux":
        q = checks.quantity(dict(v), "flux", "velocity", w, low=-1e-2, high=1e-2, high_hint="m/d")
        return BoundarySpec("flux", Constant(q))
    raise InputError(f"unknown key '{k}'; allowed are head, head_csv, flux", where=w)


def _riparian(rs: Any, grid: GridSpec) -> tuple[RiparianSpec, ...]:
    if rs is None:
        return ()
    if not isinstance(rs, list):
        raise InputError("riparian zones are written [[riparian]]", where="top level")
    out = []
    for i, r in enumerate(rs):
        where = f"riparian {i}"
        if not isinstance(r, Mapping):
            raise InputError("must be a table", where=where)
        r = dict(r)
        checks.reject_unknown(r, ["x", "max_rate", "extinction_depth", "root_depth", "daily_cycle", "uptake_heads"], where=where,
                              renamed=RENAMED_RIPARIAN_KEYS)
        xr = checks.interval(r, "x", where)
        max_rate = checks.quantity(r, "max_rate", "velocity", where, low=0.0, high=ET_MAX, high_hint="mm/d")
        ext = checks.quantity(r, "extinction_depth", "length", where, low=0.0, low_inclusive=False, high=30.0)
        root = checks.quantity(r, "root_depth", "length", where, default=0.0, low=0.0, high=30.0)
        cyc = checks.flag(r, "daily_cycle", where)
        heads = _uptake_heads(r, where) if "uptake_heads" in r else RiparianSpec.uptake_heads
        out.append(RiparianSpec(xr, max_rate, ext, root, cyc, heads))
    return tuple(out)


def _uptake_heads(r: dict, where: str) -> tuple[float, float, float, float]:
    """Four pressure heads h1 > h2 > h3 > h4 (<= 0) of the Feddes et al. (1978) uptake reduction."""
    v = r["uptake_heads"]
    if not isinstance(v, list) or len(v) != 4:
        raise InputError(f"uptake_heads must be four pressure heads [h1, h2, h3, h4] (wet limit, full uptake "
                         f"from, full uptake down to, wilting), e.g. [\"-10 cm\", \"-25 cm\", \"-4 m\", \"-80 m\"]; "
                         f"got {v!r}", where=where)
    heads = tuple(checks.quantity({"uptake_heads": h}, "uptake_heads", "length", where, high=0.0) for h in v)
    if not all(a > b for a, b in zip(heads, heads[1:])):
        raise InputError(f"uptake_heads = {v!r} must fall: h1 > h2 > h3 > h4", where=where)
    return heads


def _time(t: dict) -> TimeSpec | None:
    if not t:
        return None
    where = "[time]"
    checks.reject_unknown(t, ["end", "step", "output_every", "scheme", "start"], where=where)
    end = checks.quantity(t, "end", "time", where, low=0.0, low_inclusive=False)
    step = checks.quantity(t, "step", "time", where, low=STEP_MIN)
    every = checks.quantity(t, "output_every", "time", where, default=step, low=STEP_MIN)
    scheme = checks.choice(t, "scheme", ["backward-euler", "crank-nicolson"], where, default="backward-euler")
    if step > end:
        raise InputError(f"step = {step:g} s is longer than end = {end:g} s", where=where)
    if end / step > 2e6:
        raise InputError(f"end / step = {end / step:.3g} steps is more than 2e6; use a longer step", where=where)
    origin = None
    if "start" in t:
        try:
            origin = parse_datetime(t["start"])
        except InputError as err:
            raise err.located(where=f"{where} start") from None
        if origin is None:
            raise InputError(f"start = {t['start']!r} is not a date-time; write it as ISO 8601 local time, "
                             "e.g. start = 2024-06-01T00:00:00 or start = \"2024-06-01 06:30\"",
                             where=f"{where} start")
    if end / every > 2e6:
        raise InputError(f"end / output_every = {end / every:.3g} outputs is more than 2e6; use a longer "
                         "output_every", where=where)
    return TimeSpec(end, step, every, scheme, origin)


# --------------------------------------------------------------------------------------------
# parameter paths

def renamed_path(path: str) -> str | None:
    """The parameter path that replaced an old one (``aquifer.ss`` -> ``aquifer.specific_storage``,
    ``riparian.0.rate`` -> ``riparian.0.max_rate``), or None when ``path`` was not renamed."""
    parts = path.split(".")
    if len(parts) == 2 and parts[1] in RENAMED_ZONE_KEYS and parts[0] not in _TOP_KEYS + ["sides"]:
        return f"{parts[0]}.{RENAMED_ZONE_KEYS[parts[1]]}"
    if len(parts) == 3 and parts[0] == "riparian" and parts[2] in RENAMED_RIPARIAN_KEYS:
        return f"riparian.{parts[1]}.{RENAMED_RIPARIAN_KEYS[parts[2]]}"
    return None


def _locate(raw: dict, path: str, source: str) -> tuple[Any, Any]:
    parts = path.split(".")
    zones = raw.get("zone") or []
    names = [z.get("name") for z in zones if isinstance(z, Mapping)]
    new = renamed_path(path)
    if new is not None and (parts[0] in names or parts[0] == "riparian"):
        raise InputError(f"'{path}' was renamed; write {new}", source=source, where=path)
    if len(parts) == 3 and parts[0] in names and parts[1] == "retention":
        zone = zones[names.index(parts[0])]
        if not isinstance(zone.get("retention"), Mapping) or parts[2] not in zone["retention"] \
                or parts[2] not in ("alpha", "n", "residual", "saturated"):
            raise InputError(f"'{path}' is not a value of zone '{parts[0]}': its retention table has "
                             "alpha, n (van Genuchten), residual and saturated", source=source, where=path)
        return zone["retention"], parts[2]
    if len(parts) == 2 and parts[0] in names:
        if parts[1] not in ZONE_PROPERTIES:
            raise InputError(f"zone property '{parts[1]}' cannot be set; use {', '.join(ZONE_PROPERTIES[:-1])} "
                             f"or {ZONE_PROPERTIES[-1]}", source=source, where=path)
        return zones[names.index(parts[0])], parts[1]
    if parts == ["recharge", "rate"] and "recharge" not in raw:
        raw["recharge"] = {}
    node: Any = raw
    for p in parts[:-1]:
        if isinstance(node, list) and p.isdigit() and int(p) < len(node):
            node = node[int(p)]
        elif isinstance(node, Mapping) and p in node:
            node = node[p]
        else:
            raise InputError(f"unknown parameter path '{path}'; zone paths are "
                             f"{', '.join(n + '.kh' for n in names)} (and .kv .specific_storage "
                             ".specific_yield), table paths e.g. recharge.rate, stream.stage, riparian.0.max_rate, "
                             "sides.left.head",
                             source=source, where=path)
    key = parts[-1]
    if not isinstance(node, Mapping) or (key not in node and key not in ("kv", "rate", "leakance")):
        raise InputError(f"unknown parameter path '{path}': no key '{key}' there", source=source, where=path)
    return node, key


def _set_path(raw: dict, path: str, value: float, source: str) -> None:
    node, key = _locate(raw, path, source)
    node[key] = float(value)


def _resolved_value(s: Scenario, path: str) -> float:
    parts = path.split(".")
    if len(parts) == 3 and parts[0] in s.zone_names() and parts[1] == "retention":
        return float(getattr(s.zones[s.zone_names().index(parts[0])].retention, parts[2]))
    if len(parts) == 2 and parts[0] in s.zone_names():
        value = getattr(s.zones[s.zone_names().index(parts[0])], parts[1])
        if value is None:
            raise InputError(f"zone '{parts[0]}' has no {parts[1]} (the first zone fills the domain)",
                             source=s.source, where=path)
        return float(value)
    if path == "recharge.rate":
        return s.recharge
    if path == "stream.stage" and s.stream is not None and isinstance(s.stream.stage, Constant):
        return s.stream.stage.value
    if parts[0] == "riparian" and len(parts) == 3:
        return float(getattr(s.riparian[int(parts[1])], parts[2]))
    if parts[0] == "sides" and len(parts) == 3:
        b = getattr(s, parts[1])
        if isinstance(b.signal, Constant):
            return b.signal.value
    if path == "stream.leakance" and s.stream is not None and s.stream.leakance is not None:
        return s.stream.leakance
    if parts[:2] == ["stream", "bedform"] and s.stream is not None and s.stream.bedform is not None:
        return float(getattr(s.stream.bedform, parts[2]))
    raise InputError(f"parameter path '{path}' has no single SI value", source=s.source, where=path)
