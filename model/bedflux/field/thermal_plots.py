"""Figures of the temperature sheet: the records per site, and the flux through time beside the meters."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from bedflux.outputs.figures import GAINING, LOSING, apply_style, plt, save
from bedflux.scenario.units import SECONDS_PER_DAY, flux_factor


def _grid(n: int, height: float):
    fig, axes = plt.subplots(n, 1, figsize=(8, max(2.6, height * n)), sharex=True, squeeze=False)
    return fig, axes[:, 0]


def temperature_records(readings: pd.DataFrame, path: str | Path) -> Path:
    """One panel per site: temperature against time, one line per sensor depth."""
    apply_style()
    sites = sorted(readings["site"].unique())
    fig, axes = _grid(len(sites), 2.2)
    cmap = plt.get_cmap("cividis")
    for ax, site in zip(axes, sites):
        g = readings[readings["site"] == site]
        depths = np.sort(g["depth [m]"].unique())
        for k, depth in enumerate(depths):
            r = g[g["depth [m]"] == depth].sort_values("time [s]")
            ax.plot(r["time [s]"] / SECONDS_PER_DAY, r["temperature [degC]"], lw=0.8,
                    color=cmap(k / max(len(depths) - 1, 1) * 0.85), label=f"{depth * 100:g} cm")
        ax.set_ylabel("degC")
        ax.set_title(f"{site}: temperature at depth below the bed", fontsize=9)
        ax.legend(fontsize=7, ncol=min(len(depths), 4), loc="upper right")
    axes[-1].set_xlabel("time (days)")
    fig.tight_layout()
    return save(fig, path)


def thermal_flux(fluxes: pd.DataFrame, meters: pd.DataFrame, path: str | Path, unit: str = "cm/d") -> Path:
    """One panel per sensor pair: flux from temperature through time with its +/- 2 sd band
    (amplitude method), the phase and combined methods as points, flagged windows as crosses,
    and the seepage meters at the same site (or the nearest along the reach) with +/- 2 sigma."""
    apply_style()
    fac = flux_factor(unit)
    groups = list(fluxes.groupby(["site", "shallow_depth [m]", "deep_depth [m]"], sort=True))
    fig, axes = _grid(max(len(groups), 1), 2.4)
    for ax, ((site, upper, lower), g) in zip(axes, groups):
        t = g["time [s]"].to_numpy(float) / SECONDS_PER_DAY
        q = g["flux [m/s]"].to_numpy(float) * fac
        s = g["flux_sd [m/s]"].to_numpy(float) * fac
        ax.fill_between(t, q - 2 * s, q + 2 * s, color=GAINING, alpha=0.18, lw=0, label="amplitude +/- 2 sd")
        ax.plot(t, q, "-o", color=GAINING, ms=3, lw=1.2, label="amplitude ratio")
        ax.plot(t, g["flux_phase [m/s]"] * fac, "s", color="0.45", ms=3, mfc="none", label="phase")
        ax.plot(t, g["flux_combined [m/s]"] * fac, "^", color=LOSING, ms=3, mfc="none", label="combined")
        flagged = g["flags"].astype(str).str.strip() != ""
        ax.plot(t[flagged.to_numpy()], q[flagged.to_numpy()], "x", color="k", ms=6, label="flagged window")
        near = _meters_near(meters, site, float(g["x [m]"].iloc[0]))
        if near is not None and not near.empty:
            ax.errorbar(near["time [s]"] / SECONDS_PER_DAY, near["mean [m/s]"] * fac,
                        yerr=2 * near["sigma [m/s]"] * fac, fmt="D", color="k", mfc="white", capsize=3,
                        label=f"seepage meter {', '.join(near['site'])}")
        ax.axhline(0.0, color="0.5", lw=0.8)
        ax.set_ylabel(f"flux ({unit})\nup = gaining", fontsize=8)
        ax.set_title(f"{site}, sensors at {upper * 100:g} and {lower * 100:g} cm", fontsize=9)
        ax.legend(fontsize=6, ncol=3, loc="best")
    axes[-1].set_xlabel("time (days)")
    fig.tight_layout()
    return save(fig, path)


def _meters_near(meters: pd.DataFrame, site: str, x: float) -> pd.DataFrame | None:
    """The meter at ``site``, else the one nearest along the reach."""
    if meters is None or meters.empty:
        return None
    same = meters[meters["site"] == site]
    if not same.empty:
        return same
    return meters.iloc[[int(np.argmin(np.abs(meters["x [m]"].to_numpy(float) - x)))]]
