"""Exchange events of a transient run: reversals, bank storage and how deep stream water goes.

Definitions (all from the result Dataset):

- A *reversal* at a column is a period when its bed flux has the opposite sign to its flux at
  t = 0 (for the reach: the net exchange). Start and end are the zero crossings, interpolated
  linearly between output times; a reversal still running at the end of the run has no end.
- *Peak losing flux*: the most negative bed flux (m/s).
- *Volume into bank storage* (reach): ``integral of max(exchange(0) - exchange(t), 0) dt``, the water
  the stream gave to the aquifer relative to the exchange at the start (m^3 per metre of section
  width: of channel, or of channel width for a section along the channel);
  *volume returned*: ``integral of max(exchange(t) - exchange(0), 0) dt`` up to the end of the run.
  Per column the same with the bed flux (m^3 per m^2 of bed).
- *Penetration depth*: a water particle enters the bed at each column when its flux turns
  downward and is carried by the pore velocity ``(qx, qz) / porosity`` (bilinear in space, linear
  in time between outputs, Heun's method); the deepest point below the ground it reaches by the
  end of the run.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr


def _crossings(t: np.ndarray, y: np.ndarray, reference_sign: float) -> list[tuple[float, float | None]]:
    """Intervals where ``sign(y) != reference_sign``; ends interpolated at the zero crossings."""
    tol = 1e-9 * float(np.max(np.abs(y))) if y.size else 0.0
    reversed_ = (np.sign(y) == -reference_sign) & (np.abs(y) > tol)
    out: list[tuple[float, float | None]] = []
    start = None
    for i in range(t.size):
        if reversed_[i] and start is None:
            start = t[0] if i == 0 else t[i - 1] + (t[i] - t[i - 1]) * y[i - 1] / (y[i - 1] - y[i])
        if not reversed_[i] and start is not None:
            end = t[i - 1] + (t[i] - t[i - 1]) * y[i - 1] / (y[i - 1] - y[i])
            out.append((float(start), float(end)))
            start = None
    if start is not None:
        out.append((float(start), None))
    return out


def _positive_part_integral(t: np.ndarray, y: np.ndarray) -> float:
    """``integral of max(y, 0) dt`` with linear interpolation across zero crossings."""
    total = 0.0
    for i in range(t.size - 1):
        a, b, dt = y[i], y[i + 1], t[i + 1] - t[i]
        if a >= 0 and b >= 0:
            total += 0.5 * (a + b) * dt
        elif a > 0 > b:
            total += 0.5 * a * dt * a / (a - b)
        elif b > 0 > a:
            total += 0.5 * b * dt * b / (b - a)
    return total


def _bilinear(z: np.ndarray, x: np.ndarray, Z: np.ndarray, X: np.ndarray):
    """Bilinear interpolation on the cell centres ``(z, x)`` (ascending) at the points ``(Z, X)``
    inside them: the cells and weights found once, returned as a function of a ``(nz, nx)`` field
    (one column: linear in z alone)."""
    iz = np.clip(np.searchsorted(z, Z, side="right") - 1, 0, z.size - 2)
    wz = (Z - z[iz]) / (z[iz + 1] - z[iz])
    if x.size > 1:
        ix = np.clip(np.searchsorted(x, X, side="right") - 1, 0, x.size - 2)
        ix1, wx = ix + 1, (X - x[ix]) / (x[ix + 1] - x[ix])
    else:
        ix = ix1 = np.zeros(X.shape, dtype=int)
        wx = np.zeros(X.shape)

    def at(f: np.ndarray) -> np.ndarray:
        return ((1 - wz) * ((1 - wx) * f[iz, ix] + wx * f[iz, ix1])
                + wz * ((1 - wx) * f[iz + 1, ix] + wx * f[iz + 1, ix1]))
    return at


def track_particles(ds: xr.Dataset, release_times: np.ndarray,
                    substeps: int = 10) -> tuple[np.ndarray, np.ndarray]:
    """Deepest point below the ground reached by the particle released at the bed of each column,
    and when it is reached.

    ``release_times`` has one entry per column (NaN: no particle). Returns ``(depth, time)``,
    metres and seconds since the start, NaN where no particle.
    """
    x = ds["x"].values
    z = ds["z"].values[::-1]
    t = ds["time"].values
    por = ds["porosity"].values[::-1]
    qx = np.nan_to_num(ds["qx"].values[:, ::-1]) / np.where(np.isfinite(por), por, 1.0)
    qz = np.nan_to_num(ds["qz"].values[:, ::-1]) / np.where(np.isfinite(por), por, 1.0)
    ground = ds["ground"].values
    go = np.isfinite(release_times)
    depth = np.full(x.size, np.nan)
    when = np.full(x.size, np.nan)
    if not go.any() or z.size < 2:
        return depth, when
    px = x.astype(float).copy()
    pz = ground.astype(float).copy() - 1e-6
    deepest = np.zeros(x.size)
    reached = np.array(release_times, dtype=float)

    def velocity(k: int, frac: float, X: np.ndarray, Z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        at = _bilinear(z, x, np.clip(Z, z[0], z[-1]), np.clip(X, x[0], x[-1]))
        k1 = min(k + 1, t.size - 1)
        return ((1 - frac) * at(qx[k]) + frac * at(qx[k1]), (1 - frac) * at(qz[k]) + frac * at(qz[k1]))

    for k in range(t.size - 1):
        h = (t[k + 1] - t[k]) / substeps
        for s in range(substeps):
            tn = t[k] + s * h
            moving = go & (release_times <= tn + h)
            if not moving.any():
                continue
            f0 = s / substeps
            u1, w1 = velocity(k, f0, px[moving], pz[moving])
            X2, Z2 = px[moving] + h * u1, pz[moving] + h * w1
            u2, w2 = velocity(k, f0 + 1 / substeps, X2, Z2)
            px[moving] += 0.5 * h * (u1 + u2) * (x.size > 1)
            pz[moving] += 0.5 * h * (w1 + w2)
            gz = np.interp(px[moving], x, ground)
            pz[moving] = np.minimum(pz[moving], gz - 1e-6)
            below = gz - pz[moving]
            deeper = below > deepest[moving]
            reached[np.nonzero(moving)[0][deeper]] = tn + h
            deepest[moving] = np.maximum(deepest[moving], below)
    depth[go] = deepest[go]
    when[go] = reached[go]
    return depth, when


def exchange_events(ds: xr.Dataset) -> tuple[pd.DataFrame, dict]:
    """Per-column table and reach summary of the exchange events of a transient run.

    Returns
    -------
    columns : DataFrame
        One row per column that is submerged at some time: ``x``, ``wet_at_start``,
        ``submerged_duration``, ``initial_flux`` (NaN for a column flooded later),
        ``reversals``, ``first_reversal_start``, ``last_reversal_end``, ``reversed_duration``,
        ``peak_losing_flux``, ``volume_into_bed``, ``volume_returned``, ``penetration_depth`` and
        ``penetration_time`` (when the particle is deepest) (SI).
    reach : dict
        ``initial_exchange``, ``reversals`` (list of (start, end) s), ``reversed_duration``,
        ``peak_losing_exchange``, ``bank_storage_volume``, ``returned_volume``,
        ``returned_fraction``, ``max_penetration_depth``.
    """
    if "time" not in ds.dims:
        raise ValueError("exchange events need a transient result (a time dimension)")
    t = ds["time"].values
    q = ds["bed_flux"].values
    rows = []
    release = np.full(ds.sizes["x"], np.nan)
    for j in range(ds.sizes["x"]):
        qj = q[:, j]
        if not np.isfinite(qj).any():
            continue
        wet = np.isfinite(qj)
        flooded = float(np.sum(np.diff(t)[(wet[1:] & wet[:-1])]))
        qj = np.nan_to_num(qj)
        q0 = qj[0]
        # a reversal needs a flux to reverse: columns dry at t = 0 (a flooded floodplain) have none
        rev = _crossings(t, qj, np.sign(q0)) if wet[0] and q0 != 0 else []
        losing_start = _crossings(t, qj, 1.0)
        if losing_start:
            release[j] = losing_start[0][0]
        dur = sum(((e if e is not None else t[-1]) - s) for s, e in rev)
        rows.append({
            "x": float(ds["x"].values[j]), "wet_at_start": bool(wet[0]), "submerged_duration": flooded,
            "initial_flux": float(q0) if wet[0] else np.nan, "reversals": len(rev),
            "first_reversal_start": rev[0][0] if rev else np.nan,
            "last_reversal_end": (rev[-1][1] if rev[-1][1] is not None else np.nan) if rev else np.nan,
            "reversed_duration": float(dur), "peak_losing_flux": float(min(qj.min(), 0.0)),
            "volume_into_bed": _positive_part_integral(t, q0 - qj),
            "volume_returned": _positive_part_integral(t, qj - q0),
        })
    depth, when = track_particles(ds, release)
    table = pd.DataFrame(rows)
    if not table.empty:
        at = [int(np.argmin(np.abs(ds["x"].values - xv))) for xv in table["x"]]
        table["penetration_depth"] = depth[at]
        table["penetration_time"] = when[at]
    ex = ds["exchange"].values
    e0 = ex[0]
    neutral = abs(e0) <= 1e-9 * float(np.max(np.abs(ex)))
    # a reach neutral at the start "reverses" whenever it loses
    rev = _crossings(t, ex, 1.0 if neutral else np.sign(e0))
    stored = _positive_part_integral(t, e0 - ex)
    returned = _positive_part_integral(t, ex - e0)
    reach = {
        "initial_exchange": float(e0),
        "reversals": rev,
        "reversed_duration": float(sum(((e if e is not None else t[-1]) - s) for s, e in rev)),
        "peak_losing_exchange": float(min(ex.min(), 0.0)),
        "bank_storage_volume": stored,
        "returned_volume": returned,
        "returned_fraction": returned / stored if stored > 0 else float("nan"),
        "max_penetration_depth": float(np.nanmax(depth)) if np.isfinite(depth).any() else 0.0,
    }
    return table, reach


def events_text(reach: dict, table: pd.DataFrame, per_metre_of: str = "channel") -> str:
    """Plain lines for the run summary (the places of the extremes are in the summary's bed block).

    ``per_metre_of`` is ``channel`` for a section across the channel and ``channel width`` for one
    along it.
    """
    hour = 3600.0
    lines = []
    if reach["reversals"]:
        parts = []
        for s, e in reach["reversals"]:
            parts.append(f"{s / hour:.1f} h to {'the end' if e is None else f'{e / hour:.1f} h'}")
        lines.append(f"net exchange reverses: {'; '.join(parts)} ({reach['reversed_duration'] / hour:.1f} h in all)")
    else:
        lines.append("net exchange does not reverse")
    flooded = table[~table["wet_at_start"] & (table["submerged_duration"] > 0)] if not table.empty else table
    if not flooded.empty:
        fl = flooded
        lines.append(f"the stage floods {len(fl)} floodplain columns (x = {fl['x'].min():.3g} to "
                     f"{fl['x'].max():.3g} m) for up to {fl['submerged_duration'].max() / hour:.1f} h")
    if not table.empty and (table["reversals"] > 0).any():
        rev = table[table["reversals"] > 0]
        lines.append(f"bed flux reverses over {len(rev)} of {int(table['wet_at_start'].sum())} columns of the "
                     "channel bed "
                     f"(x = {rev['x'].min():.3g} to {rev['x'].max():.3g} m), longest "
                     f"{rev['reversed_duration'].max() / hour:.1f} h")
    lines.append(f"bank storage: {reach['bank_storage_volume']:.4g} m3 per metre of {per_metre_of} taken in, "
                 f"{reach['returned_volume']:.4g} m3 returned by the end"
                 + (f" ({100 * reach['returned_fraction']:.0f} %)" if np.isfinite(reach["returned_fraction"]) else ""))
    if not table.empty and not (table["peak_losing_flux"] < 0).any():
        lines.append("the bed does not lose water at any time")
    return "\n".join(lines) + "\n"
