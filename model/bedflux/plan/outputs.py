"""Writing a plan: the ranked table, its summary, the map and the detectability map."""
from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

from ..atomic import write_text, write_with


def summary_dict(table: pd.DataFrame, target: str) -> dict:
    """plan_summary.json content (SI)."""
    return {
        "target": table.attrs.get("target", target),
        "n_picks": int(len(table)),
        "prior_sd": table.attrs.get("prior_sd"),
        "final_sd": float(table["expected_sd"].iloc[-1]) if len(table) else table.attrs.get("prior_sd"),
        "reading_time_s": table.attrs.get("reading_time"),
        "picks": table[["rank", "kind", "x", "depth", "expected_sd", "reduction"]].to_dict(orient="records"),
        "notes": {"expected_sd": "spread of the target after each pick, natural units; for the D-optimal "
                                 "target the geometric-mean standard deviation in the estimation space "
                                 "(log10 for log parameters)",
                  "method": "linear (first-order) Bayesian data worth, greedy selection"},
    }


def summary_text(table: pd.DataFrame) -> str:
    """Plain lines for the screen."""
    lines = [f"plan for: {table.attrs.get('target')}", f"spread before: {table.attrs.get('prior_sd'):.4g}"]
    for _, r in table.iterrows():
        where = f"x = {r['x']:.4g} m" + (f", {r['depth']:.2g} m deep" if r["kind"] == "piezometer" else "")
        lines.append(f"  {int(r['rank'])}. {r['kind']} at {where}: spread {r['expected_sd']:.4g} "
                     f"({100 * r['reduction']:.0f} % less)")
    return "\n".join(lines) + "\n"


def write_plan(table: pd.DataFrame, scenario, outdir: Path, detect: tuple | None = None) -> None:
    """All outputs of ``bedflux plan`` into ``outdir`` (a staging folder)."""
    from .. import plots

    cols = ["rank", "kind", "x", "depth", "expected_sd", "reduction", "sigma", "simulated"]
    write_with(outdir / "plan_table.csv", lambda tmp: table[cols].to_csv(tmp, index=False))
    write_text(outdir / "plan_summary.json", json.dumps(summary_dict(table, ""), indent=2, allow_nan=True) + "\n")
    write_text(outdir / "plan_summary.txt", summary_text(table))
    plots.plan_map(table, scenario, outdir / "plan_map.png")
    if detect is not None:
        piezo, seep = detect
        write_with(outdir / "detectability_piezometers.csv", lambda tmp: piezo.to_csv(tmp, index=False))
        write_with(outdir / "detectability_seepage.csv", lambda tmp: seep.to_csv(tmp, index=False))
        plots.detectability_map(piezo, seep, outdir / "detectability.png")
