"""Figures of model results, in one style.

Colour maps read in greyscale and for colour-blind readers (cividis for heads, a purple-orange
diverging map centred on zero for fluxes). Fluxes are drawn in a selectable display unit while
files stay SI. Every figure is written atomically.
"""
from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import xarray as xr  # noqa: E402
from matplotlib.colors import TwoSlopeNorm  # noqa: E402

from bedflux.scenario.units import SECONDS_PER_DAY, flux_factor
from bedflux.outputs.atomic import write_with  # noqa: E402

GAINING = "#5e3c99"
LOSING = "#e66101"
HEAD_MAP = "cividis"
FLUX_MAP = "PuOr"  # orange = losing (negative), purple = gaining, as GAINING / LOSING
TEMPERATURE_MAP = "plasma"  # perceptually uniform, reads in greyscale
ZONE_GREYS = ["#f2f2f2", "#d0d0d0", "#b0b0b0", "#909090", "#e0e0e0", "#c0c0c0"]


def apply_style() -> None:
    """The shared figure style."""
    plt.rcParams.update({
        "figure.dpi": 110, "savefig.dpi": 110, "font.size": 9, "axes.titlesize": 10,
        "axes.grid": False, "axes.spines.top": False, "axes.spines.right": False,
        "legend.frameon": False,
    })


def save(fig: plt.Figure, path: str | Path) -> Path:
    """Write a figure atomically and close it."""
    path = Path(path)
    write_with(path, lambda tmp: fig.savefig(tmp, format=path.suffix.lstrip(".") or "png",
                                             bbox_inches="tight"))
    plt.close(fig)
    return path


def partial_label(ds: xr.Dataset) -> str:
    """``INTERRUPTED at t = 2.5 h of 4 h: state at t = 2.0 h`` for a partial run, else ``""``."""
    from bedflux.section.results import partial_run

    p = partial_run(ds)
    if p is None:
        return ""
    word = "INTERRUPTED" if p["reason"].startswith("interrupted") else "STOPPED"
    text = f"{word} at t = {p['stopped_at_s'] / 3600.0:.4g} h"
    if p["planned_end_s"] is not None:
        text += f" of {p['planned_end_s'] / 3600.0:.4g} h"
    return text + f": outputs up to t = {p['last_output_s'] / 3600.0:.4g} h"


def mark_partial(fig: plt.Figure, ds: xr.Dataset) -> None:
    """Label a figure of a partial run above everything else in it (nothing for a complete run);
    the saved image grows to hold the label."""
    label = partial_label(ds)
    if label:
        fig.text(0.5, 1.0, label, ha="center", va="bottom", color=LOSING, fontsize=10, fontweight="bold")


def _streamlines(ax, ds: xr.Dataset) -> None:
    """Flow paths from qx, qz interpolated to a regular grid (streamplot needs one)."""
    x = ds["x"].values
    z = ds["z"].values[::-1]
    qx = ds["qx"].values[::-1]
    qz = ds["qz"].values[::-1]
    if x.size < 3 or z.size < 3:
        return
    zi = np.linspace(z[0], z[-1], max(z.size, 40))
    xi = np.linspace(x[0], x[-1], max(x.size, 40))

    def regrid(a):
        by_col = np.array([np.interp(zi, z, a[:, j], left=np.nan, right=np.nan) for j in range(x.size)]).T
        return np.array([np.interp(xi, x, row, left=np.nan, right=np.nan) for row in by_col])

    u, w = regrid(qx), regrid(qz)
    speed = np.hypot(u, w)
    if not np.isfinite(speed).any() or np.nanmax(speed) == 0:
        return
    # equal visual weight for slow and fast flow: directions only
    with np.errstate(invalid="ignore", divide="ignore"):
        un, wn = u / speed, w / speed
    ax.streamplot(xi, zi, np.ma.masked_invalid(un), np.ma.masked_invalid(wn), color="k", linewidth=0.6,
                  density=1.0, arrowsize=0.7, broken_streamlines=True)


