"""Figures of an ensemble: a fan chart of the net exchange under the stage, the probability of
losing along the bed, and histograms of the event answers (the run figures' style)."""
from __future__ import annotations

from pathlib import Path

import matplotlib.pyplot as plt
import numpy as np
import xarray as xr

from bedflux.outputs.figures import GAINING, LOSING, apply_style, save
from bedflux.ensembles.summary import ANSWERS, HOUR, answers, losing_probability

#: answers shown as histograms, of transient and of steady ensembles
HISTOGRAMS = {True: ("reversal_duration", "bank_storage", "penetration_depth", "reversal_start"),
              False: ("net_exchange",)}


def fan_chart(ds: xr.Dataset, path: Path, deterministic: np.ndarray | None = None) -> Path:
    """Stage (top) and the net exchange's median, 25-75 % and 5-95 % bands over time (bottom)."""
    apply_style()
    ok = ds["failed"].values == 0
    t = ds["time"].values / HOUR
    ex = np.asarray(ds["exchange"].values, dtype=float)[ok]
    st = np.asarray(ds["stage"].values, dtype=float)[ok]
    fig, (a0, a1) = plt.subplots(2, 1, figsize=(7.5, 5.2), sharex=True, gridspec_kw={"height_ratios": [1, 2]})
    q = np.quantile(st, [0.05, 0.5, 0.95], axis=0)
    a0.fill_between(t, q[0], q[2], color="#9ecae1", alpha=0.6, lw=0)
    a0.plot(t, q[1], color="#08519c", lw=1.4)
    a0.set_ylabel("stage (m)")
    q = np.quantile(ex, [0.05, 0.25, 0.5, 0.75, 0.95], axis=0)
    a1.fill_between(t, q[0], q[4], color=GAINING, alpha=0.18, lw=0, label="5-95 %")
    a1.fill_between(t, q[1], q[3], color=GAINING, alpha=0.35, lw=0, label="25-75 %")
    a1.plot(t, q[2], color=GAINING, lw=1.6, label="median")
    if deterministic is not None:
        a1.plot(t, deterministic, color="k", lw=1.0, ls="--", label="deterministic run")
    a1.axhline(0.0, color=LOSING, lw=0.8)
    a1.set_ylabel("net exchange (m²/s per m)\n+ gaining, − losing")
    a1.set_xlabel("time (h)")
    a1.legend(loc="best")
    a0.set_title(f"{ds.attrs.get('title', 'ensemble')}: {int(ok.sum())} members")
    return save(fig, path)


def losing_figure(ds: xr.Dataset, path: Path) -> Path:
    """Probability that the bed loses water at some time, along x."""
    apply_style()
    x = ds["x"].values
    fig, ax = plt.subplots(figsize=(7.5, 3.0))
    p = losing_probability(ds)
    ax.fill_between(x, 0, 100 * p, color=LOSING, alpha=0.4, step="mid", lw=0,
                    label="at some time" if "time" in ds.dims else None)
    if "time" in ds.dims:
        ax.plot(x, 100 * losing_probability(ds, at_end=True), color="k", drawstyle="steps-mid", lw=1.2,
                label="at the end of the run")
        ax.legend(loc="best")
    ax.set_ylim(0, 100)
    ax.set_xlabel("x (m)")
    ax.set_ylabel("probability of losing (%)")
    ax.set_title("where the bed loses water (share of the members, where the stream covers the bed)")
    return save(fig, path)


def histograms(ds: xr.Dataset, path: Path) -> Path:
    """Histograms of the answers of the members that ran."""
    apply_style()
    ans = answers(ds)
    ok = ds["failed"].values == 0
    keys = HISTOGRAMS["time" in ds.dims]
    fig, axes = plt.subplots(1, len(keys), figsize=(3.0 * len(keys) + 0.5, 2.8), squeeze=False)
    for ax, key in zip(axes[0], keys):
        factor, unit, words = ANSWERS[key]
        v = ans[key][ok] * factor
        v = v[np.isfinite(v)]
        if v.size:
            ax.hist(v, bins=_bins(v), color=GAINING, alpha=0.7)
        else:
            ax.text(0.5, 0.5, "no member has one", ha="center", va="center", transform=ax.transAxes)
        ax.set_xlabel(f"{words} ({unit})")
        ax.set_ylabel("members")
    fig.tight_layout()
    return save(fig, path)


def ensemble_figures(ds: xr.Dataset, outdir: Path, deterministic_exchange: np.ndarray | None = None) -> list[Path]:
    """All figures of an ensemble into ``outdir``."""
    out = [losing_figure(ds, outdir / "ensemble_losing.png"), histograms(ds, outdir / "ensemble_histograms.png")]
    if "time" in ds.dims:
        out.append(fan_chart(ds, outdir / "ensemble_fan.png", deterministic_exchange))
    return out


def _bins(v: np.ndarray) -> np.ndarray:
    """Bin edges for the answers ``v``: up to 30 bins over their range, or one bin around a value
    that the members share (to within the resolution of the floats, where equal-width bins
    cannot be made)."""
    lo, hi = float(v.min()), float(v.max())
    if hi - lo <= 1e-9 * max(abs(lo), abs(hi), 1e-300):
        half = max(abs(lo) * 1e-3, 1e-12)
        return np.array([lo - half, hi + half])
    return np.linspace(lo, hi, min(30, max(5, v.size // 5)) + 1)
