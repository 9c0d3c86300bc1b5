"""Time signals for stream stage and boundary heads, and the daily cycle of riparian uptake.

Every signal maps elapsed time t (s since the start of the run) to a value (m). The forms:

``Constant``
    value.
``Pulse`` (base, peak, start, rise, fall)
    base before ``start``; a half-cosine rise to ``peak`` over ``rise``:
    ``base + (peak - base) (1 - cos(pi s / rise)) / 2`` with ``s = t - start``; then an exponential
    recession ``base + (peak - base) exp(-(s - rise) / fall)``. The stage is continuous; its
    slope is continuous at the start and at the peak from below, and drops to
    ``-(peak - base) / fall`` at the start of the recession.
``FloodWave`` (base, peak rise, duration tau, decay delta, start)
    ``base + N0 exp(-delta s) (1 - cos(2 pi s / tau))`` for ``0 <= s <= tau``, base otherwise: the
    flood hydrograph of Cooper & Rorabaugh (1963). The input is the peak rise above base (what a
    practitioner calls the height of the flood); ``N0`` follows from it: the hydrograph peaks at
    ``s_p = (2 / omega) arctan(omega / delta)`` (``omega = 2 pi / tau``; ``tau / 2`` when
    ``delta = 0``), so ``N0 = rise / (exp(-delta s_p) (1 - cos(omega s_p)))`` (``rise / 2``
    when ``delta = 0``).
``Wave`` (mean, amplitude, period, phase)
    ``mean + amplitude sin(2 pi t / period + phase)`` (phase in radians, 0 by default).
``Series``
    a measured series, linearly interpolated; read from CSV by :func:`read_series`.

Every signal also gives its highest value over a run (``highest(t_end)``: the time and the value).

The daily cycle of riparian uptake (:func:`daylight_mean`) follows the clock of the run: no
uptake between sunset (18:00) and sunrise (06:00), a half-sine by day peaking at solar noon
(12:00), scaled so that its daily mean is 1. Steps use its exact mean over the step.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from bedflux.errors import InputError
from bedflux.scenario.inputfile import regular_file
from bedflux.scenario.units import SECONDS_PER_DAY, split_header, unit_factor

#: Clock times (s after midnight) of sunrise and sunset of the daily uptake cycle.
SUNRISE = 6 * 3600.0
SUNSET = 18 * 3600.0


def _highest(signal, candidates) -> tuple[float, float]:
    """Time and value of the highest of ``signal`` at the candidate times (earliest on ties)."""
    t = np.asarray(sorted(candidates), dtype=float)
    v = signal(t)
    i = int(np.argmax(v))
    return float(t[i]), float(v[i])


@dataclass(frozen=True)
class Constant:
    """A value that does not change."""

    value: float

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return np.full(np.shape(t), self.value, dtype=float)

    def bounds(self, t_end: float) -> tuple[float, float]:
        """Lowest and highest value over ``[0, t_end]``."""
        return (self.value, self.value)

    def highest(self, t_end: float) -> tuple[float, float]:
        """Time and value of the highest value over ``[0, t_end]`` (the earliest such time)."""
        return (0.0, self.value)


@dataclass(frozen=True)
class Pulse:
    """A smooth rise from ``base`` to ``peak`` and an exponential recession (see module doc)."""

    base: float
    peak: float
    start: float
    rise: float
    fall: float

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        s = np.asarray(t, dtype=float) - self.start
        amp = self.peak - self.base
        rising = self.base + amp * 0.5 * (1.0 - np.cos(np.pi * np.clip(s, 0.0, self.rise) / self.rise))
        falling = self.base + amp * np.exp(-np.maximum(s - self.rise, 0.0) / self.fall)
        return np.where(s <= 0.0, self.base, np.where(s <= self.rise, rising, falling))

    def bounds(self, t_end: float) -> tuple[float, float]:
        return (min(self.base, self.peak), max(self.base, self.peak))

    def highest(self, t_end: float) -> tuple[float, float]:
        # the stage is monotone between these times
        return _highest(self, [0.0, t_end] + [t for t in (self.start, self.start + self.rise) if t < t_end])


@dataclass(frozen=True)
class FloodWave:
    """Cooper & Rorabaugh (1963) flood hydrograph given by its peak rise above base (module doc)."""

    base: float
    rise: float
    duration: float
    decay: float
    start: float

    @property
    def peak_delay(self) -> float:
        """Time from the start of the wave to its peak, ``(2 / omega) arctan(omega / delta)`` (s)."""
        omega = 2.0 * np.pi / self.duration
        return float(2.0 / omega * np.arctan2(omega, self.decay))

    @classmethod
    def from_n0(cls, base: float, n0: float, duration: float, decay: float, start: float) -> "FloodWave":
        """The wave of Cooper & Rorabaugh's ``N0`` (m): its peak rise is
        ``N0 exp(-delta s) (1 - cos(omega s))`` at the peak delay ``s``."""
        omega = 2.0 * np.pi / duration
        s = 2.0 / omega * np.arctan2(omega, decay)
        return cls(base, float(n0 * np.exp(-decay * s) * (1.0 - np.cos(omega * s))), duration, decay, start)

    @property
    def n0(self) -> float:
        """Cooper & Rorabaugh's N0 (m): half the peak rise when the decay is zero."""
        omega = 2.0 * np.pi / self.duration
        s = self.peak_delay
        return self.rise / (np.exp(-self.decay * s) * (1.0 - np.cos(omega * s)))

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        s = np.asarray(t, dtype=float) - self.start
        inside = (s >= 0.0) & (s <= self.duration)
        sc = np.clip(s, 0.0, self.duration)
        wave = self.n0 * np.exp(-self.decay * sc) * (1.0 - np.cos(2.0 * np.pi * sc / self.duration))
        return self.base + np.where(inside, wave, 0.0)

    def bounds(self, t_end: float) -> tuple[float, float]:
        return (self.base, self.base + self.rise)

    def highest(self, t_end: float) -> tuple[float, float]:
        inside = [t for t in (self.start, self.start + self.peak_delay, self.start + self.duration) if t < t_end]
        return _highest(self, [0.0, t_end] + inside)


