"""Where the bed flux is strongest: each extreme with its place and time, beside a robust figure.

A single column at the edge of a zone or of the flooded floodplain often carries the largest
flux of a run; the extreme alone does not say so. The bed is split in two parts, and for each the
extreme is given with its x (and time) next to a percentile over the whole wetted part:

- *channel bed*: the columns submerged at every output time (the bed under the lowest stage of
  the run; in a steady run every submerged column);
- *floodplain*: the columns submerged at some output times only (flooded at high stage).

Percentiles are weighted by column width (length-weighted), and in a transient run also by the
time each output stands for (half the interval to each neighbouring output), so a column that is
narrow or wet only briefly counts for little. The weighted percentile interpolates between the
midpoints of the cumulative weights (Hyndman & Fan 1996, definition 5, with weights).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

#: Percentiles quoted beside the extremes (of the upward and of the downward flux), as in the keys
#: ``p95_m_per_s`` and ``p05_m_per_s``.
UPPER, LOWER = 95.0, 5.0


def weighted_percentile(values: np.ndarray, weights: np.ndarray, percent: float) -> float:
    """The ``percent`` percentile of ``values`` with non-negative ``weights``.

    The sorted values are placed at the midpoints of their cumulative weights and interpolated
    linearly between them (with equal weights this is Hyndman & Fan's definition 5, numpy's
    ``method="hazen"``). NaN values and zero weights are left out; NaN when nothing is left.
    """
    v = np.asarray(values, dtype=float).ravel()
    w = np.asarray(weights, dtype=float).ravel()
    keep = np.isfinite(v) & np.isfinite(w) & (w > 0)
    if not keep.any():
        return float("nan")
    order = np.argsort(v[keep], kind="stable")
    v, w = v[keep][order], w[keep][order]
    mid = (np.cumsum(w) - 0.5 * w) / w.sum()
    return float(np.interp(percent / 100.0, mid, v))


def stretches(x_edges: np.ndarray, mask: np.ndarray) -> list[list[float]]:
    """The contiguous runs of ``True`` columns as ``[from, to]`` in metres."""
    m = np.concatenate([[False], np.asarray(mask, dtype=bool), [False]])
    starts = np.nonzero(m[1:] & ~m[:-1])[0]
    ends = np.nonzero(~m[1:] & m[:-1])[0]
    return [[float(x_edges[a]), float(x_edges[b])] for a, b in zip(starts, ends)]


def regions(ds: xr.Dataset) -> dict[str, np.ndarray]:
    """Column masks of the ``channel`` bed (always submerged) and the ``floodplain`` (sometimes)."""
    wet = np.isfinite(np.atleast_2d(ds["bed_flux"].values))
    always, ever = wet.all(axis=0), wet.any(axis=0)
    return {"channel": always, "floodplain": ever & ~always}


def _time_weights(ds: xr.Dataset) -> np.ndarray:
    if "time" not in ds.dims:
        return np.ones(1)
    t = ds["time"].values.astype(float)
    if t.size < 2:
        return np.ones(t.size)
    gaps = np.diff(t)
    return 0.5 * (np.concatenate([[0.0], gaps]) + np.concatenate([gaps, [0.0]]))


def _place(ds: xr.Dataset, flat: int, transient: bool) -> dict:
    nx = ds.sizes["x"]
    k, j = divmod(int(flat), nx)
    out = {"x_m": float(ds["x"].values[j])}
    if transient:
        out["time_s"] = float(ds["time"].values[k])
    return out


def flux_extremes(ds: xr.Dataset) -> dict:
    """The strongest upward and downward bed flux of each part of the bed, with place and time.

    Returns
    -------
    dict
        ``channel`` and ``floodplain``, each None when that part is never submerged, else
        ``length_m``, ``stretches_m`` (list of ``[from, to]``), ``gaining`` and ``losing``.
        ``gaining`` is None when the part never gains, else ``peak_m_per_s``, ``x_m``
        (``time_s`` in a transient run) and ``p95_m_per_s``; ``losing`` likewise with
        ``p05_m_per_s``, None when the part never loses.
    """
    transient = "time" in ds.dims
    q = np.atleast_2d(ds["bed_flux"].values)
    dx = np.diff(ds["x_edge"].values)
    weights = _time_weights(ds)[:, None] * dx[None, :]
    out: dict = {}
    for name, mask in regions(ds).items():
        if not mask.any():
            out[name] = None
            continue
        qs = np.where(mask[None, :], q, np.nan)
        part = {"length_m": float(dx[mask].sum()), "stretches_m": stretches(ds["x_edge"].values, mask),
                "gaining": None, "losing": None}
        hi, lo = np.nanmax(qs), np.nanmin(qs)
        if hi > 0:
            part["gaining"] = {"peak_m_per_s": float(hi), **_place(ds, np.nanargmax(qs), transient),
                               "p95_m_per_s": weighted_percentile(qs, weights, UPPER)}
        if lo < 0:
            part["losing"] = {"peak_m_per_s": float(lo), **_place(ds, np.nanargmin(qs), transient),
                              "p05_m_per_s": weighted_percentile(qs, weights, LOWER)}
        out[name] = part
    return out


def add_penetration(extremes: dict, ds: xr.Dataset, table: pd.DataFrame) -> None:
    """Add the deepest penetration of stream water to each part of ``extremes`` (in place).

    ``table`` is the per-column table of :func:`bedflux.section.events.exchange_events`. Each part gets
    ``penetration``: None when no stream water enters it, else ``depth_m``, ``x_m``, ``time_s``
    (when the deepest point is reached) and ``p95_m`` (over the part's columns, length-weighted,
    columns that never lose counting as 0).
    """
    if table is None or table.empty or "penetration_depth" not in table:
        return
    x = ds["x"].values
    dx = np.diff(ds["x_edge"].values)
    depth = np.zeros(x.size)
    when = np.full(x.size, np.nan)
    cols = np.searchsorted(x, table["x"].to_numpy(dtype=float))
    cols = np.clip(cols, 0, x.size - 1)
    depth[cols] = np.nan_to_num(table["penetration_depth"].to_numpy(dtype=float))
    if "penetration_time" in table:
        when[cols] = table["penetration_time"].to_numpy(dtype=float)
    for name, mask in regions(ds).items():
        part = extremes.get(name)
        if part is None:
            continue
        d = np.where(mask, depth, 0.0)
        if not (d > 0).any():
            part["penetration"] = None
            continue
        j = int(np.argmax(d))
        part["penetration"] = {"depth_m": float(d[j]), "x_m": float(x[j]),
                               "time_s": float(when[j]) if np.isfinite(when[j]) else None,
                               "p95_m": weighted_percentile(d[mask], dx[mask], 95.0)}
