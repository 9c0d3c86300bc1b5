"""Field figures: transect profiles, the bed flux map, gradient against flux.

Figures are drawn on :class:`matplotlib.figure.Figure` objects (no pyplot state, no display).
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from .mapping import BedMap

#: Fluxes are shown in cm/d, the unit field notes use.
_CM_PER_DAY = 8.64e6


def transect_profiles(meters: pd.DataFrame, path: Path) -> None:
    """Meter mean flux against distance across the channel, one line per transect, 95 % bars."""
    fig = Figure(figsize=(7, 4.5))
    ax = fig.add_subplot()
    for label, g in meters[meters["transect"] != ""].groupby("transect", sort=True):
        g = g.sort_values("y [m]")
        mean = g["mean [m/s]"].to_numpy() * _CM_PER_DAY
        half = np.nan_to_num((g["ci95_high [m/s]"] - g["mean [m/s]"]).to_numpy() * _CM_PER_DAY)
        ax.errorbar(g["y [m]"], mean, yerr=half, marker="o", capsize=3, label=f"transect {label}")
        out = g["robust_outlier"].to_numpy()
        ax.plot(g["y [m]"].to_numpy()[out], mean[out], "kx", ms=10)
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.set_xlabel("distance across the channel, y [m]")
    ax.set_ylabel("bed flux [cm/d] (+ = discharge to the stream)")
    ax.set_title("Seepage-meter transects (bars: 95 % t interval; x: robust outlier)")
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=8)
    fig.savefig(path, dpi=120, bbox_inches="tight")


def bed_map(bed: BedMap, meters: pd.DataFrame, path: Path) -> None:
    """Kriged bed flux over the reach with the meter locations."""
    fig = Figure(figsize=(8, 4))
    ax = fig.add_subplot()
    values = bed.flux * _CM_PER_DAY
    lim = float(np.nanmax(np.abs(values)))
    mesh = ax.pcolormesh(bed.x, bed.y, values, shading="auto", cmap="RdBu_r", vmin=-lim, vmax=lim)
    ax.scatter(meters["x [m]"], meters["y [m]"], c="k", s=14, label="seepage meters")
    fig.colorbar(mesh, ax=ax, label="bed flux [cm/d] (+ = gaining)")
    ax.set_xlabel("distance along the reach, x [m]")
    ax.set_ylabel("across, y [m]")
    ax.set_title("Bed flux by ordinary kriging")
    ax.legend(fontsize=8, loc="upper right")
    fig.savefig(path, dpi=120, bbox_inches="tight")


def gradient_vs_flux(comparison: pd.DataFrame, path: Path) -> None:
    """Metered flux against vertical gradient at shared sites, with the median implied Kv line."""
    fig = Figure(figsize=(6, 4.5))
    ax = fig.add_subplot()
    j = comparison["vhg [1]"].to_numpy(dtype=float)
    q = comparison["meter_flux [m/s]"].to_numpy(dtype=float) * _CM_PER_DAY
    ax.scatter(j, q, c="C0", zorder=3)
    for site, xj, yq in zip(comparison["site"], j, q):
        ax.annotate(str(site), (xj, yq), fontsize=7, xytext=(3, 3), textcoords="offset points")
    k = np.nanmedian(comparison["implied_kv [m/s]"].to_numpy(dtype=float)) if len(j) else np.nan
    if np.isfinite(k):
        line = np.array([min(0.0, j.min()), max(0.0, j.max())])
        ax.plot(line, k * line * _CM_PER_DAY, "C1--", label=f"q = K vhg, median implied K = {k:.2g} m/s")
        ax.legend(fontsize=8)
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.axvline(0.0, color="0.5", lw=0.8)
    ax.set_xlabel("vertical hydraulic gradient [1] (+ = upward)")
    ax.set_ylabel("metered bed flux [cm/d] (+ = upward)")
    ax.set_title("Gradient against flux at shared sites")
    fig.savefig(path, dpi=120, bbox_inches="tight")
