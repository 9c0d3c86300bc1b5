"""What a run with [heat] leaves behind: temperature and the energy budget in result.nc with their
units, a summary line and the section figure (the contract of docs/outputs.md: SI outputs with
CF-style units; temperatures in degC)."""
from __future__ import annotations

import tomllib

import numpy as np
import xarray as xr

from bedflux.cli import main

from .columns import column


def _toml(d: dict) -> str:
    """A small TOML writer for the plain tables of a column scenario."""
    def value(v):
        if isinstance(v, str):
            return f'"{v}"'
        if isinstance(v, dict):
            return "{" + ", ".join(f"{k} = {value(x)}" for k, x in v.items()) + "}"
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        return repr(v)
    lines = [f"title = {value(d['title'])}"]
    for key in ("grid", "ground", "stream", "sides", "heat", "time"):
        if key in d:
            lines.append(f"[{key}]")
            lines += [f"{k} = {value(v)}" for k, v in d[key].items()]
    for z in d["zone"]:
        lines.append("[[zone]]")
        lines += [f"{k} = {value(v)}" for k, v in z.items()]
    return "\n".join(lines) + "\n"


def test_run_writes_temperature_budget_summary_and_figure(tmp_path):
    d = column(0.05, 1.0, 1e-5, 0.01, {"stream_temperature": {"mean": 15, "amplitude": 3}, "groundwater_temperature": 10},
               {"end": "6 h", "step": "30 min", "output_every": "2 h"})
    path = tmp_path / "col.toml"
    path.write_text(_toml(d))
    assert tomllib.loads(path.read_text())["heat"]["groundwater_temperature"] == 10
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out), "-q"]) == 0
    with xr.open_dataset(out / "result.nc") as ds:
        assert ds["temperature"].dims == ("time", "z", "x")
        assert ds["temperature"].attrs["units"] == "degC"
        assert ds["heat_inflow"].attrs["units"] == "W m-1"
        assert list(ds["heat_term"].values)[-1] == "heat_storage"
        assert ds.sizes["time"] == 4
        # steady flow: one flow solve; the heat matrix factorized for the start (steady temperature)
        # and once for all 12 steps (design brief: factor once, reuse the factor)
        assert ds.attrs["heat_run"] == "transient, steady flow"
        assert ds.attrs["heat_factorizations"] == 2 and ds.attrs["steps"] == 12
        temp = ds["temperature"].values
        assert np.nanmin(temp) >= 10.0 - 1e-9 and np.nanmax(temp) <= 18.0 + 1e-9
        assert np.nanmax(np.abs(ds["heat_closure"].values[1:])) < 1e-12
    text = (out / "summary.txt").read_text()
    assert "temperature:" in text and "energy budget closure" in text
    assert (out / "section.png").stat().st_size > 0
