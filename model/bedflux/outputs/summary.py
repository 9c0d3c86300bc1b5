"""The short run summary: net exchange, gaining and losing lengths, where the bed flux is
strongest, budget closure, and warnings about results that should not be believed."""
from __future__ import annotations

import json
import math
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from bedflux.outputs.extremes import LOWER, UPPER, add_penetration, flux_extremes
from bedflux.section.flood import flood_figures, flood_lines
from bedflux.section.fluxes import BUDGET_LINES, closure_summary
from bedflux.outputs.plausibility import plausibility_warnings
from bedflux.section.results import partial_run
from bedflux.scenario.units import SECONDS_PER_DAY as DAY
HOUR = 3600.0


def run_summary(ds: xr.Dataset) -> dict:
    """Key figures of a run (SI), for the summary file and the report.

    For transient runs the figures are of the last output time, plus the time range of the net
    exchange; the ``bed`` block (extremes with their places, see :mod:`bedflux.outputs.extremes`) covers
    the whole run. ``warnings`` lists what should not be believed as it stands. A figure that does
    not exist is None (``null`` in JSON), never NaN.
    """
    last = ds.isel(time=-1) if "time" in ds.dims else ds
    dx = np.diff(ds["x_edge"].values) * last["wetted_fraction"].values  # wetted length per column
    q = last["bed_flux"].values
    wet = np.isfinite(q)
    closure, closure_note = closure_summary(ds)
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
        "bed_flux_min_m_per_s": float(np.nanmin(q)) if wet.any() else None,
        "bed_flux_max_m_per_s": float(np.nanmax(q)) if wet.any() else None,
        # None when no part of the bed gains (or loses): "no gaining reach", "no losing reach"
        "max_gaining_flux_m_per_s": float(np.nanmax(q)) if wet.any() and np.nanmax(q) > 0 else None,
        "max_losing_flux_m_per_s": float(np.nanmin(q)) if wet.any() and np.nanmin(q) < 0 else None,
        "budget_closure": closure,
        "budget_closure_note": closure_note,
        "inflow_m2_per_s": {k: float(v) for k, v in zip(BUDGET_LINES, last["inflow"].values)},
        "outflow_m2_per_s": {k: float(v) for k, v in zip(BUDGET_LINES, last["outflow"].values)},
        "bed": flux_extremes(ds),
        "warnings": [],
        "resolution_warnings": [w for w in ds.attrs.get("resolution_warnings", "").split("\n") if w],
    }
    if "time" in ds.dims:
        ex = ds["exchange"].values
        out["exchange_min_m2_per_s"] = float(ex.min())
        out["exchange_max_m2_per_s"] = float(ex.max())
        out["end_time_s"] = float(ds["time"].values[-1])
    out.update(flood_figures(ds.attrs))
    partial = partial_run(ds)
    if partial is not None:
        out["partial"] = partial["reason"]
        out["partial_run"] = partial
    out["warnings"] += plausibility_warnings(ds)
    if ds.attrs.get("water_table_warning"):
        out["water_table_warning"] = ds.attrs["water_table_warning"]
    if "temperature" in ds:
        closure = np.abs(np.atleast_1d(ds["heat_closure"].values))
        out["heat"] = {"temperature_min_degC": float(np.nanmin(ds["temperature"].values)),
                       "temperature_max_degC": float(np.nanmax(ds["temperature"].values)),
                       "energy_closure": float(np.nanmax(closure)) if np.isfinite(closure).any() else None,
                       "cell_peclet_max": float(ds.attrs.get("heat_cell_peclet_max", np.nan))}
        if ds.attrs.get("heat_warning"):
            out["warnings"].append(ds.attrs["heat_warning"])
    return out


def add_events(s: dict, ds: xr.Dataset, table: pd.DataFrame, reach: dict) -> None:
    """Put the exchange events of a transient run into the summary ``s`` (in place): the reach
    figures under ``events`` and the deepest penetration of each part of the bed under ``bed``."""
    s["events"] = {k: (v if k != "reversals" else [list(r) for r in v]) for k, v in reach.items()}
    add_penetration(s["bed"], ds, table)


def _when(at: dict) -> str:
    return f", t = {at['time_s'] / HOUR:.1f} h" if at.get("time_s") is not None else ""


def partial_text(p: dict) -> str:
    """``interrupted at t = 2.5 h, of 4.0 h; outputs up to t = 2.0 h`` for a partial run."""
    reason = str(p.get("reason", ""))
    word = "interrupted" if reason.startswith("interrupted") or not reason else "stopped"
    text = f"{word} at t = {p['stopped_at_s'] / HOUR:.4g} h"
    if p.get("planned_end_s") is not None:
        text += f", of {p['planned_end_s'] / HOUR:.4g} h"
    return text + f"; outputs up to t = {p['last_output_s'] / HOUR:.4g} h"


