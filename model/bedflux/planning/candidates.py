"""Candidate instruments: seepage meters on the submerged bed, piezometers read by manometer and
temperature logger pairs.

Each candidate has a kind (``seepage``, ``piezometer`` or ``logger_pair``), an x, a depth (of the
piezometer opening below the bed; 0 for a meter; the mid-depth of a logger pair), for a logger
pair the depths of its two sensors (``shallow_depth``, ``deep_depth``), an optional transect
label and an optional ``sigma`` (SI) that overrides the instrument default:

- seepage meter: ``max(relative_sd * |flux|, detection floor)`` (30 % and 0.01 m/d by default:
  common practice for careful repeat measurements with a half-drum meter);
- piezometer: vertical gradient uncertainty = head resolution / depth (0.1 mm of head by
  default, e.g. 0.1 mm over 0.3 m: common practice for an inverted U-tube manometer);
- logger pair: the ``flux_sd`` that the field reduction (amplitude method) would give for the
  daily wave at the predicted flux (:mod:`bedflux.field.logger_pair_spread`).

The meter and piezometer defaults live in :mod:`bedflux.forward.observe`, shared with the fit's
suggestions.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.field.thermal import DEFAULT_ACCURACY
from bedflux.forward.observe import HAND_DRIVEN_MAX_DEPTH, HEAD_RESOLUTION, SEEPAGE_FLOOR, SEEPAGE_RELATIVE_SD
from bedflux.field.logger_pair_spread import DEFAULT_DAILY_AMPLITUDE, DEFAULT_PERIOD, PAIR_DEPTHS, logger_flux_sd
from bedflux.scenario.forcing import Wave

#: Candidate kinds (as written in a table) and the observation kind each becomes.
KINDS = {"seepage": "seepage", "piezometer": "vhg", "vhg": "vhg", "logger_pair": "thermal_flux"}
#: Deepest opening for hand-driven mini-piezometers in sand (m; common practice).
DEFAULT_MAX_DEPTH = HAND_DRIVEN_MAX_DEPTH
#: Sensor depths of a logger pair below the bed (m; :data:`bedflux.field.logger_pair_spread.PAIR_DEPTHS`).
DEFAULT_LOGGER_DEPTHS = PAIR_DEPTHS
#: Deepest sensor of a logger rod pushed by hand into a sandy bed (m; common practice).
DEFAULT_LOGGER_MAX_DEPTH = 0.5
#: Least distance between the two sensors of a pair (m): four times the 5 mm uncertainty of a
#: sensor's depth (:data:`bedflux.field.thermal.DEFAULT_SPACING_SD`; project rule).
MIN_LOGGER_SPACING = 0.02


@dataclass(frozen=True)
class Instruments:
    """Measurement uncertainty of each instrument type (SI)."""

    seepage_relative_sd: float = SEEPAGE_RELATIVE_SD
    seepage_floor: float = SEEPAGE_FLOOR
    head_resolution: float = HEAD_RESOLUTION
    logger_accuracy: float = DEFAULT_ACCURACY
    #: Amplitude (degC) of the stream's daily temperature wave; None: the scenario's wave, else
    #: :data:`~bedflux.field.logger_pair_spread.DEFAULT_DAILY_AMPLITUDE` (see :meth:`for_scenario`).
    daily_amplitude: float | None = None
    period: float = DEFAULT_PERIOD

    def for_scenario(self, scenario) -> Instruments:
        """A copy with the temperature wave resolved: the amplitude given, else the amplitude and
        period of the scenario's stream temperature wave (``[heat]``), else the default."""
        if self.daily_amplitude is not None:
            return self
        stream = scenario.heat.stream if scenario.heat is not None else None
        if isinstance(stream, Wave) and stream.amplitude > 0:
            return replace(self, daily_amplitude=float(stream.amplitude), period=float(stream.period))
        return replace(self, daily_amplitude=DEFAULT_DAILY_AMPLITUDE)

    def sigma(self, table: pd.DataFrame, simulated: np.ndarray) -> np.ndarray:
        """Error spread of each candidate (a ``sigma`` column overrides); ``inf`` for a logger
        pair whose daily wave could not be read at the simulated flux."""
        kind = table["kind"].to_numpy()
        seep = kind == "seepage"
        depth = np.maximum(table["depth"].to_numpy(dtype=float), 1e-6)
        default = np.where(seep, np.maximum(self.seepage_relative_sd * np.abs(simulated), self.seepage_floor),
                           self.head_resolution / depth)
        pairs = kind == "logger_pair"
        if pairs.any():
            amplitude = DEFAULT_DAILY_AMPLITUDE if self.daily_amplitude is None else self.daily_amplitude
            shallow = table["shallow_depth"].to_numpy(dtype=float)
            deep = table["deep_depth"].to_numpy(dtype=float)
            geometries = np.unique(np.stack([shallow[pairs], deep[pairs]], axis=1), axis=0)
            for a, b in geometries:
                sel = pairs & (shallow == a) & (deep == b)
                default[sel] = logger_flux_sd(np.asarray(simulated, dtype=float)[sel], a, b, self.logger_accuracy,
                                              amplitude, self.period)
        if "sigma" in table:
            given = pd.to_numeric(table["sigma"], errors="coerce").to_numpy(dtype=float)
            return np.where(np.isfinite(given), given, default)
        return default