@dataclass(frozen=True)
class Wave:
    """A sinusoid ``mean + amplitude sin(2 pi t / period + phase)`` (``phase`` in radians)."""

    mean: float
    amplitude: float
    period: float
    phase: float = 0.0

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return self.mean + self.amplitude * np.sin(2.0 * np.pi * np.asarray(t, dtype=float) / self.period
                                                   + self.phase)

    def bounds(self, t_end: float) -> tuple[float, float]:
        return (self.mean - abs(self.amplitude), self.mean + abs(self.amplitude))

    def highest(self, t_end: float) -> tuple[float, float]:
        crest = 0.25 if self.amplitude >= 0.0 else 0.75
        first = ((crest - self.phase / (2.0 * np.pi)) % 1.0) * self.period
        return _highest(self, [0.0, t_end] + ([first] if first < t_end else []))


@dataclass(frozen=True)
class Series:
    """A measured series interpolated linearly in time.

    ``origin`` is the clock time of its ``t = 0`` (s since 1970-01-01 00:00, local clock) when
    the file gives date-times, None for elapsed times.
    """

    times: tuple[float, ...]
    values: tuple[float, ...]
    source: str = field(default="series")
    origin: float | None = None

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return np.interp(np.asarray(t, dtype=float), np.asarray(self.times), np.asarray(self.values))

    def bounds(self, t_end: float) -> tuple[float, float]:
        t = np.asarray(self.times)
        v = np.asarray(self.values)
        keep = t <= t_end
        inside = np.concatenate([v[keep], np.atleast_1d(self(t_end))])
        return (float(inside.min()), float(inside.max()))

    def highest(self, t_end: float) -> tuple[float, float]:
        t = np.asarray(self.times)
        return _highest(self, [0.0, t_end] + list(t[(t > 0.0) & (t < t_end)]))

    def aligned(self, origin: float) -> "Series":
        """The series on a run clock whose ``t = 0`` is at ``origin`` (date-time series only)."""
        shift = self.origin - origin
        return replace(self, times=tuple(t + shift for t in self.times), origin=origin)

    def check_covers(self, t_end: float) -> None:
        """Raise unless the series spans ``[0, t_end]``."""
        if self.times[0] > 0.0 or self.times[-1] < t_end:
            clock = ""
            if self.origin is not None:
                t0 = np.datetime64(int(round(self.origin)), "s")
                clock = f" (t = 0 is {t0}: [time] start, or the first date-time of the stage series)"
            raise InputError(
                f"the series covers t = {self.times[0]:g} s to {self.times[-1]:g} s but the run needs "
                f"0 to {t_end:g} s{clock}; extend the series or shorten [time] end",
                source=self.source,
            )


