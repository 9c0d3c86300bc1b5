"""Candidate instruments: seepage meters on the submerged bed and piezometers read by manometer.

Each candidate has a kind (``seepage`` or ``piezometer``), an x, a depth (of the piezometer
opening below the bed; 0 for a meter), an optional transect label and an optional ``sigma``
(SI) that overrides the instrument default:

- seepage meter: ``max(relative_sd * |flux|, detection floor)`` (30 % and 0.01 m/d by default:
  common practice for careful repeat measurements with a half-drum meter);
- piezometer: vertical gradient uncertainty = head resolution / depth (0.1 mm of head by
  default, e.g. 0.1 mm over 0.3 m: common practice for an inverted U-tube manometer).

The defaults live in :mod:`bedflux.forward.observe`, shared with the fit's suggestions.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.forward.observe import HAND_DRIVEN_MAX_DEPTH, HEAD_RESOLUTION, SEEPAGE_FLOOR, SEEPAGE_RELATIVE_SD

KINDS = {"seepage": "seepage", "piezometer": "vhg", "vhg": "vhg"}
#: Deepest opening for hand-driven mini-piezometers in sand (m; common practice).
DEFAULT_MAX_DEPTH = HAND_DRIVEN_MAX_DEPTH


@dataclass(frozen=True)
class Instruments:
    """Measurement uncertainty of each instrument type (SI)."""

    seepage_relative_sd: float = SEEPAGE_RELATIVE_SD
    seepage_floor: float = SEEPAGE_FLOOR
    head_resolution: float = HEAD_RESOLUTION

    def sigma(self, table: pd.DataFrame, simulated: np.ndarray) -> np.ndarray:
        """Error spread of each candidate (a ``sigma`` column overrides)."""
        seep = table["kind"].to_numpy() == "seepage"
        depth = np.maximum(table["depth"].to_numpy(dtype=float), 1e-6)
        default = np.where(seep, np.maximum(self.seepage_relative_sd * np.abs(simulated), self.seepage_floor),
                           self.head_resolution / depth)
        if "sigma" in table:
            given = pd.to_numeric(table["sigma"], errors="coerce").to_numpy(dtype=float)
            return np.where(np.isfinite(given), given, default)
        return default


def check_candidates(df: pd.DataFrame, source: str = "candidates", max_depth: float = DEFAULT_MAX_DEPTH) -> pd.DataFrame:
    """Validate a candidate table (``kind, x, depth`` and optional ``transect``, ``sigma``).

    Raises
    ------
    InputError
        Naming the row for an unknown kind, a non-numeric cell, a piezometer deeper than
        ``max_depth`` or not below the bed, or a non-positive sigma.
    """
    for col in ("kind", "x", "depth"):
        if col not in df.columns:
            raise InputError(f"missing column '{col}'; candidates need kind, x, depth (optional transect, sigma)",
                             source=source, where="row 1")
    out = df.copy().reset_index(drop=True)
    bad = ~out["kind"].isin(list(KINDS))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"kind {out['kind'].iloc[i]!r} is not seepage or piezometer", source=source, where=f"row {i + 2}")
    for col in ("x", "depth") + (("sigma",) if "sigma" in out else ()):
        vals = pd.to_numeric(out[col], errors="coerce")
        if col != "sigma" and vals.isna().any():
            i = int(np.flatnonzero(vals.isna())[0])
            raise InputError(f"column '{col}' is empty or not a number", source=source, where=f"row {i + 2}")
        out[col] = vals.astype(float)
    out["kind"] = out["kind"].map(lambda k: "seepage" if k == "seepage" else "piezometer")
    piezo = out["kind"] == "piezometer"
    deep = piezo & ((out["depth"] > max_depth + 1e-12) | (out["depth"] <= 0))
    if deep.any():
        i = int(np.flatnonzero(deep)[0])
        raise InputError(f"piezometer depth {out['depth'].iloc[i]:g} m must be > 0 and at most {max_depth:g} m "
                         "(the push limit)", source=source, where=f"row {i + 2}")
    if "sigma" in out and (out["sigma"] <= 0).any():
        i = int(np.flatnonzero(out["sigma"] <= 0)[0])
        raise InputError("sigma must be > 0", source=source, where=f"row {i + 2}")
    if "transect" not in out:
        out["transect"] = ""
    out.loc[~piezo, "depth"] = 0.0
    return out


def generate(bed_x: np.ndarray, seepage_spacing: float | None, piezometer_spacing: float | None,
             depths: list[float], max_depth: float = DEFAULT_MAX_DEPTH) -> pd.DataFrame:
    """Candidates on a spacing over the submerged bed ``[min(bed_x), max(bed_x)]``; a spacing of
    None means no instruments of that kind.

    Raises
    ------
    InputError
        For a spacing that is not positive, a depth outside ``(0, max_depth]``, or no spacing.
    """
    lo, hi = float(np.min(bed_x)), float(np.max(bed_x))
    rows = []
    for key, spacing in (("seepage_spacing", seepage_spacing), ("piezometer_spacing", piezometer_spacing)):
        if spacing is not None and not spacing > 0:
            raise InputError(f"{key} = {spacing:g} m is not allowed: give a distance > 0 between candidates, "
                             "or leave the key out for none of that kind", where="[candidates]")
    if seepage_spacing is not None:
        for x in np.arange(lo, hi + 1e-9, seepage_spacing):
            rows.append(("seepage", float(x), 0.0))
    if piezometer_spacing is not None:
        for d in depths:
            if not 0 < d <= max_depth + 1e-12:
                raise InputError(f"piezometer depth {d:g} m must be > 0 and at most {max_depth:g} m", where="[candidates]")
            for x in np.arange(lo, hi + 1e-9, piezometer_spacing):
                rows.append(("piezometer", float(x), float(d)))
    if not rows:
        raise InputError("no candidates: give seepage_spacing or piezometer_spacing (or a table)", where="[candidates]")
    df = pd.DataFrame(rows, columns=["kind", "x", "depth"])
    df["transect"] = ""
    return df


def as_observations(c: pd.DataFrame, time: float) -> pd.DataFrame:
    """The candidates as an observation table (value 0, sigma 1) for the forward model."""
    return pd.DataFrame({"kind": c["kind"].map(KINDS).to_numpy(), "x": c["x"].to_numpy(),
                         "depth": c["depth"].to_numpy(), "time": time, "value": 0.0, "sigma": 1.0})
