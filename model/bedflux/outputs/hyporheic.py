"""The hyporheic outputs of a run: flowpaths.nc, the summary lines and the figures of the paths.

A run with stream water entering the bed traces it (:func:`bedflux.flowpaths`) and writes every
path to ``flowpaths.nc``; ``summary.json`` gets a ``hyporheic`` block
(:func:`bedflux.flowpaths.hyporheic.hyporheic_block`) and ``summary.txt`` its lines. Figures:
``flowpaths.png`` (the section with paths coloured by residence time), ``residence_times.png``
(the flux-weighted residence time distribution as exceedance on log time) and, for a transient
run, ``bank_storage_return.png`` (stream water into the bed and back over time).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from bedflux.flowpaths.hyporheic import (DEPTH_SHARE, bedform_exchange_closed_form, carried, hyporheic_block,
                                         returned_over_time)
from bedflux.flowpaths.paths import flowpaths
from bedflux.outputs.files import write_result
from bedflux.scenario.spec import Scenario
from bedflux.scenario.units import SECONDS_PER_DAY as DAY

#: Paths drawn in flowpaths.png (traced again with their geometry).
DRAWN_PATHS = 60
HOUR = 3600.0


def has_downwelling(ds: xr.Dataset) -> bool:
    """True when stream water enters the bed somewhere: in a steady run, or at an output that
    ends an interval of a transient run (the field paths are released with)."""
    q = np.nan_to_num(ds["bed_flux"].values, nan=0.0)
    wet = ds["wetted_fraction"].values
    if "time" in ds.dims:
        q, wet = q[1:], wet[1:]
    return bool(np.any((q < 0) & (wet > 0)))


def traceable(scenario: Scenario, ds: xr.Dataset) -> bool:
    """Flow paths are traced for runs (saturated or variably saturated) with downwelling and at
    least one output interval (transient)."""
    if ds.attrs.get("partial"):
        return False
    if "time" in ds.dims and ds.sizes["time"] < 2:
        return False
    return has_downwelling(ds)


def write_flowpaths(scenario: Scenario, ds: xr.Dataset, outdir: Path) -> dict | None:
    """Trace the run's paths, write flowpaths.nc and the figures into ``outdir``; return the
    summary block (None when the run has no downwelling or cannot be traced)."""
    if not traceable(scenario, ds):
        return None
    fp = flowpaths(scenario, ds)
    write_result(fp, outdir / "flowpaths.nc")
    block = hyporheic_block(fp)
    closed = bedform_exchange_closed_form(scenario)
    if closed is not None:
        block["bedform_exchange_flux_closed_form_m_per_s"] = closed
    submerged = float(np.max(np.sum(np.atleast_2d(ds["wetted_fraction"].values) * np.diff(ds["x_edge"].values),
                                     axis=1)))
    drawn = flowpaths(scenario, ds, per_metre=DRAWN_PATHS / max(submerged, 1e-9), keep_geometry=True)
    flowpath_figures(ds, fp, drawn, outdir)
    return block


def _duration(seconds: float) -> str:
    """A time in the unit that reads best: s, min, h, d or years."""
    for unit, size in (("years", 365.25 * DAY), ("d", DAY), ("h", HOUR), ("min", 60.0)):
        if seconds >= 2 * size:
            return f"{seconds / size:.3g} {unit}"
    return f"{seconds:.3g} s"


def hyporheic_lines(block: dict) -> list[str]:
    """The summary.txt lines of the hyporheic block."""
    q = block["residence_time_quantiles_s"]
    fate = block["fate"]
    lines = [f"hyporheic exchange: {block['exchange_flux_m_per_s'] * DAY:.3g} m/d of stream water enters the "
             f"submerged bed on average ({block['paths']} flow paths)"]
    if block.get("bedform_exchange_flux_closed_form_m_per_s") is not None:
        lines.append(f"  bedform pumping alone (Elliott & Brooks 1997, closed form): "
                     f"{block['bedform_exchange_flux_closed_form_m_per_s'] * DAY:.3g} m/d")
    horizon = _duration(block["horizon_s"])

    def within(seconds: float | None) -> str:
        return _duration(seconds) if seconds is not None and np.isfinite(seconds) else f"more than {horizon}"

    lines.append(f"  residence time in the bed (flux-weighted): median {within(q['50'])}; 10 to 90 % of the water "
                 f"from {within(q['10'])} to {within(q['90'])}")
    depth = block[f"depth_holding_{round(100 * DEPTH_SHARE)}_percent_m"]
    lines.append(f"  {100 * DEPTH_SHARE:.0f} % of the exchanged water stays within {depth:.3g} m of the bed")
    shares = [(fate["returns_to_stream"], "returns to the stream through the bed"),
              (fate["to_aquifer"], "leaves to the aquifer (sides, base)"),
              (fate["seepage_face"], "comes out at a seepage face"),
              (fate["taken_up_in_cells"], "is taken up by roots"),
              (fate.get("to_ground_surface"), "evaporates from the exposed ground"),
              (fate["not_out_within_horizon"], f"is still in the ground after {horizon}")]
    lines.append("  of it, " + "; ".join(f"{100 * v:.0f} % {what}" for v, what in shares if v))
    if "water_entered_m2" in block:
        r = block["return_time_quantiles_s"]
        frac = block["returned_fraction"]
        back = [f"{word} of it within {_duration(r[q])}" for q, word in (("25", "a quarter"), ("50", "half"))
                if r[q] is not None and np.isfinite(r[q])]
        lines.append(f"  bank storage: {block['water_entered_m2']:.4g} m3 per metre went into the bed, "
                     f"{block['water_returned_m2']:.4g} m3 came back through it by the end"
                     + (f" ({100 * frac:.0f} %)" if frac is not None else "")
                     + (f"; {', '.join(back)}" if back else ""))
    return lines


def _path_lines(drawn: xr.Dataset) -> tuple[list[np.ndarray], np.ndarray]:
    """Polylines of the drawn paths (split where a path wraps around periodic sides) and the
    residence time of the path each belongs to (NaN: not out within the horizon)."""
    px, pz = drawn["path_x"].values, drawn["path_z"].values
    width = float(np.nanmax(px) - np.nanmin(px)) if np.isfinite(px).any() else 0.0
    lines, times = [], []
    tracked = np.where(np.isfinite(drawn["residence_time"].values), drawn["time_tracked"].values, np.nan)
    for x, z, t in zip(px, pz, tracked):
        keep = np.isfinite(x)
        x, z = x[keep], z[keep]
        cuts = np.flatnonzero(np.abs(np.diff(x)) > 0.5 * width) + 1 if width > 0 else np.zeros(0, dtype=int)
        for xs, zs in zip(np.split(x, cuts), np.split(z, cuts)):
            if xs.size > 1:
                lines.append(np.column_stack([xs, zs]))
                times.append(t)
    return lines, np.asarray(times)


def flowpath_figures(ds: xr.Dataset, fp: xr.Dataset, drawn: xr.Dataset, outdir: Path) -> list[Path]:
    """flowpaths.png, residence_times.png and (transient) bank_storage_return.png."""
    import matplotlib.pyplot as plt
    from matplotlib.collections import LineCollection
    from matplotlib.colors import LogNorm

    from bedflux.outputs.figures import apply_style, mark_partial, save

    apply_style()
    written = []
    # the section with the paths coloured by residence time
    fig, ax = plt.subplots(figsize=(8, 4))
    lines, times = _path_lines(drawn)
    finite = times[np.isfinite(times) & (times > 0)]
    out = np.isfinite(times)
    if (~out).any():
        ax.add_collection(LineCollection([ln for ln, o in zip(lines, out) if not o], colors="0.6", linewidths=0.8,
                                         label="not out by the end" if "volume" in fp else "not out within the horizon"))
    if finite.size:
        norm = LogNorm(vmin=float(finite.min()) / HOUR, vmax=max(float(finite.max()), float(finite.min()) * 1.01) / HOUR)
        lc = LineCollection([ln for ln, o in zip(lines, out) if o], array=times[out] / HOUR, cmap="viridis", norm=norm,
                            linewidths=0.8)
        ax.add_collection(lc)
        fig.colorbar(lc, ax=ax, fraction=0.04, pad=0.01).set_label("time in the bed (h)")
    x = ds["x"].values
    ax.plot(x, ds["ground"].values, color="#4d3319", lw=1.5, label="ground")
    deepest = np.nanmax(fp["depth_reached"].values) if fp.sizes["path"] else 0.0
    top = float(np.nanmax(ds["ground"].values))
    low = float(np.nanmin(ds["ground"].values)) - 1.3 * max(deepest, 1e-3)
    ax.set_ylim(max(low, float(ds["z_edge"].values[-1])), top + 0.05 * (top - low))
    ax.set_xlim(float(ds["x_edge"].values[0]), float(ds["x_edge"].values[-1]))
    ax.set_xlabel("x (m)")
    ax.set_ylabel("elevation (m)")
    ax.set_title("Paths of stream water through the bed, coloured by the time they take")
    ax.legend(loc="lower left", fontsize=7)
    mark_partial(fig, ds)
    written.append(save(fig, outdir / "flowpaths.png"))
    # residence time distribution: share of the exchanged water staying longer than t
    fig, ax = plt.subplots(figsize=(6, 4))
    w = carried(fp)
    t = fp["time_tracked"].values
    out = fp["exit_kind"].values.astype(str) != "not out within the horizon"
    order = np.argsort(np.where(out, t, np.inf))
    exceed = 1.0 - np.cumsum(w[order]) / w.sum()
    keep = out[order] & (t[order] > 0)
    ax.step(t[order][keep] / HOUR, exceed[keep], where="post", color="k")
    ax.set_xscale("log")
    ax.set_ylim(0.0, 1.0)
    ax.set_xlabel("residence time in the bed (h)")
    ax.set_ylabel("share of the exchanged water\nstaying longer")
    ax.axhline(0.5, color="0.6", lw=0.8, ls=":")
    ax.set_title("Residence time distribution (flux-weighted)")
    written.append(save(fig, outdir / "residence_times.png"))
    if "volume" in fp:
        fig, ax = plt.subplots(figsize=(8, 3.5))
        times = ds["time"].values
        entered, returned = returned_over_time(fp, times)
        ax.plot(times / HOUR, entered, color="#e66101", label="stream water gone into the bed")
        ax.plot(times / HOUR, returned, color="#5e3c99", label="of it, come back through the bed")
        ax.set_xlabel("time (h)")
        ax.set_ylabel("m3 per metre")
        ax.legend(loc="upper left", fontsize=7)
        ax.set_title("Bank storage: when the water that went in comes back (tracked paths)")
        mark_partial(fig, ds)
        written.append(save(fig, outdir / "bank_storage_return.png"))
    return written
