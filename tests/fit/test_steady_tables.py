"""A steady run has no clock: its observation table may leave ``time`` empty, and its residuals
are not plotted against time. A transient run still needs every time, and says which row lacks it.

The case is Darcy's law in a 2 m column with a flux imposed at the base: the gradient inside the
bed is q / K_bed whatever the time column says (Darcy 1856; Freeze & Cherry 1979, ch. 2, from
memory), so the fitted kv is q / i with or without times.
"""
from __future__ import annotations

import json
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.outputs import figures as plots
from bedflux.cli import main
from bedflux.errors import InputError
from bedflux.calibration import fit
from bedflux.calibration.outputs import write_fit

Q, I = 2e-6, 0.25
SCENARIO = """title = "steady column (invented)"
[grid]
x = [0.0, 1.0]
bottom = -2.0
dx = 1.0
dz = 0.05
[ground]
elevation = 0.0
[[zone]]
name = "aquifer"
kh = 1e-4
kv = 5e-5
[[zone]]
name = "bed"
kh = 3e-5
kv = 1e-5
depth = 0.4
[stream]
stage = 0.2
[sides]
left = "no-flow"
right = "no-flow"
bottom = {flux = 2e-6}
"""
FIT = """scenario = "column.toml"
observations = "obs.csv"
[[free]]
path = "bed.kv"
low = 1e-9
high = 1e-2
start = 1e-4
"""


def test_steady_table_with_empty_times_fits(tmp_path, capsys):
    (tmp_path / "column.toml").write_text(SCENARIO)
    (tmp_path / "obs.csv").write_text(f"kind,x,depth,time,value,sigma\nvhg,0.5,0.225,,{I},0.025\n"
                                      f"vhg,0.5,0.325,,{I},0.025\n")
    (tmp_path / "fit.toml").write_text(FIT)
    status = main(["fit", str(tmp_path / "fit.toml"), "-o", str(tmp_path / "out"), "-q"])
    assert status == 0, capsys.readouterr().err
    best = json.loads((tmp_path / "out" / "fit_results.json").read_text())["best"]["bed.kv"]
    assert best == pytest.approx(Q / I, rel=1e-6)            # Darcy: K = q / i


def test_text_in_the_time_column_is_still_refused(tmp_path, capsys):
    (tmp_path / "column.toml").write_text(SCENARIO)
    (tmp_path / "obs.csv").write_text(f"kind,x,depth,time,value,sigma\nvhg,0.5,0.225,,{I},0.025\n"
                                      f"vhg,0.5,0.325,noon,{I},0.025\n")
    (tmp_path / "fit.toml").write_text(FIT)
    status = main(["fit", str(tmp_path / "fit.toml"), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err
    assert status == 2 and "obs.csv" in err and "row 3" in err and "time" in err


def test_transient_table_needs_every_time():
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.25},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 1e-4, "kv": 1e-5, "specific_storage": 1e-4}],
        "stream": {"stage": 0.2}, "sides": {"bottom": {"head": 0.5}},
        "time": {"end": "2 h", "step": "10 min"}})
    obs = pd.DataFrame({"kind": "vhg", "x": 0.5, "depth": [0.25, 0.5], "time": [600.0, np.nan],
                        "value": 0.1, "sigma": 0.01})
    with pytest.raises(InputError) as err:
        fit(s, obs, [{"path": "sand.kv", "low": 1e-7, "high": 1e-3}])
    assert err.value.where == "row 3" and "time" in err.value.message and "transient" in err.value.message


def _captured_residual_figure(monkeypatch, result, scenario, tmp_path: Path):
    figures = {}
    real_save = plots.save

    def keep(fig, path):
        figures[Path(path).name] = fig
        return real_save(fig, path)

    monkeypatch.setattr(plots, "save", keep)
    write_fit(result, scenario, tmp_path)
    return figures["residuals.png"]


def test_steady_residuals_are_not_plotted_against_time(monkeypatch, tmp_path):
    scenario = bedflux.Scenario.from_dict(tomllib.loads(SCENARIO))
    obs = pd.DataFrame({"kind": "vhg", "x": 0.5, "depth": [0.125, 0.225, 0.325], "time": [0.0, 7200.0, 3600.0],
                        "value": [0.26, 0.25, 0.24], "sigma": 0.025})
    res = fit(scenario, obs, [{"path": "bed.kv", "low": 1e-9, "high": 1e-2, "start": 1e-4}])
    fig = _captured_residual_figure(monkeypatch, res, scenario, tmp_path)
    across = fig.axes[1]
    assert "time" not in across.get_xlabel()
    xs = np.concatenate([line.get_xdata() for line in across.get_lines() if len(line.get_xdata()) == 3])
    np.testing.assert_array_equal(np.sort(xs), [1, 2, 3])    # the rows of the table, not the times