def section_figure(ds: xr.Dataset, path: str | Path, unit: str = "m/d", time_index: int | None = None) -> Path:
    """Head contours and flow paths over the zones, with the bed-flux profile beneath; in a variably
    saturated run the unsaturated soil is shaded by 1 - saturation under the contours, with the
    water table; in a run with ``[heat]`` the temperature is shaded."""
    apply_style()
    whole = ds
    if "time" in ds.dims:
        ds = ds.isel(time=-1 if time_index is None else time_index)
    fac = flux_factor(unit)
    fig, (ax, axf) = plt.subplots(2, 1, figsize=(8, 6), sharex=True, gridspec_kw={"height_ratios": [2.2, 1]})
    xe, ze = ds["x_edge"].values, ds["z_edge"].values
    zone = np.ma.masked_less(ds["zone"].values.astype(float), 0)
    from matplotlib.colors import ListedColormap

    names = ds.attrs.get("zone_names", "").split(",")
    ax.pcolormesh(xe, ze, zone, cmap=ListedColormap(ZONE_GREYS[: max(len(names), 1)]), vmin=-0.5,
                  vmax=len(ZONE_GREYS[: max(len(names), 1)]) - 0.5, shading="flat")
    if "saturation" in ds:
        # variably saturated run: the unsaturated soil shaded by how dry it is, and the water table
        dryness = np.ma.masked_invalid(1.0 - ds["saturation"].values)
        mesh = ax.pcolormesh(xe, ze, np.ma.masked_less_equal(dryness, 1e-9), cmap="YlOrBr", vmin=0.0, vmax=1.0,
                             alpha=0.55, shading="flat")
        fig.colorbar(mesh, ax=ax, fraction=0.03, pad=0.01).set_label("1 - saturation", fontsize=7)
        ax.plot(ds["x"].values, ds["water_table"].values, color="#08519c", lw=1.2, ls="--", label="water table")
    elif "temperature" in ds:
        # a run with [heat]: the temperature shaded under the head contours
        mesh = ax.pcolormesh(xe, ze, np.ma.masked_invalid(ds["temperature"].values), cmap=TEMPERATURE_MAP,
                             alpha=0.6, shading="flat")
        fig.colorbar(mesh, ax=ax, fraction=0.03, pad=0.01).set_label("temperature (degC)", fontsize=7)
    head = ds["head"].values
    if np.isfinite(head).sum() > 4 and np.nanmax(head) > np.nanmin(head) and min(head.shape) > 1:
        cs = ax.contour(ds["x"].values, ds["z"].values, np.ma.masked_invalid(head), levels=12, cmap=HEAD_MAP,
                        linewidths=1.0)
        ax.clabel(cs, fontsize=6, fmt="%.3f")
    _streamlines(ax, ds)
    ax.plot(ds["x"].values, ds["ground"].values, color="#4d3319", lw=1.5, label="ground")
    stage = float(ds["stage"].values)
    if np.isfinite(stage):
        wet = np.isfinite(ds["bed_flux"].values)
        ax.plot(ds["x"].values, np.where(wet, stage, np.nan), color="#2166ac", lw=2, label="stage")
    ax.set_ylabel("elevation (m)")
    ax.set_title(ds.attrs.get("title", "section"))
    for i, n in enumerate(names):
        ax.plot([], [], "s", color=ZONE_GREYS[i % len(ZONE_GREYS)], label=f"zone {n}", mec="0.4")
    ax.legend(loc="lower left", fontsize=7, ncol=3)
    bed_profile(axf, ds, fac, unit)
    axf.set_xlabel("x (m)")
    fig.tight_layout()
    mark_partial(fig, whole)
    return save(fig, path)


def bed_profile(ax, ds: xr.Dataset, fac: float, unit: str) -> None:
    """Bed flux along x with gaining (positive) and losing (negative) reaches shaded."""
    x = ds["x"].values
    q = ds["bed_flux"].values * fac
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.plot(x, q, color="k", lw=1.2)
    ax.fill_between(x, q, 0, where=np.nan_to_num(q) > 0, color=GAINING, alpha=0.45, label="gaining", step=None)
    ax.fill_between(x, q, 0, where=np.nan_to_num(q) < 0, color=LOSING, alpha=0.45, label="losing")
    ax.set_ylabel(f"bed flux ({unit})\nup = gaining")
    ax.legend(loc="best", fontsize=7)


