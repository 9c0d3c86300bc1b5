"""Slug-test and permeameter sheets to one row per test: time lag, fit quality, K, flags."""
from __future__ import annotations

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.field.flags import Flags
from bedflux.field.sheets import Rejected, Sheet, reject_duplicates, reject_where
from bedflux.field.slug import (HALF_SLOPE_SPREAD, RecoveryFit, bouwer_rice_k_from_lag, falling_head_fit, fit_recovery,
                                hvorslev_k_from_lag, permeameter_kv_from_lag)
from bedflux.field.stats import BetweenTerm

#: Standard deviation of ln K between test locations used when a campaign has too few tests
#: of a kind to estimate its own: sqrt(1.88), the smallest run variance of ln Kv that Genereux
#: et al. (2008) report for permeameter tests in a sandy streambed.
DEFAULT_BETWEEN_LN_K = float(np.sqrt(1.88))
#: Tests (of one kind, unflagged) needed to estimate the between-test spread of ln K.
MIN_TESTS = 5


def add_ln_k_sigma(tests: pd.DataFrame, k_column: str) -> BetweenTerm:
    """Give each test a standard deviation of ln K: fit error and between-test term in quadrature.

    The fit error is the slope's relative standard error (K is proportional to the slope). The
    between-test term is the spread of ln K over the campaign's unflagged tests of this kind,
    less the mean fit variance (method of moments), when there are at least
    :data:`MIN_TESTS`; otherwise :data:`DEFAULT_BETWEEN_LN_K`. Adds the columns
    ``ln_k_fit_sigma [1]``, ``ln_k_between_sigma [1]`` and ``ln_k_sigma [1]``.
    """
    fit = (tests["slope_se [1/s]"].astype(float) * tests["time_lag [s]"].astype(float)).fillna(0.0)
    use = (tests["flags"] == "") & (tests[k_column].astype(float) > 0)
    n = int(use.sum())
    if n >= MIN_TESTS:
        spread = float(np.var(np.log(tests.loc[use, k_column].astype(float)), ddof=1) - np.mean(fit[use] ** 2))
        between = BetweenTerm(float(np.sqrt(max(spread, 0.0))), "estimated", n - 1)
    else:
        between = BetweenTerm(DEFAULT_BETWEEN_LN_K, "default", max(n - 1, 0))
    tests["ln_k_fit_sigma [1]"] = fit
    tests["ln_k_between_sigma [1]"] = between.value
    tests["ln_k_sigma [1]"] = np.hypot(fit, between.value)
    return between


def _test_constants(sheet: Sheet, names: tuple[str, ...], optional: tuple[str, ...],
                    rejected: Rejected) -> tuple[Sheet, dict[str, dict[str, float]]]:
    """Per test, the one value of each geometry column (blank cells take the test's value).

    A test whose required geometry is missing or differs between its rows, or whose rows name
    more than one site, is rejected whole.
    """
    tests = sheet.texts["test"]
    bad = np.zeros(len(sheet), dtype=bool)
    reasons: dict[str, str] = {}
    out: dict[str, dict[str, float]] = {}
    for test in dict.fromkeys(tests.tolist()):
        rows = tests == test
        values: dict[str, float] = {}
        sites = set(sheet.texts["site"][rows].tolist())
        if len(sites) > 1:
            reasons[test] = f"test '{test}' names more than one site ({', '.join(sorted(sites))})"
        for name in names + optional:
            col = sheet.numbers[name][rows]
            found = np.unique(col[np.isfinite(col)])
            if found.size > 1 and not np.allclose(found, found[0], rtol=1e-9):
                reasons[test] = f"'{name}' differs between the rows of test '{test}'"
            elif found.size == 0 and name in names:
                reasons[test] = f"'{name}' is not given on any row of test '{test}'"
            values[name] = float(found[0]) if found.size else np.nan
        if test in reasons:
            bad |= rows
        else:
            out[test] = values
    row_reasons = [reasons[t] for t in tests[bad]]
    return reject_where(sheet, bad, "test", row_reasons, rejected, "test"), out


def _reject_test(sheet: Sheet, test: str, reason: str, rejected: Rejected) -> None:
    for line in sheet.line[sheet.texts["test"] == test]:
        rejected.add(sheet.source, line, "test", reason, "test", test)


#: The columns every test's row starts with (:func:`_fit_columns`).
_FIT_COLUMNS = ["test", "site", "n", "time_lag [s]", "r2 [1]", "slope_se [1/s]"]


def _fit_columns(sheet: Sheet, test: str, fit: RecoveryFit) -> dict:
    """Test, site and the straight-line fit of one test, as the first columns of its row."""
    site = sheet.texts["site"][sheet.texts["test"] == test][0]
    return dict(zip(_FIT_COLUMNS, [test, site, fit.n, fit.time_lag, fit.r2, fit.slope_se]))


def _not_log_linear(what: str, fit: RecoveryFit) -> str:
    """Why a test's recovery is flagged as not log-linear."""
    return (f"{what} is not log-linear (R^2 = {fit.r2:.3f}, or early and late slopes differ "
            f"by more than {HALF_SLOPE_SPREAD * 100:.0f} %)")