Signal = Constant | Pulse | FloodWave | Wave | Series


def read_series(path: str | Path, dimension: str = "length", value_name: str | None = None) -> Series:
    """Read a two-column time series from CSV.

    The first column is time: elapsed time with a unit in the header (``time [h]``) or
    date-times (``datetime``; elapsed time then counts from the first row, whose clock time is
    kept as the series' ``origin`` for :meth:`Series.aligned`). The value column
    (``value_name`` if given, else the second column) carries its unit in brackets
    (``stage [m]``, ``stage [cm]``).

    Raises
    ------
    InputError
        Naming the file and row for a missing file, a header without a unit, a non-numeric or
        empty cell, unsorted or duplicated times.
    """
    path = Path(path)
    source = str(path)
    regular_file(path, "CSV file")
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            rows = [r for r in csv.reader(fh) if any(c.strip() for c in r)]
    except UnicodeDecodeError:
        raise InputError("not a UTF-8 text file (save the series as CSV in UTF-8)", source=source) from None
    except (csv.Error, IsADirectoryError) as err:
        raise InputError(f"cannot read as CSV: {err}", source=source) from None
    if len(rows) < 3:
        raise InputError("a series needs a header row and at least two data rows", source=source)
    header = rows[0]
    names = [split_header(h) or (h.strip(), None) for h in header]
    if value_name is None:
        if len(header) < 2:
            raise InputError("expected two columns: time and value", source=source, where="row 1")
        vcol = 1
    else:
        matches = [i for i, (n, _) in enumerate(names) if n == value_name]
        if not matches:
            raise InputError(f"no column named '{value_name} [unit]'; columns are: {', '.join(header)}",
                             source=source, where="row 1")
        vcol = matches[0]
    tname, tunit = names[0]
    vname, vunit = names[vcol]
    if vunit is None:
        raise InputError(f"column '{header[vcol]}' needs its unit in brackets, e.g. '{vname} [m]'",
                         source=source, where="row 1")
    try:
        vfac = unit_factor(vunit, dimension)
        tfac = unit_factor(tunit, "time") if tunit is not None else None
    except InputError as err:
        raise err.located(source=source, where="row 1") from None
    times: list[float] = []
    values: list[float] = []
    t0 = None
    for irow, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            raise InputError(f"expected {len(header)} cells like the header; got {len(row)}", source=source,
                             where=f"row {irow}")
        tcell, vcell = row[0].strip(), row[vcol].strip()
        if not tcell or not vcell:
            raise InputError("empty cell: a gap in the series (fill it or remove the row)",
                             source=source, where=f"row {irow}")
        if tfac is not None:
            try:
                t = float(tcell) * tfac
            except ValueError:
                raise InputError(f"time '{tcell}' is not a number ({tname} [{tunit}])",
                                 source=source, where=f"row {irow}") from None
        else:
            t = _parse_datetime(tcell, source, irow)
            t0 = t if t0 is None else t0
            t = t - t0
        try:
            v = float(vcell) * vfac
        except ValueError:
            raise InputError(f"value '{vcell}' in column '{header[vcol]}' is not a number",
                             source=source, where=f"row {irow}") from None
        if not (np.isfinite(t) and np.isfinite(v)):
            raise InputError("values must be finite numbers", source=source, where=f"row {irow}")
        if times and t == times[-1]:
            raise InputError(f"duplicate time {tcell}", source=source, where=f"row {irow}")
        if times and t < times[-1]:
            raise InputError(f"time {tcell} is earlier than the row before; times must increase",
                             source=source, where=f"row {irow}")
        times.append(t)
        values.append(v)
    return Series(tuple(times), tuple(values), source, t0)