def bed_flux_map(ds: xr.Dataset, path: str | Path, unit: str = "m/d") -> Path:
    """Bed flux as a colour map over time and x, with the stage hydrograph above it."""
    apply_style()
    fac = flux_factor(unit)
    t_h = ds["time"].values / 3600.0
    fig, (ax_s, ax) = plt.subplots(2, 1, figsize=(8, 5.5), sharex=True, gridspec_kw={"height_ratios": [1, 2.5]})
    ax_s.plot(t_h, ds["stage"].values, color="#2166ac")
    ax_s.set_ylabel("stage (m)")
    ax_s.set_title(ds.attrs.get("title", ""))
    q = ds["bed_flux"].values * fac
    # a robust colour range: brief spikes where a dry floodplain column first floods would
    # otherwise wash out the channel
    lim = float(np.nanpercentile(np.abs(q), 98)) if np.isfinite(q).any() else 1.0
    lim = lim if lim > 0 else 1.0
    m = ax.pcolormesh(t_h, ds["x"].values, np.ma.masked_invalid(q.T), cmap=FLUX_MAP,
                      norm=TwoSlopeNorm(0.0, -lim, lim), shading="nearest")
    fig.colorbar(m, ax=[ax_s, ax], label=f"bed flux ({unit}), up = gaining", shrink=0.8, extend="both")
    ax.set_xlabel("time (h)")
    ax.set_ylabel("x (m)")
    mark_partial(fig, ds)
    return save(fig, path)


def exchange_figure(ds: xr.Dataset, path: str | Path) -> Path:
    """Net exchange per metre of section width (of channel, or of channel width for a section along
    the channel) with the stage hydrograph."""
    apply_style()
    t_h = ds["time"].values / 3600.0
    ex = ds["exchange"].values * SECONDS_PER_DAY
    fig, ax = plt.subplots(figsize=(8, 3.5))
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.plot(t_h, ex, color="k", label="net exchange")
    ax.fill_between(t_h, ex, 0, where=ex > 0, color=GAINING, alpha=0.4, label="gaining")
    ax.fill_between(t_h, ex, 0, where=ex < 0, color=LOSING, alpha=0.4, label="losing (into bank storage)")
    ax.set_xlabel("time (h)")
    of = "channel width" if ds.attrs.get("section_runs") == "along" else "channel"
    ax.set_ylabel(f"net exchange\n(m3/d per m of {of})")
    ax2 = ax.twinx()
    ax2.plot(t_h, ds["stage"].values, color="#2166ac", ls="--", label="stage")
    ax2.set_ylabel("stage (m)")
    ax.legend(loc="upper right", fontsize=7)
    mark_partial(fig, ds)
    return save(fig, path)


def run_figures(ds: xr.Dataset, outdir: str | Path, unit: str = "m/d") -> list[Path]:
    """Every figure of a run: the section; for transient runs also the flux map and exchange."""
    outdir = Path(outdir)
    paths = [section_figure(ds, outdir / "section.png", unit)]
    if "time" in ds.dims and ds.sizes["time"] > 1:
        paths.append(bed_flux_map(ds, outdir / "bed_flux_map.png", unit))
        paths.append(exchange_figure(ds, outdir / "exchange.png"))
    return paths


_KIND_UNITS = {"head": ("head (m)", 1.0), "vhg": ("vertical gradient (-), up > 0", 1.0),
               "seepage": ("seepage flux (m/d), up > 0", SECONDS_PER_DAY),
               "temperature": ("temperature (degC)", 1.0),
               "thermal_flux": ("flux from temperature (m/d), up > 0", SECONDS_PER_DAY)}


def observed_vs_simulated(residuals, path: str | Path) -> Path:
    """Observed against simulated values with error bars (2 sigma), one panel per kind."""
    apply_style()
    kinds = [k for k in _KIND_UNITS if (residuals["kind"] == k).any()]
    fig, axes = plt.subplots(1, len(kinds), figsize=(3.6 * len(kinds), 3.4), squeeze=False)
    for ax, k in zip(axes[0], kinds):
        r = residuals[residuals["kind"] == k]
        label, f = _KIND_UNITS[k]
        ax.errorbar(r["simulated"] * f, r["value"] * f, yerr=2 * r["sigma"] * f, fmt="o", ms=3.5,
                    color="k", ecolor="0.5", capsize=2)
        lo = float(min(r["simulated"].min(), r["value"].min())) * f
        hi = float(max(r["simulated"].max(), r["value"].max())) * f
        pad = 0.05 * (hi - lo if hi > lo else abs(hi) + 1e-12)
        ax.plot([lo - pad, hi + pad], [lo - pad, hi + pad], color=GAINING, lw=1)
        ax.set_xlabel(f"simulated {label}")
        ax.set_ylabel(f"observed {label}")
        ax.set_title(k)
    fig.tight_layout()
    return save(fig, path)


