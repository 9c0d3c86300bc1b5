"""Time signals for stream stage and boundary heads.

Every signal maps elapsed time t (s since the start of the run) to a value (m). The forms:

``Constant``
    value.
``Pulse`` (base, peak, start, rise, fall)
    base before ``start``; a half-cosine rise to ``peak`` over ``rise``:
    ``base + (peak - base) (1 - cos(pi s / rise)) / 2`` with ``s = t - start``; then an exponential
    recession ``base + (peak - base) exp(-(s - rise) / fall)``. The stage is continuous; its
    slope is continuous at the start and at the peak from below, and drops to
    ``-(peak - base) / fall`` at the start of the recession.
``FloodWave`` (base, amplitude N0, duration tau, decay delta, start)
    ``base + N0 exp(-delta s) (1 - cos(2 pi s / tau))`` for ``0 <= s <= tau``, base otherwise: the
    flood hydrograph of Cooper & Rorabaugh (1963).
``Wave`` (mean, amplitude, period)
    ``mean + amplitude sin(2 pi t / period)``.
``Series``
    a measured series, linearly interpolated; read from CSV by :func:`read_series`.
"""
from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError
from .inputfile import regular_file
from .units import unit_factor

_HEADER = re.compile(r"^\s*([^\[\]]+?)\s*\[\s*([^\]]*)\s*\]\s*$")


@dataclass(frozen=True)
class Constant:
    """A value that does not change."""

    value: float

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return np.full(np.shape(t), self.value, dtype=float)

    def bounds(self, t_end: float) -> tuple[float, float]:
        """Lowest and highest value over ``[0, t_end]``."""
        return (self.value, self.value)


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


@dataclass(frozen=True)
class FloodWave:
    """Cooper & Rorabaugh (1963) flood hydrograph (see module doc)."""

    base: float
    amplitude: float
    duration: float
    decay: float
    start: float

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        s = np.asarray(t, dtype=float) - self.start
        inside = (s >= 0.0) & (s <= self.duration)
        sc = np.clip(s, 0.0, self.duration)
        wave = self.amplitude * np.exp(-self.decay * sc) * (1.0 - np.cos(2.0 * np.pi * sc / self.duration))
        return self.base + np.where(inside, wave, 0.0)

    def bounds(self, t_end: float) -> tuple[float, float]:
        s = np.linspace(0.0, self.duration, 2001)
        v = self(s + self.start)
        return (float(min(v.min(), self.base)), float(max(v.max(), self.base)))


@dataclass(frozen=True)
class Wave:
    """A sinusoid ``mean + amplitude sin(2 pi t / period)``."""

    mean: float
    amplitude: float
    period: float

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return self.mean + self.amplitude * np.sin(2.0 * np.pi * np.asarray(t, dtype=float) / self.period)

    def bounds(self, t_end: float) -> tuple[float, float]:
        return (self.mean - abs(self.amplitude), self.mean + abs(self.amplitude))


@dataclass(frozen=True)
class Series:
    """A measured series interpolated linearly in time."""

    times: tuple[float, ...]
    values: tuple[float, ...]
    source: str = field(default="series")

    def __call__(self, t: np.ndarray | float) -> np.ndarray:
        return np.interp(np.asarray(t, dtype=float), np.asarray(self.times), np.asarray(self.values))

    def bounds(self, t_end: float) -> tuple[float, float]:
        t = np.asarray(self.times)
        v = np.asarray(self.values)
        keep = t <= t_end
        inside = np.concatenate([v[keep], np.atleast_1d(self(t_end))])
        return (float(inside.min()), float(inside.max()))

    def check_covers(self, t_end: float) -> None:
        """Raise unless the series spans ``[0, t_end]``."""
        if self.times[0] > 0.0 or self.times[-1] < t_end:
            raise InputError(
                f"the series covers t = {self.times[0]:g} s to {self.times[-1]:g} s but the run needs "
                f"0 to {t_end:g} s; extend the series or shorten [time] end",
                source=self.source,
            )


Signal = Constant | Pulse | FloodWave | Wave | Series


def _split_header(name: str, source: str, column: int) -> tuple[str, str | None]:
    m = _HEADER.match(name)
    if not m:
        return name.strip(), None
    return m.group(1).strip(), m.group(2).strip()


def read_series(path: str | Path, dimension: str = "length", value_name: str | None = None) -> Series:
    """Read a two-column time series from CSV.

    The first column is time: elapsed time with a unit in the header (``time [h]``) or
    date-times (``datetime``; elapsed time then counts from the first row). The value column
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
    names = [_split_header(h, source, i) for i, h in enumerate(header)]
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
    return Series(tuple(times), tuple(values), source)


def _parse_datetime(cell: str, source: str, irow: int) -> float:
    try:
        stamp = np.datetime64(cell.replace(" ", "T"), "s")
    except ValueError:
        raise InputError(
            f"'{cell}' is neither a date-time (YYYY-MM-DD HH:MM[:SS]) nor a number; for elapsed time "
            "put the unit in the header, e.g. 'time [h]'", source=source, where=f"row {irow}") from None
    return float(stamp.astype("int64"))
