"""Measured stage series from CSV: reading, interpolation and every documented error.

The interpolation is checked against numpy.interp on the same points (a reference library);
the errors are the project's contract (issue: gaps, unsorted or duplicate times, non-numeric
cells, series that do not cover the run) and must name the file and row.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.errors import InputError
from bedflux.scenario.forcing import read_series


def write(tmp_path, text, name="stage.csv"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_elapsed_time_with_units_and_interpolation(tmp_path):
    p = write(tmp_path, "elapsed [h],stage [cm]\n0,50\n1,80\n3,60\n")
    s = read_series(p)
    np.testing.assert_allclose(s.times, [0, 3600, 10800])
    np.testing.assert_allclose(s.values, [0.5, 0.8, 0.6])
    t = np.array([0, 1800, 7200, 10800])
    np.testing.assert_allclose(s(t), np.interp(t, [0, 3600, 10800], [0.5, 0.8, 0.6]))


def test_date_times(tmp_path):
    p = write(tmp_path, "time,stage [m]\n2026-06-01 00:00,1.0\n2026-06-01 00:30,1.2\n2026-06-01 02:00:00,1.1\n")
    s = read_series(p)
    np.testing.assert_allclose(s.times, [0, 1800, 7200])


@pytest.mark.parametrize("text,needle,row", [
    ("elapsed [h],stage [m]\n0,1\n1,\n2,1\n", "gap", "row 3"),
    ("elapsed [h],stage [m]\n0,1\n2,1.1\n1,1.2\n", "times must increase", "row 4"),
    ("elapsed [h],stage [m]\n0,1\n1,1.1\n1,1.2\n", "duplicate", "row 4"),
    ("elapsed [h],stage [m]\n0,1\n1,high\n2,1\n", "not a number", "row 3"),
    ("elapsed [h],stage\n0,1\n1,1.1\n", "unit in brackets", "row 1"),
    ("elapsed [kg],stage [m]\n0,1\n1,1.1\n", "not a time", "row 1"),
])
def test_errors_name_file_and_row(tmp_path, text, needle, row):
    p = write(tmp_path, text)
    with pytest.raises(InputError) as e:
        read_series(p)
    msg = str(e.value)
    assert str(p) in msg and needle in msg and row in msg


def test_series_must_cover_the_run(tmp_path):
    write(tmp_path, "elapsed [h],stage [m]\n0,0.5\n2,0.6\n")
    d = {"grid": {"x": [0, 1], "bottom": -2, "dx": 1, "dz": 0.5}, "ground": {"elevation": 0},
         "zone": [{"name": "a", "kh": 1e-5}], "stream": {"stage_csv": "stage.csv"},
         "time": {"end": "3 h", "step": "10 min"}}
    with pytest.raises(InputError) as e:
        bedflux.Scenario.from_dict(d, base_dir=tmp_path)
    assert "covers" in str(e.value) and "stage.csv" in str(e.value)
    d["time"]["end"] = "2 h"
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d, base_dir=tmp_path))
    np.testing.assert_allclose(ds["stage"].values[-1], 0.6)


def test_side_head_series(tmp_path):
    write(tmp_path, "elapsed [min],head [m]\n0,1.0\n60,1.5\n", name="side.csv")
    d = {"grid": {"x": [0, 10], "bottom": -2, "dx": 1, "dz": 2}, "ground": {"elevation": 3},
         "zone": [{"name": "a", "kh": 1e-4, "specific_storage": 1e-5, "specific_yield": 0.1}],
         "sides": {"left": {"head_csv": "side.csv"}, "right": {"head": 1.0}},
         "time": {"end": "1 h", "step": "5 min", "output_every": "30 min"}}
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d, base_dir=tmp_path))
    h = ds["head"].values[:, 0, 0]
    assert h[0] == pytest.approx(1.0, abs=1e-9) and h[-1] > h[1] > h[0]
