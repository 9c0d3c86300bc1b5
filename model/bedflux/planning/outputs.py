"""Writing a plan: the ranked table, its summary, the map and the detectability map."""
from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from bedflux.outputs.atomic import write_text, write_with


#: Columns of the picks in plan_summary.json (sensor depths of logger pairs only where they apply).
PICK_COLUMNS = ["rank", "kind", "x", "depth", "expected_sd", "reduction", "shallow_depth", "deep_depth"]
#: Columns of plan_table.csv.
TABLE_COLUMNS = ["rank", "kind", "x", "depth", "expected_sd", "reduction", "sigma", "simulated", "shallow_depth",
                 "deep_depth"]


def where_text(row) -> str:
    """Where a pick goes, in words: x, and the opening's or the sensors' depth below the bed."""
    where = f"x = {row['x']:.4g} m"
    if row["kind"] == "piezometer":
        where += f", {row['depth']:.2g} m deep"
    elif row["kind"] == "logger_pair":
        where += f", sensors {row['shallow_depth']:.2g} and {row['deep_depth']:.2g} m deep"
    return where


def summary_dict(table: pd.DataFrame, target: str) -> dict:
    """plan_summary.json content (SI; ``unit`` names the unit of the spreads)."""
    a = table.attrs
    out = {
        "target": a.get("target", target),
        "unit": a.get("unit"),
        "display_unit": a.get("display_unit"),
        "display_factor": a.get("display_factor"),
        "start": a.get("start"),
        "fit": a.get("fit"),
        "fit_reduced_chi_square": a.get("fit_reduced_chi_square"),
        "misfit_factor": a.get("misfit_factor"),
        "n_picks": int(len(table)),
        "prior_sd": a.get("prior_sd"),
        "final_sd": float(table["expected_sd"].iloc[-1]) if len(table) else a.get("prior_sd"),
        "reading_time_s": a.get("reading_time"),
        "reading_times_s": a.get("reading_times"),
        "reading_stages_m": a.get("reading_stages"),
        "reading": a.get("reading"),
        "warnings": a.get("warnings", []),
        "picks": [{k: v for k, v in row.items() if not (isinstance(v, float) and pd.isna(v))} for row in
                  table[[c for c in PICK_COLUMNS if c in table]].to_dict(orient="records")],
        "notes": {"expected_sd": "spread of the target after each pick, in unit; for the D-optimal "
                                 "target the geometric-mean standard deviation in the estimation space "
                                 "(log10 for log parameters)",
                  "prior_sd": "spread of the target before any new instrument (with a fit: the fit's own)",
                  "method": "linear (first-order) Bayesian data worth, greedy selection"},
    }
    return {k: v for k, v in out.items() if v is not None}


def _spread(table: pd.DataFrame, sd: float) -> str:
    factor = table.attrs.get("display_factor", 1.0)
    unit = table.attrs.get("display_unit", "")
    return f"{sd * factor:.3g} {unit}".rstrip()


def plan_summary_text(table: pd.DataFrame) -> str:
    """Plain lines for the screen: where the plan starts, when the instruments are read, the
    spreads with their unit, and the warnings."""
    a = table.attrs
    lines = [f"plan for: {a.get('target')}", f"start: {a.get('start')}", f"reading: {a.get('reading')}",
             f"spread before: {_spread(table, a.get('prior_sd'))} (standard deviation of the target)"]
    for _, r in table.iterrows():
        lines.append(f"  {int(r['rank'])}. {r['kind']} at {where_text(r)}: spread {_spread(table, r['expected_sd'])} "
                     f"({100 * r['reduction']:.0f} % less)")
    lines += [f"warning: {w}" for w in a.get("warnings", [])]
    return "\n".join(lines) + "\n"


def write_plan(table: pd.DataFrame, scenario, outdir: Path, detect: tuple | None = None) -> None:
    """All outputs of ``bedflux plan`` into ``outdir`` (a staging folder)."""
    from bedflux.outputs import figures as plots

    cols = [c for c in TABLE_COLUMNS if c in table]
    write_with(outdir / "plan_table.csv", lambda tmp: table[cols].to_csv(tmp, index=False))
    write_text(outdir / "plan_summary.json", json.dumps(summary_dict(table, ""), indent=2, allow_nan=True) + "\n")
    write_text(outdir / "plan_summary.txt", plan_summary_text(table))
    from bedflux.forward.geometry import bed_geometry

    plots.plan_map(table, bed_geometry(scenario, 0.0), outdir / "plan_map.png")
    if detect is not None:
        piezo, seep = detect
        write_with(outdir / "detectability_piezometers.csv", lambda tmp: piezo.to_csv(tmp, index=False))
        write_with(outdir / "detectability_seepage.csv", lambda tmp: seep.to_csv(tmp, index=False))
        plots.detectability_map(piezo, seep, outdir / "detectability.png")