def reduce_slug(sheet: Sheet, rejected: Rejected, flags: Flags) -> pd.DataFrame:
    """One row per slug test: T0, R^2, Hvorslev K and, where the geometry allows, Bouwer & Rice K."""
    sheet = reject_duplicates(sheet, ("test", "time"), rejected)
    sheet, geometry = _test_constants(
        sheet, ("casing_radius", "screen_radius", "screen_length"),
        ("anisotropy", "well_depth", "saturated_thickness", "screen_depth", "water_depth"), rejected)
    rows = []
    for test, geo in geometry.items():
        rows_of = sheet.texts["test"] == test
        try:
            fit = fit_recovery(sheet.numbers["time"][rows_of], sheet.numbers["displacement"][rows_of])
        except InputError as err:
            _reject_test(sheet, test, err.message, rejected)
            continue
        m = geo["anisotropy"] if np.isfinite(geo["anisotropy"]) else 1.0
        k_h = hvorslev_k_from_lag(fit.time_lag, geo["casing_radius"], geo["screen_radius"],
                                  geo["screen_length"], anisotropy=m)
        k_br = np.nan
        test_flags = []
        if np.isfinite(geo["well_depth"]) and np.isfinite(geo["saturated_thickness"]):
            try:
                k_br = bouwer_rice_k_from_lag(fit.time_lag, geo["casing_radius"], geo["screen_radius"],
                                              geo["screen_length"], geo["well_depth"],
                                              geo["saturated_thickness"])
            except InputError as err:
                flags.add("slug_tests", test, "bouwer_rice_refused", err.message)
                test_flags.append("bouwer_rice_refused")
        if not fit.log_linear:
            test_flags.append("not_log_linear")
            flags.add("slug_tests", test, "not_log_linear", _not_log_linear("recovery", fit))
        rows.append({**_fit_columns(sheet, test, fit), "k_hvorslev [m/s]": k_h, "k_bouwer_rice [m/s]": k_br,
                     "depth [m]": slug_depth(sheet, test, geo), "flags": ";".join(test_flags)})
    return pd.DataFrame(rows, columns=_FIT_COLUMNS + ["k_hvorslev [m/s]", "k_bouwer_rice [m/s]", "depth [m]",
                                                      "flags"])


def slug_depth(sheet: Sheet, test: str, geo: dict[str, float]) -> float:
    """Depth of a slug test's screen midpoint below the bed, m (NaN when the sheet cannot tell).

    ``screen_depth`` when given; otherwise, with ``well_depth`` (the well bottom below the static
    level) and ``water_depth`` (the static level above the bed), the screen running up from the
    well bottom: ``well_depth - water_depth - screen_length / 2``.

    Raises
    ------
    InputError
        Naming the sheet and the test's lines, when that midpoint lies above the bed.
    """
    if np.isfinite(geo["screen_depth"]):
        return geo["screen_depth"]
    if not (np.isfinite(geo["well_depth"]) and np.isfinite(geo["water_depth"])):
        return float("nan")
    depth = geo["well_depth"] - geo["water_depth"] - geo["screen_length"] / 2.0
    if depth < 0:
        lines = sheet.line[sheet.texts["test"] == test]
        raise InputError(f"test '{test}': well_depth - water_depth - screen_length / 2 = {depth:.3g} m puts the "
                         "screen midpoint above the bed; well_depth is the well bottom below the static level "
                         "and water_depth the static level above the bed (or give screen_depth)",
                         sheet.source, f"lines {lines.min()}-{lines.max()}")
    return float(depth)


def reduce_permeameter(sheet: Sheet, rejected: Rejected, flags: Flags) -> pd.DataFrame:
    """One row per falling-head standpipe test: time lag, R^2 and vertical K (Chen 2000)."""
    sheet = reject_duplicates(sheet, ("test", "time"), rejected)
    sheet, geometry = _test_constants(sheet, ("diameter", "sediment_length"), ("anisotropy", "sample_depth"),
                                      rejected)
    rows = []
    for test, geo in geometry.items():
        rows_of = sheet.texts["test"] == test
        t, h = sheet.numbers["time"][rows_of], sheet.numbers["head"][rows_of]
        try:
            fit = falling_head_fit(t, h)
        except InputError as err:
            _reject_test(sheet, test, err.message, rejected)
            continue
        m = geo["anisotropy"] if np.isfinite(geo["anisotropy"]) else 1.0
        kv = permeameter_kv_from_lag(fit.time_lag, geo["diameter"], geo["sediment_length"], m)
        if not fit.log_linear:
            flags.add("permeameter_tests", test, "not_log_linear", _not_log_linear("head decline", fit))
        rows.append({**_fit_columns(sheet, test, fit), "kv [m/s]": kv, "depth [m]": geo["sample_depth"],
                     "flags": "" if fit.log_linear else "not_log_linear"})
    return pd.DataFrame(rows, columns=_FIT_COLUMNS + ["kv [m/s]", "depth [m]", "flags"])