def _row_error(message: str, source: str, i: int) -> InputError:
    return InputError(message, source=source, where=f"row {i + 2}")


def check_logger_depths(shallow: float, deep: float, max_depth: float) -> str | None:
    """What is wrong with the sensor depths of a logger pair (m below the bed), or None."""
    if not (np.isfinite(shallow) and shallow > 0):
        return f"the shallow sensor depth {shallow:g} m must be > 0: both sensors go below the bed"
    if not deep > shallow:
        return (f"sensor depths {shallow:g} and {deep:g} m must increase: the deep sensor below the shallow "
                "one")
    if deep - shallow < MIN_LOGGER_SPACING - 1e-12:
        return (f"sensors {deep - shallow:g} m apart are too close: give at least {MIN_LOGGER_SPACING:g} m "
                "between them (their depths are known to about 5 mm)")
    if deep > max_depth + 1e-12:
        return (f"the deep sensor at {deep:g} m is deeper than a logger rod is pushed by hand ({max_depth:g} m, "
                "logger_max_depth)")
    return None


def _logger_rows(out: pd.DataFrame, source: str, logger_max_depth: float) -> pd.DataFrame:
    """Sensor depths of the logger pairs (defaults where both cells are empty) and their mid-depth."""
    pairs = (out["kind"] == "logger_pair").to_numpy()
    for col in ("shallow_depth", "deep_depth"):
        text = out[col] if col in out else pd.Series([np.nan] * len(out))
        vals = pd.to_numeric(text, errors="coerce")
        written = text.notna() & (text.astype(str).str.strip() != "")
        bad = pairs & written.to_numpy() & vals.isna().to_numpy()
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise _row_error(f"column '{col}' is not a number (sensor depth below the bed, m)", source, i)
        out[col] = vals.astype(float).to_numpy()
    shallow, deep = out["shallow_depth"].to_numpy(), out["deep_depth"].to_numpy()
    empty_s, empty_d = np.isnan(shallow), np.isnan(deep)
    half = pairs & (empty_s != empty_d)
    if half.any():
        i = int(np.flatnonzero(half)[0])
        raise _row_error("give both shallow_depth and deep_depth of a logger pair, or neither (the default "
                         f"pair, {DEFAULT_LOGGER_DEPTHS[0]:g} and {DEFAULT_LOGGER_DEPTHS[1]:g} m)", source, i)
    shallow = np.where(pairs & empty_s, DEFAULT_LOGGER_DEPTHS[0], shallow)
    deep = np.where(pairs & empty_d, DEFAULT_LOGGER_DEPTHS[1], deep)
    for i in np.flatnonzero(pairs):
        problem = check_logger_depths(shallow[i], deep[i], logger_max_depth)
        if problem:
            raise _row_error(problem, source, i)
    mid = 0.5 * (shallow + deep)
    given = out["depth"].to_numpy()
    off = pairs & np.isfinite(given) & (np.abs(given - mid) > 1e-3)
    if off.any():
        i = int(np.flatnonzero(off)[0])
        raise _row_error(f"the depth of a logger pair is the mid-depth of its sensors, {mid[i]:g} m; leave it "
                         "empty or give that", source, i)
    out["shallow_depth"] = np.where(pairs, shallow, np.nan)
    out["deep_depth"] = np.where(pairs, deep, np.nan)
    out.loc[pairs, "depth"] = mid[pairs]
    return out