def residual_figure(residuals, path: str | Path, steady: bool = False) -> Path:
    """Weighted residuals against x and against time (a steady run: against the observation's
    row number, since a steady run has no clock)."""
    apply_style()
    fig, (a, b) = plt.subplots(1, 2, figsize=(8, 3.2), sharey=True)
    markers = {"head": "s", "vhg": "^", "seepage": "o", "temperature": "D", "thermal_flux": "v"}
    row = np.arange(1, len(residuals) + 1)
    for k, r in residuals.groupby("kind"):
        a.plot(r["x"], r["weighted_residual"], markers.get(k, "o"), ms=4, label=k, mfc="none", color="k")
        across = row[residuals["kind"].to_numpy() == k] if steady else r["time"] / 3600.0
        b.plot(across, r["weighted_residual"], markers.get(k, "o"), ms=4, mfc="none", color="k")
    for ax in (a, b):
        ax.axhline(0, color="0.5", lw=0.8)
        ax.axhspan(-2, 2, color="0.92", zorder=0)
    a.set_xlabel("x (m)")
    b.set_xlabel("observation (row of the table)" if steady else "time (h)")
    a.set_ylabel("(observed - simulated) / sigma")
    a.legend(fontsize=7)
    fig.tight_layout()
    return save(fig, path)


def parameter_intervals(result, path: str | Path) -> Path:
    """Best values and 95 % intervals, relative to the best value (log scale)."""
    apply_style()
    paths = result.paths
    fig, ax = plt.subplots(figsize=(6, 0.5 + 0.45 * len(paths)))
    for i, p in enumerate(paths):
        best = result.best[p]
        lo, hi = result.ci95[p]
        if best > 0 and lo > 0:
            ax.plot([lo / best, hi / best], [i, i], color="k", lw=2)
        else:
            ax.plot([1 - abs((best - lo) / best) if best else 0, 1 + abs((hi - best) / best) if best else 0],
                    [i, i], color="k", lw=2)
        ax.plot([1], [i], "o", color=GAINING)
        ax.text(1.02, i + 0.18, f"{best:.3g}", fontsize=7)
    ax.set_yticks(range(len(paths)), paths)
    ax.set_ylim(-0.5, len(paths) - 0.5)  # room for the value labels, also with one parameter
    ax.set_xscale("log")
    left, right = ax.get_xlim()
    if right / left < 1.1:  # intervals narrower than the axis can show (an exact fit)
        ax.set_xlim(0.5, 2.0)
    ax.axvline(1, color="0.6", lw=0.8)
    ax.set_xlabel("95 % interval / best value")
    fig.tight_layout()
    return save(fig, path)


