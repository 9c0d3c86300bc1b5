"""Helpers that write small, invented bedflux output folders for the report tests."""
from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pytest
from PIL import Image

from bedflux.outputs import manifest

SCENARIO_TEXT = '# invented test scenario <with markup & quotes>\ntitle = "Test reach"\n'


def png(path: Path, colour=(94, 60, 153), size=(40, 30)) -> Path:
    """A small PNG with two colours (so it is not blank)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    im = Image.new("RGB", size, (255, 255, 255))
    im.paste(Image.new("RGB", (size[0] // 2, size[1]), colour), (0, 0))
    im.save(path)
    return path


def steady_summary(exchange=2.0e-4, gaining=100.0, losing=20.0, lo=-1e-6, hi=3e-6) -> dict:
    """A summary.json of a steady run (invented numbers)."""
    return {
        "title": "Test reach (invented)", "run": "steady", "solver": "direct", "cells": 100,
        "exchange_m2_per_s": exchange, "gaining_length_m": gaining, "losing_length_m": losing,
        "submerged_length_m": gaining + losing, "max_gaining_flux_m_per_s": hi,
        "max_losing_flux_m_per_s": lo, "budget_closure": 1e-14,
        "inflow_m2_per_s": {"stream": max(-exchange, 0.0), "bottom": max(exchange, 0.0) + 1e-6},
        "outflow_m2_per_s": {"stream": max(exchange, 0.0), "bottom": 0.0},
    }


def transient_summary(reversals=((7.2 * 3600, 15.5 * 3600),), initial=8.0e-6) -> dict:
    """A summary.json of a transient run with exchange events (invented numbers)."""
    s = steady_summary(exchange=1.0e-5, gaining=9.0, losing=0.0, lo=8e-7, hi=2.9e-6)
    s["title"] = "Test pulse (invented)"
    s["run"] = "transient"
    s.update(exchange_min_m2_per_s=-4.3e-4, exchange_max_m2_per_s=3.8e-5, end_time_s=432000.0)
    total = sum((e or 432000.0) - a for a, e in reversals)
    s["events"] = {"initial_exchange": initial, "reversals": [list(r) for r in reversals],
                   "reversed_duration": total, "peak_losing_exchange": -4.3e-4,
                   "bank_storage_volume": 5.678, "returned_volume": 4.769, "returned_fraction": 0.84,
                   "max_penetration_depth": 0.782}
    return s


def write_run(folder: Path, summary: dict, figures=("section.png",)) -> Path:
    """A run output folder: summary.json, provenance.json, inputs/, figures and the manifest."""
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "summary.json").write_text(json.dumps(summary))
    (folder / "inputs").mkdir(exist_ok=True)
    scen = folder / "inputs" / "test.toml"
    scen.write_text(SCENARIO_TEXT)
    digest = hashlib.sha256(scen.read_bytes()).hexdigest()
    (folder / "provenance.json").write_text(json.dumps({"bedflux_version": "0.1.0",
                                                        "inputs": {"test.toml": digest}}))
    (folder / "result.nc").write_bytes(b"")
    for name in figures:
        png(folder / name)
    manifest.write(folder, "run")
    return folder


def fit_results(verdict="well determined", rchi=1.1) -> dict:
    """A fit_results.json (invented numbers)."""
    return {
        "best": {"bed.kv": 1.78e-5, "sides.bottom.head": 99.0},
        "ci95": {"bed.kv": [1.49e-5, 2.14e-5], "sides.bottom.head": [98.8, 99.2]},
        "parameters": ["bed.kv", "sides.bottom.head"],
        "correlation": [[1.0, 0.2], [0.2, 1.0]],
        "composite_scaled_sensitivity": {"bed.kv": 41.0, "sides.bottom.head": 160.0},
        "verdicts": {"bed.kv": verdict, "sides.bottom.head": "well determined"},
        "statistics": {"n_observations": 20, "n_parameters": 2, "reduced_chi_square": rchi},
    }


def write_fit(folder: Path, results: dict | None = None) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "fit_results.json").write_text(json.dumps(results or fit_results()))
    (folder / "inputs").mkdir(exist_ok=True)
    (folder / "inputs" / "fit.toml").write_text('scenario = "test.toml"\n')
    (folder / "calibrated.toml").write_text('title = "Test reach (calibrated)"\n')
    (folder / "residuals.csv").write_text("kind,x,depth,time,value,sigma,simulated,residual,weighted_residual\n"
                                          "seepage,1.0,0,0,1e-6,1e-7,1.1e-6,-1e-7,-1.0\n")
    png(folder / "parameter_intervals.png")
    manifest.write(folder, "fit")
    return folder


def write_plan(folder: Path, n=3) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    rows = ["rank,kind,x,depth,expected_sd,reduction"]
    for i in range(n):
        rows.append(f"{i + 1},{'seepage' if i % 2 == 0 else 'vhg'},{10.0 + 20 * i},{0 if i % 2 == 0 else 0.5},"
                    f"{0.2 - 0.03 * i},{0.1}")
    (folder / "plan_table.csv").write_text("\n".join(rows) + "\n")
    (folder / "plan_summary.json").write_text(json.dumps({"target": "bed.kv", "n_picks": n, "prior_sd": 0.25,
                                                          "final_sd": 0.2 - 0.03 * (n - 1), "picks": []}))
    png(folder / "plan_map.png")
    manifest.write(folder, "plan")
    return folder


def write_field(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "field_summary.json").write_text(json.dumps({
        "meters": 4, "piezometers": 2, "rejected_rows": 1, "flags": {"bag_fill": 2},
        "reach": {"mean_flux [m/s]": 1.5e-6, "per_metre_of_channel [m^2/s]": 1.2e-5, "length [m]": 40.0,
                  "total_ci95 [m^3/s]": [3e-4, 6e-4]}}))
    (folder / "seepage_meters.csv").write_text("site,x [m],mean [m/s]\nA1,1.0,1.5e-6\n")
    png(folder / "transect_profiles.png")
    manifest.write(folder, "field")
    return folder


@pytest.fixture
def project(tmp_path: Path) -> Path:
    """A project folder with a steady run, a transient run, field, fit and plan outputs."""
    root = tmp_path / "project"
    write_run(root / "reach", steady_summary())
    write_run(root / "pulse", transient_summary(), figures=("section.png", "exchange.png"))
    write_field(root / "field")
    write_fit(root / "fit")
    write_plan(root / "plan")
    return root
