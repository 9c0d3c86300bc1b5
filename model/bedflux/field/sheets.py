"""Field sheets: CSV files whose headers carry units in brackets, read into SI columns.

A header cell is ``name [unit]`` for a number column (``volume_start [mL]``) and a bare
``name`` for a text column (``site``). A wrong or missing unit is an :class:`InputError`
naming the file and the column: a unit slip would spoil every number of that column. A value
outside its column's plausible range is an :class:`InputError` too (naming file, line, column
and the range): it is a slip of unit or column, not a reading. A bad cell only spoils its row:
the row is kept out of the result and listed in :class:`Rejected` with its cause.
"""
from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from bedflux.errors import InputError
from bedflux.scenario.units import DIMENSIONS, split_header, unit_factor

#: A column name of a sheet.
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")


@dataclass(frozen=True)
class Column:
    """One column a sheet may carry.

    Parameters
    ----------
    name
        The header name without its unit.
    dimension
        A dimension word of :data:`bedflux.scenario.units.DIMENSIONS`, or ``None`` for a text column.
    required
        Whether the header must be present.
    default
        SI value used for an empty cell of an optional number column; ``None`` means an empty
        cell stays NaN (the column is optional per row).
    low, low_inclusive
        Smallest allowed SI value (a cell below it rejects the row).
    meaning
        One line for messages.
    plausible
        The SI range a reading of this quantity can take at all; a value outside it stops the
        run with an :class:`InputError` naming file, line, column and range.
    """

    name: str
    dimension: str | None
    required: bool = True
    default: float | None = None
    low: float | None = None
    low_inclusive: bool = True
    meaning: str = ""
    plausible: tuple[float, float] | None = None


@dataclass(frozen=True)
class SheetSpec:
    """The columns of one sheet kind; ``one_of`` lists groups of which exactly one must be present."""

    kind: str
    columns: tuple[Column, ...]
    one_of: tuple[tuple[str, ...], ...] = ()


@dataclass
class Rejected:
    """Rows kept out of the result, each with file, line, column and reason.

    ``causes`` runs parallel to ``rows``: a short cause word (``not_a_number``, ``empty``,
    ``below_limit``, ``cells``, ``separator``, ``unknown_site``, ``duplicate``, ``percent``,
    ``test`` or ``other``) and the offending cell, from which a sheet that loses most of its
    rows is given a systematic cause (:mod:`bedflux.field.diagnosis`).
    """

    rows: list[tuple[str, int, str, str]] = field(default_factory=list)
    causes: list[tuple[str, str]] = field(default_factory=list)

    def add(self, source: str, line: int, column: str, reason: str, cause: str = "other",
            cell: str = "") -> None:
        """Record one rejected row (``line`` counts the header as line 1)."""
        self.rows.append((source, int(line), column, reason))
        self.causes.append((cause, str(cell)))

    def count(self, source: str) -> int:
        """How many rows of ``source`` were rejected."""
        return sum(1 for r in self.rows if r[0] == source)


@dataclass
class Sheet:
    """A read sheet: SI number columns, text columns, and the file line of each kept row."""

    source: str
    kind: str
    numbers: dict[str, np.ndarray]
    texts: dict[str, np.ndarray]
    line: np.ndarray
    rows_read: int
    present: frozenset[str] = frozenset()

    def __len__(self) -> int:
        return int(self.line.size)

    def has(self, name: str) -> bool:
        """Whether the file's header carries column ``name``."""
        return name in self.present

    def take(self, keep: np.ndarray) -> "Sheet":
        """The sheet restricted to the rows where ``keep`` is true."""
        return Sheet(
            self.source,
            self.kind,
            {k: v[keep] for k, v in self.numbers.items()},
            {k: v[keep] for k, v in self.texts.items()},
            self.line[keep],
            self.rows_read,
            self.present,
        )


