"""The short run summary: net exchange, gaining and losing lengths, budget closure."""
from __future__ import annotations

import numpy as np
import xarray as xr

from .fluxes import BUDGET_LINES


def summarise(ds: xr.Dataset) -> dict:
    """Key figures of a run (SI), for the summary file and the report.

    For transient runs the figures are of the last output time, plus the time range of the net
    exchange.
    """
    last = ds.isel(time=-1) if "time" in ds.dims else ds
    dx = np.diff(ds["x_edge"].values) * last["wetted_fraction"].values  # wetted length per column
    q = last["bed_flux"].values
    wet = np.isfinite(q)
    out = {
        "title": ds.attrs.get("title", ""),
        "run": ds.attrs.get("run", "steady"),
        "solver": ds.attrs.get("solver", ""),
        "cells": int(ds.attrs.get("cells", 0)),
        "exchange_m2_per_s": float(last["exchange"].values),
        # flows are per metre of section width: of channel length across it, of channel width along it
        "per_metre_of": "channel width" if ds.attrs.get("section_runs") == "along" else "channel",
        "section_length_m": float(ds["x_edge"].values[-1] - ds["x_edge"].values[0]),
        "gaining_length_m": float(dx[wet & (q > 0)].sum()),
        "losing_length_m": float(dx[wet & (q < 0)].sum()),
        "submerged_length_m": float(dx[wet].sum()),
        "max_gaining_flux_m_per_s": float(np.nanmax(q)) if wet.any() else float("nan"),
        "max_losing_flux_m_per_s": float(np.nanmin(q)) if wet.any() else float("nan"),
        "budget_closure": float(np.max(np.abs(ds["budget_closure"].values))),
        "budget_in_m2_per_s": {k: float(v) for k, v in zip(BUDGET_LINES, last["budget_in"].values)},
        "budget_out_m2_per_s": {k: float(v) for k, v in zip(BUDGET_LINES, last["budget_out"].values)},
        "resolution_warnings": [w for w in ds.attrs.get("resolution_warnings", "").split("\n") if w],
    }
    if "time" in ds.dims:
        ex = ds["exchange"].values
        out["exchange_min_m2_per_s"] = float(ex.min())
        out["exchange_max_m2_per_s"] = float(ex.max())
        out["end_time_s"] = float(ds["time"].values[-1])
    return out


def summary_text(s: dict) -> str:
    """The summary as a few plain lines (m^3/d per metre of channel and m/d for readability)."""
    day = 86400.0
    verdict = "gaining" if s["exchange_m2_per_s"] > 0 else "losing" if s["exchange_m2_per_s"] < 0 else "neutral"
    lines = [
        f"{s['title']}",
        f"run: {s['run']}, {s['cells']} cells, solver {s['solver']}",
        f"net exchange: {s['exchange_m2_per_s'] * day:.4g} m3/d per metre of {s['per_metre_of']} ({verdict})"
        + (f", over the {s['section_length_m']:.4g} m of the section" if s["per_metre_of"] == "channel width" else ""),
        f"submerged bed: {s['submerged_length_m']:.3g} m; gaining {s['gaining_length_m']:.3g} m, "
        f"losing {s['losing_length_m']:.3g} m",
    ]
    if s["submerged_length_m"] > 0:
        lines.append(f"bed flux: from {s['max_losing_flux_m_per_s'] * day:.3g} to "
                     f"{s['max_gaining_flux_m_per_s'] * day:.3g} m/d (positive = upward, gaining)")
    if "exchange_min_m2_per_s" in s:
        lines.append(f"net exchange over the run: {s['exchange_min_m2_per_s'] * day:.4g} to "
                     f"{s['exchange_max_m2_per_s'] * day:.4g} m3/d per metre")
    et = s["budget_out_m2_per_s"]["evapotranspiration"]
    if et > 0:
        lines.append(f"riparian evapotranspiration from groundwater: {et * day:.4g} m3/d per metre")
    lines.append(f"water budget closure: {s['budget_closure']:.2e} of the inflow")
    lines += [f"grid warning: {w}" for w in s.get("resolution_warnings", [])]
    return "\n".join(lines) + "\n"