def plan_map(table, geometry, path: str | Path) -> Path:
    """The section with the picks, and the expected spread along x after one instrument there.

    ``geometry`` is a :class:`bedflux.forward.geometry.BedGeometry` (columns, ground, stage, zones).
    """
    from matplotlib.colors import ListedColormap

    apply_style()
    g = geometry
    fig, (ax, axs) = plt.subplots(2, 1, figsize=(8, 5.5), sharex=True, gridspec_kw={"height_ratios": [1.6, 1]})
    zone = np.ma.masked_less(g.zone.astype(float), 0)
    nz = g.zone_count
    ax.pcolormesh(g.x_edges, g.z_edges, zone, cmap=ListedColormap(ZONE_GREYS[:nz]), vmin=-0.5, vmax=nz - 0.5)
    ax.plot(g.x, g.ground, color="#4d3319", lw=1.5)
    wet = g.submerged
    if wet.any():
        ax.plot(g.x, g.stage, color="#2166ac", lw=2, label="stage")
    ground_at = np.interp(table["x"], g.x, g.ground)
    seep = (table["kind"] == "seepage").to_numpy()
    piezo = (table["kind"] == "piezometer").to_numpy()
    pair = (table["kind"] == "logger_pair").to_numpy()
    if seep.any():
        ax.plot(table["x"][seep], ground_at[seep], "v", color=GAINING, ms=9, label="seepage meter")
    if piezo.any():
        ax.plot(table["x"][piezo], ground_at[piezo] - table["depth"][piezo], "o", color=LOSING, ms=7,
                label="piezometer opening")
    if pair.any():
        xs = table["x"].to_numpy()[pair]
        top, bottom = (ground_at[pair] - table[c].to_numpy(dtype=float)[pair] for c in ("shallow_depth", "deep_depth"))
        ax.vlines(xs, bottom, top, color="0.2", lw=1.2)
        ax.plot(np.concatenate([xs, xs]), np.concatenate([top, bottom]), "s", color="0.2", ms=5,
                label="logger pair (sensors)")
    for _, r in table.iterrows():
        ax.annotate(str(int(r["rank"])), (r["x"], np.interp(r["x"], g.x, g.ground) - r["depth"]),
                    textcoords="offset points", xytext=(4, 6), fontsize=8)
    top = float(np.max(g.ground))
    deepest = table["deep_depth"].max() if "deep_depth" in table and table["deep_depth"].notna().any() else 0.0
    depth_shown = max(2.0, 6 * float(max(table["depth"].max(), deepest) if len(table) else 0.3))
    ax.set_ylim(top - depth_shown, top + 0.5 + (float(np.nanmax(g.stage)) - top if wet.any() else 0))
    ax.set_ylabel("elevation (m)")
    ax.set_title(f"next instruments for: {table.attrs.get('target', '')}")
    ax.legend(loc="lower left", fontsize=7, ncol=3)
    sx = np.asarray(table.attrs.get("single_x", []))
    sk = np.asarray(table.attrs.get("single_kind", []))
    factor = float(table.attrs.get("display_factor", 1.0))
    sd = np.asarray(table.attrs.get("single_sd", []), dtype=float) * factor
    sdep = np.asarray(table.attrs.get("single_depth", []), dtype=float)
    if sx.size:
        s = sk == "seepage"
        p = sk == "piezometer"
        if s.any():
            axs.plot(sx[s], sd[s], color=GAINING, label="one seepage meter at x")
        for dep in np.unique(sdep[p]):
            sel = p & (sdep == dep)
            axs.plot(sx[sel], sd[sel], color=LOSING, alpha=0.4 + 0.6 * dep / max(sdep[p].max(), 1e-9),
                     label=f"one piezometer {dep:.2g} m deep")
        for dep in np.unique(sdep[sk == "logger_pair"]):
            sel = (sk == "logger_pair") & (sdep == dep)
            axs.plot(sx[sel], sd[sel], color="0.2", ls="-.", label=f"one logger pair, mid-depth {dep:.2g} m")
    prior = table.attrs.get("prior_sd")
    if prior is not None:
        axs.axhline(prior * factor, color="0.5", ls="--", lw=0.8, label="before")
    unit = table.attrs.get("display_unit", "")
    axs.set_ylabel(f"expected spread ({unit})" if unit and len(unit) < 20 else "expected spread")
    axs.set_xlabel("x (m)")
    axs.legend(fontsize=7)
    fig.tight_layout()
    return save(fig, path)


def detectability_map(piezo, seep, path: str | Path) -> Path:
    """How long a reversal is detectable: by manometer over x and depth, by seepage meter along x."""
    apply_style()
    fig, (a, b) = plt.subplots(2, 1, figsize=(8, 5), sharex=True)
    if len(piezo):
        xs = np.unique(piezo["x"])
        ds_ = np.unique(piezo["depth"])
        grid = piezo.pivot_table(index="depth", columns="x", values="detectable_duration").reindex(index=ds_, columns=xs)
        m = a.pcolormesh(xs, ds_, grid.values / 3600.0, cmap=HEAD_MAP, shading="nearest")
        fig.colorbar(m, ax=a, label="detectable reversal (h)")
        a.invert_yaxis()
    a.set_ylabel("piezometer depth (m)")
    a.set_title("reversal seen by a manometer (beyond its reading resolution)")
    if len(seep):
        b.plot(seep["x"], seep["detectable_duration"] / 3600.0, color=GAINING)
    b.set_ylabel("detectable by meter (h)")
    b.set_xlabel("x (m)")
    fig.tight_layout()
    return save(fig, path)