def _parse_header(cells: list[str], spec: SheetSpec, source: str) -> list[tuple[Column, float]]:
    known = {c.name: c for c in spec.columns}
    out: list[tuple[Column, float]] = []
    seen: set[str] = set()
    for number, cell in enumerate(cells, start=1):
        parsed = split_header(cell)
        if parsed is None or not _NAME.fullmatch(parsed[0]):
            raise InputError(
                f"header cell '{cell}' is not 'name' or 'name [unit]'", source, f"column {number}"
            )
        name, unit = parsed
        if name not in known:
            raise InputError(
                f"unknown column '{name}'; a {spec.kind} sheet allows: {', '.join(known)}",
                source,
                f"column {number}",
            )
        if name in seen:
            raise InputError(f"column '{name}' appears twice", source, f"column {number}")
        seen.add(name)
        col = known[name]
        if col.dimension is None:
            if unit is not None:
                raise InputError(f"column '{name}' is text and takes no unit; got [{unit}]", source, f"column '{name}'")
            out.append((col, 1.0))
            continue
        words = DIMENSIONS[col.dimension][2]
        if unit is None:
            if col.dimension != "dimensionless":
                si = DIMENSIONS[col.dimension][1]
                raise InputError(
                    f"column '{name}' needs its unit in brackets, e.g. '{name} [{si}]' ({words})",
                    source,
                    f"column '{name}'",
                )
            out.append((col, 1.0))
            continue
        try:
            out.append((col, unit_factor(unit, col.dimension)))
        except InputError as err:
            raise err.located(source, f"column '{name}'") from None
    for col in spec.columns:
        if col.required and col.name not in seen:
            raise InputError(f"required column '{col.name}' is missing ({col.meaning})", source)
    for group in spec.one_of:
        present = [g for g in group if g in seen]
        if len(present) != 1:
            raise InputError(
                f"exactly one of the columns {', '.join(group)} must be present; found "
                f"{', '.join(present) if present else 'none'}",
                source,
            )
    return out


#: Separators a spreadsheet may have used instead of the comma.
_OTHER_SEPARATORS = {";": "';'", "\t": "tabs", "|": "'|'"}


def _foreign_separator(cells: list[str]) -> str | None:
    """The separator word when a line came out as one cell holding another separator."""
    if len(cells) != 1:
        return None
    for sep, word in _OTHER_SEPARATORS.items():
        if sep in cells[0]:
            return word
    return None


def _implausible(source: str, line: int, col: Column, cell: str, factor: float, unit: str,
                 written: np.ndarray) -> InputError:
    """The error for a value outside the column's plausible range, with a unit that would fit."""
    lo, hi = col.plausible
    shown = unit or DIMENSIONS[col.dimension][1]
    si = DIMENSIONS[col.dimension][1]
    rng = f"{lo / factor:.6g} to {hi / factor:.6g} {shown}".rstrip()
    if shown != si:
        rng += f" ({lo:.6g} to {hi:.6g} {si})"
    message = (f"{cell} {shown} is outside the plausible range {rng} for {col.meaning or col.name}; "
               "a value this far out is a slip (a wrong unit or a shifted column), not a reading")
    fits = _units_that_fit(written, col.dimension, col.plausible, unit)
    if fits:
        message += (f". Every value of the column would be plausible in {' or '.join(f'[{u}]' for u in fits)}: "
                    f"is the header '{col.name} [{unit}]' right?")
    return InputError(message, source, f"line {line}, column '{col.name}'")


#: Units tried when a column's values are implausible in the header's unit.
_COMMON_UNITS = {
    "length": ("mm", "cm", "m", "km", "in", "ft"),
    "time": ("s", "min", "h", "day"),
    "volume": ("mL", "L", "m^3"),
    "mass": ("g", "kg"),
    "density": ("kg/m^3", "g/cm^3"),
    "area": ("cm^2", "m^2"),
}


