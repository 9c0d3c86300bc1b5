"""Conditioning values of a random field read from a field folder's slug-test and permeameter sheets.

``condition = "field"`` on a ``[[random_field]]`` reduces the folder with
:func:`bedflux.field.reduce_field` and gives the field the same ``(x, depth, k)`` points as an
inline ``condition`` list: a field on ``kh`` takes the slug tests (Hvorslev K), a field on ``kv``
the permeameter tests (the standpipe's vertical K). ``x`` is the test's site's ``x``; the depth
below the bed is the ``depth [m]`` of the reduced test (docs/field.md). Tests without a depth are
left out with a warning naming the sheet, the tests and their lines; tests at the same place
give one value, the geometric mean of their K.
"""
from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

from bedflux.errors import InputError
from bedflux.field.run import reduce_field

#: field property -> (sheet kind, reduced table attribute, K column)
SOURCES = {"kh": ("slug", "slug", "k_hvorslev [m/s]"), "kv": ("permeameter", "permeameter", "kv [m/s]")}


def field_conditions(folder: str | Path, prop: str, where: str) -> tuple[tuple[float, float, float], ...]:
    """The ``(x, depth, k)`` points (SI) of a field folder's tests for a field on ``prop``.

    Raises
    ------
    InputError
        Naming ``where``: no such folder, a property other than kh or kv, a folder without the
        sheet the property needs or without any test that gives a depth; the field reduction's
        own errors name the sheet and row.
    """
    folder = Path(folder)
    if prop not in SOURCES:
        raise InputError("a conditioned field is on kh (slug tests) or kv (permeameters); property = \"k\" "
                         "cannot be conditioned", where=where)
    if not folder.is_dir():
        raise InputError(f"condition = {str(folder)!r}: no such field folder (the path is relative to the "
                         "ensemble file's folder)", where=where)
    kind, attribute, column = SOURCES[prop]
    reduction = reduce_field(folder)
    tests = getattr(reduction, attribute)
    if tests is None or tests.empty:
        raise InputError(f"the field folder {folder} has no {kind} tests ({kind}.csv), which a field on {prop} "
                         "is conditioned on", where=where)
    sheet = reduction.sheets[kind]
    no_depth = tests["depth [m]"].isna()
    if no_depth.any():
        named = [f"'{t}' (lines {_lines(sheet, t)})" for t in tests.loc[no_depth, "test"]]
        warnings.warn(f"{sheet.source}: tests {', '.join(named)} give no depth below the bed and are left out "
                      f"of the conditioning of {where}", stacklevel=2)
    used = tests[~no_depth]
    if used.empty:
        raise InputError(f"no {kind} test of {sheet.source} gives a depth below the bed; "
                         + ("add screen_depth, or water_depth beside well_depth" if kind == "slug"
                            else "add sample_depth"), where=where)
    sites = reduction.sites
    x = np.array([sites.x[sites.index(s)] for s in used["site"]])
    depth = used["depth [m]"].to_numpy(float)
    log_k = np.log10(used[column].to_numpy(float))
    places = sorted({(float(a), float(b)) for a, b in zip(x, depth)})
    return tuple((a, b, float(10.0 ** log_k[(x == a) & (depth == b)].mean())) for a, b in places)


def _lines(sheet, test: str) -> str:
    lines = sheet.line[sheet.texts["test"] == test]
    return f"{lines.min()}-{lines.max()}" if lines.size else "none kept"
