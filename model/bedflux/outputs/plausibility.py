"""Checks that a solved section is physically possible, with the reason in plain words when not.

The model solves linear saturated flow: it returns an answer for any input, even one no aquifer
could give. These checks read only the result Dataset and return warnings for the run summary:

- *Impossible heads.* A head below the base of the section means the section would have drained
  to its base: saturated flow cannot supply the imposed outflow. A head higher above the ground
  and the stage than the size of the section means the imposed inflow cannot leave. Either way
  the conductivity is too low for the imposed flux; the warning gives the head difference the
  flux needs, ``Q D^2 / (K A)`` (total source flow Q per metre, size D, lowest conductivity K,
  section area A), the scale of the Poisson problem ``div(K grad h) = -Q / A``.
- *Maximum principle* (steady runs). With conductances all positive the discrete solution has no
  interior extremum: without sources or sinks every head lies between the lowest and highest head
  the boundaries hold; recharge, evapotranspiration and flux boundaries widen that range by at
  most about ``Q D^2 / (K A)`` each way (twice that is allowed). A head outside means the solve
  failed.
- *A stream that may be disconnected.* Under the submerged bed, a head below the elevation of the
  point itself (a negative pressure head beyond the air-entry suction of a sand, about 0.1 m,
  common practice) means an unsaturated zone would open beneath the bed: the stream is
  disconnected from the water table (Brunner et al. 2009). The model still treats the whole
  section as saturated; a disconnected stream loses at a rate set by its bed, and a deeper water
  table no longer increases the loss.
- *A stage below the bed.* A stream whose stage is below the ground of every column wets no bed;
  the model then exchanges no water through the bed.
"""
from __future__ import annotations

import numpy as np
import xarray as xr

from bedflux.outputs.extremes import stretches
from bedflux.scenario.units import SECONDS_PER_DAY as DAY
#: Suction beyond which a sand under the bed is taken to be unsaturated (m; common practice).
AIR_ENTRY_SUCTION = 0.1
#: Factor on the source excursion ``Q D^2 / (K A)`` allowed by the maximum-principle check.
EXCURSION_FACTOR = 2.0


def plausibility_warnings(ds: xr.Dataset) -> list[str]:
    """Every warning of this module for one result, impossible heads first.

    Both checks judge the linear (saturated) model. A variably saturated run (its result has
    ``pressure_head``) represents suction and a stream perched above a falling water table
    physically, so neither applies to it.
    """
    if "pressure_head" in ds:
        return []
    out = impossible_heads(ds)
    out += disconnected_stream(ds)
    return out


def _heads(ds: xr.Dataset) -> np.ndarray:
    h = ds["head"].values
    return h if "time" in ds.dims else h[None]


def _where(ds: xr.Dataset, flat: int) -> str:
    h = _heads(ds)
    k, i, j = np.unravel_index(int(flat), h.shape)
    text = f"x = {ds['x'].values[j]:.4g} m, z = {ds['z'].values[i]:.4g} m"
    if "time" in ds.dims:
        text += f", t = {ds['time'].values[k] / 3600.0:.1f} h"
    return text


def _sources(ds: xr.Dataset) -> tuple[float, float, list[str], list[str]]:
    """Largest inflow and outflow of imposed sources over the outputs (m^2/s), with their names."""
    terms = [str(t) for t in ds["term"].values]
    fluxes = [s for s in str(ds.attrs.get("flux_boundaries", "")).split(",") if s]
    names = ["recharge", "evapotranspiration"] + fluxes
    inflow = np.atleast_2d(ds["inflow"].values)
    outflow = np.atleast_2d(ds["outflow"].values)
    pick = [terms.index(n) for n in names if n in terms]
    q_in = inflow[:, pick].sum(axis=1) if pick else np.zeros(inflow.shape[0])
    q_out = outflow[:, pick].sum(axis=1) if pick else np.zeros(outflow.shape[0])
    sources_in = [n for n in names if n in terms and inflow[:, terms.index(n)].max() > 0]
    sources_out = [n for n in names if n in terms and outflow[:, terms.index(n)].max() > 0]
    return float(q_in.max()), float(q_out.max()), sources_in, sources_out