def _units_that_fit(written: np.ndarray, dimension: str, plausible: tuple[float, float],
                    header_unit: str) -> list[str]:
    """The common units of ``dimension`` in which every written value would be plausible.

    Parameters
    ----------
    written
        The values as written in the sheet (before any unit conversion).
    dimension
        The column's dimension word.
    plausible
        The SI range.
    header_unit
        The unit in the header (never suggested).
    """
    v = np.asarray(written, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return []
    lo, hi = plausible
    current = unit_factor(header_unit, dimension) if header_unit else 1.0
    fits = []
    for unit in _COMMON_UNITS.get(dimension, ()):
        f = unit_factor(unit, dimension)
        if not np.isclose(f, current, rtol=1e-12) and np.all((v * f >= lo) & (v * f <= hi)):
            fits.append(unit)
    return fits


def read_sheet(path: str | Path, spec: SheetSpec, rejected: Rejected) -> Sheet:
    """Read one sheet into SI columns; bad rows go to ``rejected``.

    Parameters
    ----------
    path
        The CSV file.
    spec
        Its sheet kind.
    rejected
        Collects rows with a non-number in a number column, an empty required cell, or a value
        below the column's limit.

    Returns
    -------
    Sheet
        Kept rows only. Empty cells of optional number columns hold the column default or NaN;
        absent optional number columns are filled the same way.

    Raises
    ------
    InputError
        For an unreadable file, a header separated by something other than commas, a bad header
        (unknown column, missing or wrong unit), a sheet with no data rows, or a value outside
        its column's plausible range.
    """
    path = Path(path)
    source = str(path)
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            lines = list(csv.reader(fh))
    except (OSError, UnicodeDecodeError, csv.Error) as err:
        raise InputError(f"cannot read the sheet ({err})", source) from None
    numbered = [(i, r) for i, r in enumerate(lines, start=1) if any(c.strip() for c in r)]
    if not numbered:
        raise InputError("the sheet is empty; it needs a header line and data rows", source)
    header_line, header = numbered[0]
    sep = _foreign_separator(header)
    if sep:
        raise InputError(f"the header line is separated by {sep}, not by commas; save the sheet as CSV "
                         "with commas between the cells (and decimal points in numbers)", source,
                         f"line {header_line}")
    columns = _parse_header([c.strip() for c in header], spec, source)
    body = numbered[1:]
    if not body:
        raise InputError("the sheet has a header but no data rows", source)
    n = len(body)
    ncol = len(columns)
    raw = np.full((n, ncol), "", dtype=object)
    line = np.array([i for i, _ in body], dtype=int)
    ok = np.ones(n, dtype=bool)
    for k, (i, cells) in enumerate(body):
        sep = _foreign_separator(cells) if ncol > 1 else None
        if sep:
            rejected.add(source, i, "", f"the row is one cell separated by {sep}, but the header by commas",
                         "separator", cells[0])
            ok[k] = False
            continue
        if len(cells) > ncol and any(c.strip() for c in cells[ncol:]):
            rejected.add(source, i, "", f"{len(cells)} cells but the header has {ncol} columns", "cells",
                         ",".join(cells))
            ok[k] = False
            continue
        cells = [c.strip() for c in cells[:ncol]] + [""] * max(0, ncol - len(cells))
        raw[k, :] = cells
    numbers: dict[str, np.ndarray] = {}
    texts: dict[str, np.ndarray] = {}
    written: dict[str, np.ndarray] = {}
    for j, (col, factor) in enumerate(columns):
        cells = raw[:, j]
        empty = cells == ""
        if col.dimension is None:
            missing = empty & ok & col.required
            for k in np.flatnonzero(missing):
                rejected.add(source, line[k], col.name, f"empty cell; '{col.name}' is required ({col.meaning})",
                             "empty")
            ok &= ~missing
            texts[col.name] = cells.astype(str)
            continue
        values = np.full(n, np.nan)
        as_written = np.full(n, np.nan)
        for k in np.flatnonzero(~empty & ok):
            try:
                v = float(cells[k])
            except ValueError:
                v = np.nan
            if not np.isfinite(v):
                rejected.add(
                    source, line[k], col.name,
                    f"'{cells[k]}' is not a number; '{col.name}' must be {DIMENSIONS[col.dimension][2]}",
                    "not_a_number", cells[k],
                )
                ok[k] = False
                continue
            as_written[k] = v
            values[k] = v * factor
        if col.required:
            for k in np.flatnonzero(empty & ok):
                rejected.add(source, line[k], col.name, f"empty cell; '{col.name}' is required ({col.meaning})",
                             "empty")
            ok &= ~empty
        elif col.default is not None:
            values[empty] = col.default
        if col.low is not None:
            below = ok & np.isfinite(values) & ((values < col.low) if col.low_inclusive else (values <= col.low))
            rel = ">=" if col.low_inclusive else ">"
            for k in np.flatnonzero(below):
                rejected.add(
                    source, line[k], col.name,
                    f"'{cells[k]}' is not allowed; '{col.name}' must be {rel} {col.low:g} "
                    f"{DIMENSIONS[col.dimension][1] or ''}".rstrip(),
                    "below_limit", cells[k],
                )
            ok &= ~below
        numbers[col.name] = values
        written[col.name] = as_written
    for j, (col, factor) in enumerate(columns):
        if col.plausible is None or col.name not in numbers:
            continue
        lo, hi = col.plausible
        v = numbers[col.name]
        out = ok & np.isfinite(v) & ((v < lo) | (v > hi))
        if out.any():
            k = int(np.flatnonzero(out)[0])
            unit = split_header(header[j])[1] or ""
            raise _implausible(source, int(line[k]), col, raw[k, j], factor, unit,
                               written[col.name][ok])
    for col in spec.columns:
        if col.name in numbers or col.name in texts:
            continue
        if col.dimension is None:
            texts[col.name] = np.full(n, "", dtype=object).astype(str)
        else:
            numbers[col.name] = np.full(n, np.nan if col.default is None else col.default)
    present = frozenset(c.name for c, _ in columns)
    return Sheet(source, spec.kind, numbers, texts, line, n, present).take(ok)


def reject_where(sheet: Sheet, bad: np.ndarray, column: str, reasons: list[str] | str, rejected: Rejected,
                 cause: str = "other") -> Sheet:
    """Move the rows where ``bad`` is true to ``rejected`` with their reasons; return the rest.

    The offending cell recorded with each row is the row's value in ``column`` when the sheet
    has such a column.
    """
    bad = np.asarray(bad, dtype=bool)
    idx = np.flatnonzero(bad)
    values = sheet.texts.get(column, sheet.numbers.get(column))
    for j, k in enumerate(idx):
        reason = reasons if isinstance(reasons, str) else reasons[j]
        cell = "" if values is None else str(values[k])
        rejected.add(sheet.source, sheet.line[k], column, reason, cause, cell)
    return sheet.take(~bad)


def reject_unknown_sites(sheet: Sheet, site_ids: set[str], rejected: Rejected) -> Sheet:
    """Reject rows whose ``site`` is not in the sites sheet."""
    sites = sheet.texts["site"]
    bad = np.array([s not in site_ids for s in sites], dtype=bool)
    reasons = [f"site '{s}' is not in the sites sheet" for s in sites[bad]]
    return reject_where(sheet, bad, "site", reasons, rejected, "unknown_site")


def reject_duplicates(sheet: Sheet, keys: tuple[str, ...], rejected: Rejected) -> Sheet:
    """Reject every row whose ``keys`` repeat an earlier row's; the first occurrence is kept."""
    first: dict[tuple, int] = {}
    bad = np.zeros(len(sheet), dtype=bool)
    reasons = []
    for k in range(len(sheet)):
        key = tuple(
            sheet.texts[c][k] if c in sheet.texts else round(float(sheet.numbers[c][k]), 9) for c in keys
        )
        if key in first:
            bad[k] = True
            reasons.append(f"duplicates line {first[key]} (same {', '.join(keys)})")
        else:
            first[key] = int(sheet.line[k])
    return reject_where(sheet, bad, ",".join(keys), reasons, rejected, "duplicate")
