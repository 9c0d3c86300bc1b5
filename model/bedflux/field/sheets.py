"""Field sheets: CSV files whose headers carry units in brackets, read into SI columns.

A header cell is ``name [unit]`` for a number column (``volume_start [mL]``) and a bare
``name`` for a text column (``site``). A wrong or missing unit is an :class:`InputError`
naming the file and the column: a unit slip would spoil every number of that column. A bad
cell only spoils its row: the row is kept out of the result and listed in :class:`Rejected`.
"""
from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..units import DIMENSIONS, unit_factor

_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[(.*)\])?\s*$")


@dataclass(frozen=True)
class Column:
    """One column a sheet may carry.

    Parameters
    ----------
    name
        The header name without its unit.
    dimension
        A dimension word of :data:`bedflux.units.DIMENSIONS`, or ``None`` for a text column.
    required
        Whether the header must be present.
    default
        SI value used for an empty cell of an optional number column; ``None`` means an empty
        cell stays NaN (the column is optional per row).
    low, low_inclusive
        Smallest allowed SI value (a cell below it rejects the row).
    meaning
        One line for messages.
    """

    name: str
    dimension: str | None
    required: bool = True
    default: float | None = None
    low: float | None = None
    low_inclusive: bool = True
    meaning: str = ""


@dataclass(frozen=True)
class SheetSpec:
    """The columns of one sheet kind; ``one_of`` lists groups of which exactly one must be present."""

    kind: str
    columns: tuple[Column, ...]
    one_of: tuple[tuple[str, ...], ...] = ()


@dataclass
class Rejected:
    """Rows kept out of the result, each with file, line, column and reason."""

    rows: list[tuple[str, int, str, str]] = field(default_factory=list)

    def add(self, source: str, line: int, column: str, reason: str) -> None:
        """Record one rejected row (``line`` counts the header as line 1)."""
        self.rows.append((source, int(line), column, reason))

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
        m = _HEADER.match(cell)
        if not m:
            raise InputError(
                f"header cell '{cell}' is not 'name' or 'name [unit]'", source, f"column {number}"
            )
        name, unit = m.group(1), m.group(2)
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
        For an unreadable file, a bad header (unknown column, missing or wrong unit) or a sheet
        with no data rows.
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
        if len(cells) > ncol and any(c.strip() for c in cells[ncol:]):
            rejected.add(source, i, "", f"{len(cells)} cells but the header has {ncol} columns")
            ok[k] = False
            continue
        cells = [c.strip() for c in cells[:ncol]] + [""] * max(0, ncol - len(cells))
        raw[k, :] = cells
    numbers: dict[str, np.ndarray] = {}
    texts: dict[str, np.ndarray] = {}
    for j, (col, factor) in enumerate(columns):
        cells = raw[:, j]
        empty = cells == ""
        if col.dimension is None:
            missing = empty & ok & col.required
            for k in np.flatnonzero(missing):
                rejected.add(source, line[k], col.name, f"empty cell; '{col.name}' is required ({col.meaning})")
            ok &= ~missing
            texts[col.name] = cells.astype(str)
            continue
        values = np.full(n, np.nan)
        for k in np.flatnonzero(~empty & ok):
            try:
                v = float(cells[k])
            except ValueError:
                v = np.nan
            if not np.isfinite(v):
                rejected.add(
                    source, line[k], col.name,
                    f"'{cells[k]}' is not a number; '{col.name}' must be {DIMENSIONS[col.dimension][2]}",
                )
                ok[k] = False
                continue
            values[k] = v * factor
        if col.required:
            for k in np.flatnonzero(empty & ok):
                rejected.add(source, line[k], col.name, f"empty cell; '{col.name}' is required ({col.meaning})")
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
                )
            ok &= ~below
        numbers[col.name] = values
    for col in spec.columns:
        if col.name in numbers or col.name in texts:
            continue
        if col.dimension is None:
            texts[col.name] = np.full(n, "", dtype=object).astype(str)
        else:
            numbers[col.name] = np.full(n, np.nan if col.default is None else col.default)
    present = frozenset(c.name for c, _ in columns)
    return Sheet(source, spec.kind, numbers, texts, line, n, present).take(ok)


def reject_where(sheet: Sheet, bad: np.ndarray, column: str, reasons: list[str] | str, rejected: Rejected) -> Sheet:
    """Move the rows where ``bad`` is true to ``rejected`` with their reasons; return the rest."""
    bad = np.asarray(bad, dtype=bool)
    idx = np.flatnonzero(bad)
    for j, k in enumerate(idx):
        reason = reasons if isinstance(reasons, str) else reasons[j]
        rejected.add(sheet.source, sheet.line[k], column, reason)
    return sheet.take(~bad)


def reject_unknown_sites(sheet: Sheet, site_ids: set[str], rejected: Rejected) -> Sheet:
    """Reject rows whose ``site`` is not in the sites sheet."""
    sites = sheet.texts["site"]
    bad = np.array([s not in site_ids for s in sites], dtype=bool)
    reasons = [f"site '{s}' is not in the sites sheet" for s in sites[bad]]
    return reject_where(sheet, bad, "site", reasons, rejected)


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
    return reject_where(sheet, bad, ",".join(keys), reasons, rejected)