def _geometry(ds: xr.Dataset) -> tuple[float, float, float, float]:
    """Base elevation, size D (largest of width and depth), area A and the lowest conductivity."""
    xe = ds["x_edge"].values
    ground = ds["ground"].values
    base = float(np.min(ds["z_edge"].values))
    size = max(float(xe[-1] - xe[0]), float(np.max(ground)) - base)
    area = float(np.sum(np.diff(xe) * (ground - base)))
    k_min = float(np.nanmin([np.nanmin(ds["kh"].values), np.nanmin(ds["kv"].values)]))
    return base, size, area, k_min


def _reason(flow: float, names: list[str], size: float, area: float, k_min: float, room: float,
            word: str) -> str:
    if flow <= 0 or k_min <= 0:
        return ("No recharge, evapotranspiration or flux boundary explains it: check the heads the "
                "boundaries hold.")
    need = flow * size ** 2 / (k_min * area)
    return (f"The imposed {word} ({', '.join(names)}: {flow * DAY:.3g} m³/d per metre in all) cannot pass "
            f"through a conductivity as low as {k_min * DAY:.3g} m/d: it needs a head difference of about "
            f"flow × size² / (conductivity × area) = {need:.3g} m, against the {room:.3g} m the section "
            "allows. The conductivity is too low for the imposed flux: raise it, lower the flux, or "
            "check the units of both.")


def impossible_heads(ds: xr.Dataset) -> list[str]:
    """Heads below the base of the section, far above the ground, or outside the maximum principle.

    Returns
    -------
    list of str
        Plain-language warnings (empty when the heads are possible).
    """
    h = _heads(ds)
    if not np.isfinite(h).any():
        return []
    base, size, area, k_min = _geometry(ds)
    q_in, q_out, inflow, outflow = _sources(ds)
    lo_at, hi_at = int(np.nanargmin(h)), int(np.nanargmax(h))
    lo, hi = float(h.flat[lo_at]), float(h.flat[hi_at])
    stage = ds["stage"].values
    top = max(float(np.max(ds["ground"].values)),
              float(np.nanmax(stage)) if np.isfinite(stage).any() else -np.inf,
              float(ds.attrs.get("prescribed_head_max", -np.inf)))
    out = []
    if lo < base - 1e-9 * size:
        out.append(f"physically impossible heads: the head falls to {lo:.4g} m at {_where(ds, lo_at)}, "
                   f"{base - lo:.3g} m below the base of the section ({base:.4g} m); the section would have "
                   "drained, which saturated flow cannot represent. "
                   + _reason(q_out, outflow, size, area, k_min, top - base, "outflow"))
    if hi > top + size:
        out.append(f"physically impossible heads: the head rises to {hi:.4g} m at {_where(ds, hi_at)}, "
                   f"{hi - top:.3g} m above the highest ground or stage ({top:.4g} m), more than the "
                   f"{size:.3g} m size of the section. "
                   + _reason(q_in, inflow, size, area, k_min, size, "inflow"))
    if out or "time" in ds.dims:
        return out
    p_lo, p_hi = ds.attrs.get("prescribed_head_min"), ds.attrs.get("prescribed_head_max")
    if p_lo is None or p_hi is None or not np.isfinite([p_lo, p_hi]).all():
        return out
    scale = size ** 2 / (k_min * area) if k_min > 0 else np.inf
    allow_lo = p_lo - EXCURSION_FACTOR * q_out * scale
    allow_hi = p_hi + EXCURSION_FACTOR * q_in * scale
    tol = 1e-6 * max(p_hi - p_lo, 1e-3) + 1e-12 * max(abs(p_lo), abs(p_hi))
    if lo < allow_lo - tol or hi > allow_hi + tol:
        sources = sorted(set(inflow + outflow))
        out.append(f"heads outside what the boundaries allow: the boundaries hold heads from {p_lo:.6g} to "
                   f"{p_hi:.6g} m" + (f" and the sources ({', '.join(sources)}) can move them at most to "
                                      f"{allow_lo:.6g} to {allow_hi:.6g} m" if sources else
                                      " and there is no source or sink") +
                   f", but the computed heads reach {lo:.6g} m ({_where(ds, lo_at)}) to {hi:.6g} m "
                   f"({_where(ds, hi_at)}). The solve has failed; do not use these results.")
    return out


