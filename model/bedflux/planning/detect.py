"""Detectability of a flow reversal during a transient run (a flood pulse).

For a manometer reading a mini-piezometer with its opening ``depth`` below the bed at x, the
measured head difference is ``h(x, depth, t) - stage(x, t)``. A reversal is *detectable* while
the head difference has the opposite sign to its value at t = 0 and exceeds the reading
resolution in size; the map gives, over x and depth, for how long, and the first and last times
a reading would show it. The same for a seepage meter: the bed flux reversed and larger than the
meter's detection floor.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

from bedflux.forward.observe import HEAD_RESOLUTION, SEEPAGE_FLOOR


def _durations(t: np.ndarray, mask: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Total time a boolean series is true (trapezoid on the output times), first and last time."""
    dt = np.diff(t)
    on = mask.astype(float)
    total = np.sum(0.5 * (on[1:] + on[:-1]) * dt[:, None], axis=0)
    first = np.where(mask.any(axis=0), t[np.argmax(mask, axis=0)], np.nan)
    last = np.where(mask.any(axis=0), t[mask.shape[0] - 1 - np.argmax(mask[::-1], axis=0)], np.nan)
    return total, first, last


def head_at_depth(ds: xr.Dataset, depths: np.ndarray) -> np.ndarray:
    """Head (time, depth, x) at ``depths`` below the ground in each column (linear in z)."""
    head = ds["head"].values  # (time, z, x)
    z = ds["z"].values
    ground = ds["ground"].values
    out = np.full((head.shape[0], depths.size, head.shape[2]), np.nan)
    for j in range(head.shape[2]):
        col = head[:, :, j]
        ok = np.isfinite(col[0])
        zc, hc = z[ok][::-1], col[:, ok][:, ::-1]
        if zc.size == 0:
            continue
        zq = np.clip(ground[j] - depths, zc[0], zc[-1])
        k = np.clip(np.searchsorted(zc, zq) - 1, 0, max(zc.size - 2, 0))
        if zc.size == 1:
            out[:, :, j] = hc[:, :1]
            continue
        a = (zq - zc[k]) / (zc[k + 1] - zc[k])
        out[:, :, j] = hc[:, k] * (1 - a) + hc[:, k + 1] * a
    return out


def detectability(ds: xr.Dataset, depths: np.ndarray, head_resolution: float = HEAD_RESOLUTION,
                  seepage_floor: float = SEEPAGE_FLOOR) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Tables of detectable reversal duration for piezometers (x, depth) and seepage meters (x).

    Only columns submerged for the whole run are mapped (a manometer needs the stream above it).
    """
    t = ds["time"].values
    q = ds["bed_flux"].values
    wet = np.all(np.isfinite(q), axis=0)
    x = ds["x"].values
    stage = ds["stage"].values  # the stage at x = 0; add the water-surface slope if any
    slope = float(ds.attrs.get("stage_slope", 0.0))
    local = stage[:, None] + slope * x[None, :]
    h = head_at_depth(ds, depths)
    rows = []
    for k, d in enumerate(depths):
        dh = h[:, k, :] - local
        sign0 = np.sign(dh[0])
        reversed_ = (np.sign(dh) == -sign0[None, :]) & (np.abs(dh) > head_resolution) & wet[None, :]
        total, first, last = _durations(t, reversed_)
        for j in np.flatnonzero(wet):
            rows.append({"x": x[j], "depth": d, "initial_head_difference": dh[0, j], "detectable_duration": total[j],
                         "first_time": first[j], "last_time": last[j]})
    piezo = pd.DataFrame(rows)
    qs = np.nan_to_num(q)
    rev = (np.sign(qs) == -np.sign(qs[0])[None, :]) & (np.abs(qs) > seepage_floor) & wet[None, :]
    total, first, last = _durations(t, rev)
    seep = pd.DataFrame({"x": x[wet], "initial_flux": qs[0, wet], "detectable_duration": total[wet],
                         "first_time": first[wet], "last_time": last[wet]})
    return piezo, seep
