"""Why a sheet lost most of its rows: name the systematic slip instead of the first bad row.

When more than half of a sheet's rows are rejected, the rows share a cause more often than
not: decimal commas, a separator other than the comma, units typed into the cells, columns
swapped or shifted, site ids written differently from ``sites.csv``, efficiencies in percent,
the sheet pasted twice. :func:`systematic_cause` groups the rejected rows of one sheet by cause
and column and words the largest group as that slip.
"""
from __future__ import annotations

import re
from collections import Counter

from bedflux.field.sheets import Rejected

_DECIMAL_COMMA = re.compile(r"^[-+]?\d+,\d+$")
_NUMBER_WITH_UNIT = re.compile(r"^[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?\s*[A-Za-z%°µ][\w^/ .%]*$")


def _example(cells: list[str]) -> str:
    shown = [c for c in cells if c][:1]
    return f" (e.g. '{shown[0]}')" if shown else ""


def _not_a_number(column: str, cells: list[str], site_ids: set[str]) -> str:
    if cells and all(_DECIMAL_COMMA.match(c) for c in cells):
        return (f"decimal commas in column '{column}'{_example(cells)}: write numbers with a decimal "
                "point")
    if cells and all(_NUMBER_WITH_UNIT.match(c) for c in cells):
        return (f"units typed into the cells of column '{column}'{_example(cells)}: give the unit once, "
                f"in the header, as '{column} [unit]'")
    if cells and sum(c in site_ids for c in cells) > len(cells) / 2:
        return (f"column '{column}' holds site ids{_example(cells)}: the columns are swapped or shifted "
                "against the header")
    return f"text in the number column '{column}'{_example(cells)}"


def _unknown_sites(cells: list[str], site_ids: set[str]) -> str:
    folded = {s.strip().casefold() for s in site_ids}
    near = [c for c in cells if c.strip().casefold() in folded]
    if near and len(near) >= len(cells) / 2:
        match = next(s for s in site_ids if s.strip().casefold() == near[0].strip().casefold())
        return (f"site ids differ from those of sites.csv only in upper/lower case or spaces (e.g. "
                f"'{near[0]}' for '{match}'): write them exactly as in sites.csv")
    return (f"the rows name sites that sites.csv does not list{_example(cells)}: is sites.csv the "
            "campaign's, or are the site ids written differently?")


def _wording(cause: str, column: str, cells: list[str], reasons: list[str], site_ids: set[str]) -> str:
    if cause == "separator":
        return ("the rows are separated by another character than the header (';' or tabs, as "
                "spreadsheets in some languages save CSV): save the sheet with commas between cells")
    if cause == "cells":
        return ("rows have more cells than the header: decimal commas written without quotes (12,5) or "
                "a comma inside a note split the cells; write decimal points and quote notes")
    if cause == "not_a_number":
        return _not_a_number(column, cells, site_ids)
    if cause == "empty":
        return (f"column '{column}' is empty: is it filled in, or have its values slipped into a "
                "neighbouring column?")
    if cause == "below_limit":
        return (f"column '{column}' is below its limit{_example(cells)}: a sign slip, a wrong unit, or two "
                "columns swapped (such as start and end)")
    if cause == "unknown_site":
        return _unknown_sites(cells, site_ids)
    if cause == "duplicate":
        return f"rows repeat earlier rows (same {column}): the readings were entered twice"
    if cause == "percent":
        return (f"'{column}' is written in percent{_example(cells)} where a fraction is expected "
                "(0.77, not 77)")
    return reasons[0]


def systematic_cause(source: str, rejected: Rejected, site_ids: set[str]) -> str:
    """The most likely systematic slip behind the rejected rows of one sheet, in words.

    Parameters
    ----------
    source
        The sheet's file, as recorded in ``rejected``.
    rejected
        Every rejected row with its cause and offending cell.
    site_ids
        The ids of ``sites.csv``, to tell swapped columns and miswritten site ids.

    Returns
    -------
    str
        ``most likely cause: ... (k of the n rejected rows)``, followed by a count of the other
        causes; empty when the sheet lost no rows.
    """
    groups: dict[tuple[str, str], list[int]] = {}
    for i, row in enumerate(rejected.rows):
        if row[0] == source:
            groups.setdefault((rejected.causes[i][0], row[2]), []).append(i)
    if not groups:
        return ""
    (cause, column), members = max(groups.items(), key=lambda kv: len(kv[1]))
    cells = [rejected.causes[i][1] for i in members]
    reasons = [rejected.rows[i][3] for i in members]
    total = sum(len(m) for m in groups.values())
    text = (f"most likely cause: {_wording(cause, column, cells, reasons, site_ids)} "
            f"({len(members)} of the {total} rejected rows)")
    rest = Counter()
    for (c, col), m in groups.items():
        if (c, col) != (cause, column):
            rest[f"{c.replace('_', ' ')}" + (f" in '{col}'" if col else "")] += len(m)
    if rest:
        text += "; other rejections: " + ", ".join(f"{n} {what}" for what, n in rest.most_common())
    return text