# --------------------------------------------------------------------------------- field figures

def transect_profiles(meters, path: str | Path, unit: str = "cm/d") -> Path:
    """Seepage-meter mean flux across the channel, one line per transect, 95 % bars; x marks a
    robust outlier."""
    apply_style()
    fac = flux_factor(unit)
    fig, ax = plt.subplots(figsize=(7, 4.5))
    styles = ["o-", "s--", "^-.", "d:", "v-"]
    for i, (label, g) in enumerate(meters[meters["transect"] != ""].groupby("transect", sort=True)):
        g = g.sort_values("y [m]")
        mean = g["mean [m/s]"].to_numpy() * fac
        half = np.nan_to_num((g["ci95_high [m/s]"] - g["mean [m/s]"]).to_numpy() * fac)
        ax.errorbar(g["y [m]"], mean, yerr=half, fmt=styles[i % len(styles)], color="k", mfc="white",
                    capsize=3, label=f"transect {label}")
        out = g["robust_outlier"].to_numpy()
        ax.plot(g["y [m]"].to_numpy()[out], mean[out], "x", color=LOSING, ms=10, mew=2)
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.set_xlabel("distance across the channel, y (m)")
    ax.set_ylabel(f"bed flux ({unit}), up = gaining")
    ax.set_title("Seepage-meter transects (bars: 95 % t interval; x: robust outlier)")
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=8)
    fig.tight_layout()
    return save(fig, path)


def field_bed_map(bed, meters, path: str | Path, unit: str = "cm/d") -> Path:
    """Kriged bed flux over the reach (diverging map centred on zero) with the meters."""
    apply_style()
    fac = flux_factor(unit)
    fig, ax = plt.subplots(figsize=(8, 4))
    values = bed.flux * fac
    lim = float(np.nanmax(np.abs(values))) or 1.0
    mesh = ax.pcolormesh(bed.x, bed.y, values, shading="auto", cmap=FLUX_MAP, norm=TwoSlopeNorm(0.0, -lim, lim))
    ax.scatter(meters["x [m]"], meters["y [m]"], c="k", s=14, label="seepage meters")
    fig.colorbar(mesh, ax=ax, label=f"bed flux ({unit}), up = gaining")
    ax.set_xlabel("distance along the reach, x (m)")
    ax.set_ylabel("across, y (m)")
    ax.set_title("Bed flux by ordinary kriging")
    ax.legend(fontsize=8, loc="upper right")
    fig.tight_layout()
    return save(fig, path)


def gradient_vs_flux(comparison, path: str | Path, unit: str = "cm/d") -> Path:
    """Metered flux against vertical gradient at shared sites, with the median implied kv line."""
    apply_style()
    fac = flux_factor(unit)
    fig, ax = plt.subplots(figsize=(6, 4.5))
    j = comparison["vhg [1]"].to_numpy(dtype=float)
    q = comparison["meter_flux [m/s]"].to_numpy(dtype=float) * fac
    ax.scatter(j, q, color=GAINING, zorder=3)
    for site, xj, yq in zip(comparison["site"], j, q):
        ax.annotate(str(site), (xj, yq), fontsize=7, xytext=(3, 3), textcoords="offset points")
    k = np.nanmedian(comparison["implied_kv [m/s]"].to_numpy(dtype=float)) if len(j) else np.nan
    if np.isfinite(k):
        line = np.array([min(0.0, j.min()), max(0.0, j.max())])
        ax.plot(line, k * line * fac, "--", color=LOSING, label=f"q = K vhg, median implied K = {k:.2g} m/s")
        ax.legend(fontsize=8)
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.axvline(0.0, color="0.5", lw=0.8)
    ax.set_xlabel("vertical hydraulic gradient (-), up > 0")
    ax.set_ylabel(f"metered bed flux ({unit}), up > 0")
    ax.set_title("Gradient against flux at shared sites")
    fig.tight_layout()
    return save(fig, path)