def _parse_datetime(cell: str, source: str, irow: int) -> float:
    try:
        stamp = np.datetime64(cell.replace(" ", "T"), "s")
    except ValueError:
        raise InputError(
            f"'{cell}' is neither a date-time (YYYY-MM-DD HH:MM[:SS]) nor a number; for elapsed time "
            "put the unit in the header, e.g. 'time [h]'", source=source, where=f"row {irow}") from None
    return float(stamp.astype("int64"))


def parse_datetime(value: object) -> float | None:
    """Seconds since 1970-01-01 00:00 of an ISO 8601 local date-time (a TOML date-time, a date,
    or text such as ``"2024-06-01T03:00"``); None when ``value`` is not one.

    Raises
    ------
    InputError
        For a date-time with a time-zone offset (the clock of a run is local time).
    """
    import datetime as _dt

    if isinstance(value, str):
        try:
            value = _dt.datetime.fromisoformat(value.strip())
        except ValueError:
            return None
    if isinstance(value, _dt.date) and not isinstance(value, _dt.datetime):
        value = _dt.datetime(value.year, value.month, value.day)
    if not isinstance(value, _dt.datetime):
        return None
    if value.tzinfo is not None:
        raise InputError(f"{value.isoformat()} has a time-zone offset; write the local clock time "
                         "without one (the daily cycle takes 12:00 as solar noon)")
    return (value - _dt.datetime(1970, 1, 1)).total_seconds()


def _daylight_integral(clock: np.ndarray) -> np.ndarray:
    """Integral (s) of the daily cycle from a midnight to ``clock`` s later (any number of days)."""
    days, tau = np.divmod(np.asarray(clock, dtype=float), SECONDS_PER_DAY)
    light = SUNSET - SUNRISE
    within = SECONDS_PER_DAY / 2.0 * (1.0 - np.cos(np.pi * np.clip(tau - SUNRISE, 0.0, light) / light))
    return days * SECONDS_PER_DAY + within


def daylight_factor(clock: float) -> float:
    """The daily cycle at a clock time (s after a midnight): ``pi sin(pi (c - 6 h) / 12 h)`` by
    day (peak pi at noon), 0 at night; its daily mean is 1."""
    tau = clock % SECONDS_PER_DAY
    if tau < SUNRISE or tau > SUNSET:
        return 0.0
    light = SUNSET - SUNRISE
    return float(np.pi * SECONDS_PER_DAY / (2.0 * light) * np.sin(np.pi * (tau - SUNRISE) / light))


def daylight_mean(t0: float, t1: float, clock0: float = 0.0) -> float:
    """Mean of the daily cycle over run times ``[t0, t1]`` whose ``t = 0`` is at clock time
    ``clock0`` (s after a midnight); the value at ``t0`` when ``t1 == t0``.

    The exact integral of the half-sine, so the uptake of a day does not depend on the step.
    """
    if t1 <= t0:
        return daylight_factor(clock0 + t0)
    c0 = clock0 % SECONDS_PER_DAY
    # integrate from the midnight before t = 0, so that both ends stay small numbers of days
    a, b = _daylight_integral(np.array([c0 + t0, c0 + t1]))
    return float((b - a) / (t1 - t0))
