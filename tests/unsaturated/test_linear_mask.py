"""The linear model's warning when its heads fall below active cells (issue 13, item 4)."""
from __future__ import annotations

import numpy as np

import bedflux
from bedflux.report.findings import exchange_finding
from bedflux.outputs.summary import run_summary, run_summary_text


def column(head: float):
    # no flow anywhere but the base: the column is hydrostatic, h = head in every cell (a fact of
    # the trade), so every cell whose bottom lies above that head is above the water table
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.1}, "ground": {"elevation": 1.0},
        "zone": [{"name": "aquifer", "kh": 1e-5}], "sides": {"bottom": {"head": head}}})


def test_cells_above_the_water_table_are_counted_and_reported():
    ds = bedflux.simulate(column(0.05))
    bottoms = np.linspace(-2.0, 0.9, 30)
    expected = int(np.sum(bottoms > 0.05))  # cells whose bottom lies above h = 0.05 m: 9
    assert int((ds["saturated"].values == 0).sum()) == expected == 9
    assert ds.attrs["water_table_warning"].startswith("the water table lies below 9 cells, up to 0.95 m below")
    s = run_summary(ds)
    assert "consider a variably saturated run" in run_summary_text(s)
    assert any("consider a variably saturated run" in x for x in exchange_finding(s).sentences)


def test_no_warning_when_saturated_to_the_ground():
    ds = bedflux.simulate(column(1.5))
    assert np.all(ds["saturated"].values == 1)
    assert "water_table_warning" not in ds.attrs
    assert "warning" not in run_summary_text(run_summary(ds))


def test_saturated_flow_warnings_stay_off_a_variably_saturated_run():
    # suction under a flooded floodplain and heads far below the base inside dry soil are physical
    # in Richards' equation (Celia et al. 1990); the linear model's impossibility and
    # disconnection warnings must not be printed for it
    import xarray as xr

    from bedflux.outputs.plausibility import plausibility_warnings

    ds = xr.Dataset({"pressure_head": ("cell", [-80.0])})
    assert plausibility_warnings(ds) == []