def bed_text(bed: dict, transient: bool) -> list[str]:
    """Lines on the channel bed and the floodplain: each extreme with its x (and time) beside the
    5th/95th percentile over the wetted part."""
    lines = []
    over = " and the run" if transient else ""
    names = {"channel": "channel bed (" + ("submerged throughout" if transient else "submerged") + ")",
             "floodplain": "floodplain (submerged only at high stage)"}
    for name, part in bed.items():
        if part is None:
            continue
        where = " and ".join(f"{a:.4g} to {b:.4g}" for a, b in part["stretches_m"])
        lines.append(f"{names[name]}: x = {where} m, {part['length_m']:.3g} m"
                     + (", over the run:" if transient else ":"))
        for side, direction, percentile, key in (("gaining", "upward", UPPER, "p95_m_per_s"),
                                                 ("losing", "downward", LOWER, "p05_m_per_s")):
            reach = part[side]
            if reach is None:
                lines.append(f"  no {side} reach")
            else:
                lines.append(f"  strongest {direction} flux {reach['peak_m_per_s'] * DAY:.3g} m/d at "
                             f"x = {reach['x_m']:.4g} m{_when(reach)}; {percentile:.0f}th percentile over the "
                             f"wetted bed{over} {reach[key] * DAY:.3g} m/d")
        pen = part.get("penetration")
        if pen is not None:
            lines.append(f"  stream water reaches {pen['depth_m']:.3g} m below the bed at x = {pen['x_m']:.4g} m"
                         f"{_when(pen)}; 95th percentile over this part of the bed {pen['p95_m']:.3g} m")
    return lines


def run_summary_text(s: dict, events: str = "") -> str:
    """The summary as a few plain lines (m^3/d per metre and m/d for readability); ``events`` are
    the lines of :func:`bedflux.section.events.events_text` of a transient run."""
    day = DAY
    of = s["per_metre_of"]
    transient = s.get("run") == "transient"
    if s["submerged_length_m"] == 0 and s["exchange_m2_per_s"] == 0:
        verdict = "no bed under water"
    else:
        verdict = "gaining" if s["exchange_m2_per_s"] > 0 else "losing" if s["exchange_m2_per_s"] < 0 else "neutral"
    lines = []
    if s.get("partial_run"):
        p = s["partial_run"]
        detail = "" if p["reason"].startswith("interrupted") else f" ({p['reason']})"
        lines.append(f"PARTIAL RESULT: {partial_text(p)}{detail}")
    lines += [
        f"{s['title']}",
        f"run: {s['run']}, {s['cells']} cells, solver {s['solver']}",
        f"net exchange: {s['exchange_m2_per_s'] * day:.4g} m3/d per metre of {of} ({verdict})"
        + (f", over the {s['section_length_m']:.4g} m of the section" if of == "channel width" else ""),
        f"submerged bed: {s['submerged_length_m']:.3g} m; gaining {s['gaining_length_m']:.3g} m, "
        f"losing {s['losing_length_m']:.3g} m",
    ]
    if s["submerged_length_m"] > 0:
        at = f" at the end (t = {s['end_time_s'] / HOUR:.1f} h)" if "end_time_s" in s else ""
        sign = ("; no losing reach" if s["max_losing_flux_m_per_s"] is None else
                "; no gaining reach" if s["max_gaining_flux_m_per_s"] is None else "")
        lines.append(f"bed flux{at}: from {s['bed_flux_min_m_per_s'] * day:.3g} to "
                     f"{s['bed_flux_max_m_per_s'] * day:.3g} m/d (positive = upward, gaining{sign})")
    lines += bed_text(s.get("bed") or {}, transient)
    if "exchange_min_m2_per_s" in s:
        lines.append(f"net exchange over the run: {s['exchange_min_m2_per_s'] * day:.4g} to "
                     f"{s['exchange_max_m2_per_s'] * day:.4g} m3/d per metre of {of}")
    et = s["outflow_m2_per_s"]["evapotranspiration"]
    if et > 0:
        lines.append(f"riparian evapotranspiration from groundwater: {et * day:.4g} m3/d per metre of {of}")
    lines += events.splitlines()
    lines += flood_lines(s)
    lines.append(f"water budget closure: {closure_phrase(s['budget_closure'], s['budget_closure_note'])}")
    if s.get("heat"):
        h = s["heat"]
        closure = "not judgeable" if h["energy_closure"] is None else f"{h['energy_closure']:.2g} of the gross"
        lines.append(f"temperature: {h['temperature_min_degC']:.3g} to {h['temperature_max_degC']:.3g} degC over the "
                     f"run; energy budget closure {closure}; cell Peclet number at most {h['cell_peclet_max']:.2g}")
    lines += [f"WARNING: {w}" for w in s.get("warnings", [])]
    if s.get("water_table_warning"):
        lines.append(f"warning: {s['water_table_warning']}")
    lines += [f"grid warning: {w}" for w in s.get("resolution_warnings", [])]
    return "\n".join(lines) + "\n"


def build_summary(ds: xr.Dataset) -> tuple[dict, str, pd.DataFrame | None]:
    """The summary, its text and (for a transient run) the per-column events table."""
    s = run_summary(ds)
    table = None
    events = ""
    if "time" in ds.dims and ds.sizes["time"] > 1:
        from bedflux.section.events import events_text, exchange_events

        table, reach = exchange_events(ds)
        add_events(s, ds, table, reach)
        events = events_text(reach, table, s["per_metre_of"])
    return s, run_summary_text(s, events), table


def json_safe(value: Any) -> Any:
    """``value`` with every NaN or infinite number replaced by None and numpy scalars made plain."""
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_safe(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(float(value)) else None
    return value


def summary_json(s: dict) -> str:
    """The summary as strict JSON (no NaN: a missing figure is null)."""
    return json.dumps(json_safe(s), indent=2, allow_nan=False) + "\n"


def closure_phrase(value: float | None, note: str = "") -> str:
    """The closure in words: ``3.1e-14 of the gross flow`` or ``not judgeable: <why>``."""
    if value is None:
        return f"not judgeable: {note}"
    return f"{value:.1e} of the gross flow" + (f" ({note})" if note else "")