def disconnected_stream(ds: xr.Dataset) -> list[str]:
    """Say when the stream may be disconnected from the aquifer, or wets no bed at all."""
    q = np.atleast_2d(ds["bed_flux"].values)
    stage = np.atleast_1d(ds["stage"].values)
    ground = ds["ground"].values
    if not np.isfinite(q).any():
        terms = [str(t) for t in ds["term"].values]
        k = terms.index("stream")
        through_sides = (np.abs(np.atleast_2d(ds["inflow"].values)[:, k]).max() > 0
                         or np.abs(np.atleast_2d(ds["outflow"].values)[:, k]).max() > 0)
        if not np.isfinite(stage).any() or through_sides:
            return []
        return [f"the stage ({np.nanmax(stage):.4g} m at most) is below the ground of every column of the channel "
                f"(lowest ground {np.min(ground):.4g} m): no part of the bed is under water, so the model "
                "exchanges no water through the bed and treats the channel as dry ground. If water flows "
                "here, the bed is lower than the ground profile says or the stage is on another datum."]
    h = _heads(ds)
    z = ds["z"].values
    full = ds["z_edge"].values[:-1][:, None] <= ground[None, :]  # cells wholly below the ground
    pressure = h - z[None, :, None]
    under_bed = full[None] & np.isfinite(q)[:, None, :] & np.isfinite(h)
    suction = under_bed & (pressure < -AIR_ENTRY_SUCTION)
    if not suction.any():
        return []
    nz = z.size
    rows = np.arange(nz)[None, :, None]
    hit = suction.any(axis=1)  # (time, column) with an unsaturated zone under the bed
    # the water table: below the lowest cell of negative pressure, where the pressure is zero
    low = np.where(hit, np.where(under_bed & (pressure < 0), rows, -1).max(axis=1), -1)
    k = np.clip(low, 0, nz - 1)
    below = np.clip(k + 1, 0, nz - 1)
    p1 = np.take_along_axis(pressure, k[:, None, :], axis=1)[:, 0]
    p2 = np.take_along_axis(pressure, below[:, None, :], axis=1)[:, 0]
    base = float(np.min(ds["z_edge"].values))
    z1, z2 = z[k], z[below]
    ok = np.isfinite(p2) & (below > k) & (p2 >= 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        water_table = np.where(ok, z1 + (z2 - z1) * p1 / (p1 - p2), base)
    depth = np.where(hit, ground[None, :] - water_table, -np.inf)
    t_at, j_at = np.unravel_index(int(np.argmax(depth)), depth.shape)
    columns = hit.any(axis=0)
    where = " and ".join(f"{a:.4g} to {b:.4g} m" for a, b in stretches(ds["x_edge"].values, columns))
    when = f" (t = {ds['time'].values[t_at] / 3600.0:.1f} h)" if "time" in ds.dims else ""
    deepest = float(-np.min(np.where(suction, pressure, np.inf)))
    return [f"the stream may be disconnected from the aquifer: under the submerged bed at x = {where} the "
            f"computed head falls below the elevation of the point itself (suction up to {deepest:.3g} m), "
            f"with the water table about {depth[t_at, j_at]:.3g} m below the bed at x = "
            f"{ds['x'].values[j_at]:.4g} m{when}. The model assumes saturated flow throughout, so the loss "
            "keeps growing as the water table falls; a disconnected stream loses at a rate set by its bed "
            "(about the bed's vertical conductivity times a unit gradient), whatever the depth of the water "
            "table. The losses here are likely overstated; treat them as an upper estimate."]