def check_candidates(df: pd.DataFrame, source: str = "candidates", max_depth: float = DEFAULT_MAX_DEPTH,
                     logger_max_depth: float = DEFAULT_LOGGER_MAX_DEPTH) -> pd.DataFrame:
    """Validate a candidate table (``kind, x, depth`` and optional ``transect``, ``sigma``, and for
    logger pairs ``shallow_depth``, ``deep_depth``).

    A logger pair's ``depth`` may be empty: it becomes the mid-depth of its sensors; empty sensor
    depths are :data:`DEFAULT_LOGGER_DEPTHS`.

    Raises
    ------
    InputError
        Naming the row for an unknown kind, a non-numeric cell, a piezometer deeper than
        ``max_depth`` or not below the bed, logger sensor depths that do not increase, are not
        below the bed, are closer than :data:`MIN_LOGGER_SPACING` or deeper than
        ``logger_max_depth``, or a non-positive sigma.
    """
    for col in ("kind", "x", "depth"):
        if col not in df.columns:
            raise InputError(f"missing column '{col}'; candidates need kind, x, depth (optional transect, sigma; "
                             "for logger pairs shallow_depth, deep_depth)", source=source, where="row 1")
    out = df.copy().reset_index(drop=True)
    bad = ~out["kind"].isin(list(KINDS))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise _row_error(f"kind {out['kind'].iloc[i]!r} is not seepage, piezometer or logger_pair", source, i)
    pairs = (out["kind"] == "logger_pair").to_numpy()
    for col in ("x", "depth") + (("sigma",) if "sigma" in out else ()):
        vals = pd.to_numeric(out[col], errors="coerce")
        empty = out[col].isna().to_numpy() | (out[col].astype(str).str.strip() == "").to_numpy()
        # an empty sigma takes the default, an empty depth of a logger pair follows from its sensors;
        # text is an error everywhere
        may_be_empty = {"sigma": np.ones(len(out), dtype=bool), "depth": pairs}.get(col, np.zeros(len(out), dtype=bool))
        bad = vals.isna().to_numpy() & ~(empty & may_be_empty)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise _row_error(f"column '{col}' is empty or not a number", source, i)
        out[col] = vals.astype(float)
    out = _logger_rows(out, source, logger_max_depth)
    out["kind"] = out["kind"].map(lambda k: k if k in ("seepage", "logger_pair") else "piezometer")
    piezo = out["kind"] == "piezometer"
    deep = piezo & ((out["depth"] > max_depth + 1e-12) | (out["depth"] <= 0))
    if deep.any():
        i = int(np.flatnonzero(deep)[0])
        raise _row_error(f"piezometer depth {out['depth'].iloc[i]:g} m must be > 0 and at most {max_depth:g} m "
                         "(the push limit)", source, i)
    if "sigma" in out and (out["sigma"] <= 0).any():
        i = int(np.flatnonzero(out["sigma"] <= 0)[0])
        raise _row_error("sigma must be > 0", source, i)
    if "transect" not in out:
        out["transect"] = ""
    out.loc[out["kind"] == "seepage", "depth"] = 0.0
    return out


def generate(bed_x: np.ndarray, seepage_spacing: float | None, piezometer_spacing: float | None,
             depths: list[float], max_depth: float = DEFAULT_MAX_DEPTH, logger_spacing: float | None = None,
             logger_depths: tuple[float, float] = DEFAULT_LOGGER_DEPTHS,
             logger_max_depth: float = DEFAULT_LOGGER_MAX_DEPTH) -> pd.DataFrame:
    """Candidates on a spacing over the submerged bed ``[min(bed_x), max(bed_x)]``; a spacing of
    None means no instruments of that kind.

    Raises
    ------
    InputError
        For a spacing that is not positive, a depth outside ``(0, max_depth]``, logger sensor
        depths that :func:`check_logger_depths` refuses, or no spacing.
    """
    lo, hi = float(np.min(bed_x)), float(np.max(bed_x))
    rows = []
    for key, spacing in (("seepage_spacing", seepage_spacing), ("piezometer_spacing", piezometer_spacing),
                         ("logger_spacing", logger_spacing)):
        if spacing is not None and not spacing > 0:
            raise InputError(f"{key} = {spacing:g} m is not allowed: give a distance > 0 between candidates, "
                             "or leave the key out for none of that kind", where="[candidates]")
    if seepage_spacing is not None:
        for x in np.arange(lo, hi + 1e-9, seepage_spacing):
            rows.append(("seepage", float(x), 0.0, np.nan, np.nan))
    if piezometer_spacing is not None:
        for d in depths:
            if not 0 < d <= max_depth + 1e-12:
                raise InputError(f"piezometer depth {d:g} m must be > 0 and at most {max_depth:g} m", where="[candidates]")
            for x in np.arange(lo, hi + 1e-9, piezometer_spacing):
                rows.append(("piezometer", float(x), float(d), np.nan, np.nan))
    if logger_spacing is not None:
        shallow, deep = (float(v) for v in logger_depths)
        problem = check_logger_depths(shallow, deep, logger_max_depth)
        if problem:
            raise InputError(f"logger_depths: {problem}", where="[candidates]")
        for x in np.arange(lo, hi + 1e-9, logger_spacing):
            rows.append(("logger_pair", float(x), 0.5 * (shallow + deep), shallow, deep))
    if not rows:
        raise InputError("no candidates: give seepage_spacing, piezometer_spacing or logger_spacing (or a table)",
                         where="[candidates]")
    df = pd.DataFrame(rows, columns=["kind", "x", "depth", "shallow_depth", "deep_depth"])
    df["transect"] = ""
    return df


def as_observations(c: pd.DataFrame, time: float) -> pd.DataFrame:
    """The candidates as an observation table (value 0, sigma 1) for the forward model."""
    return pd.DataFrame({"kind": c["kind"].map(KINDS).to_numpy(), "x": c["x"].to_numpy(),
                         "depth": c["depth"].to_numpy(), "time": time, "value": 0.0, "sigma": 1.0})
