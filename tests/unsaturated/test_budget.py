"""Water budget of variably saturated runs: every step closes, the storage split adds up, and the
boundaries and root uptake behave as specified (seepage faces, uptake only where not submerged)."""
from __future__ import annotations


import numpy as np
import pytest

import bedflux

LOAM = {"model": "van-genuchten", "alpha": "3.6 1/m", "n": 1.56, "residual": 0.078, "saturated": 0.43}
SANDY_LOAM = {"model": "van-genuchten", "alpha": "7.5 1/m", "n": 1.89, "residual": 0.065, "saturated": 0.41}

FLOOD = {
    "grid": {"x": [-15.0, 15.0], "bottom": -5.0, "dx": 0.5, "dz": 0.1, "growth": 1.1, "dz_max": 0.5},
    "ground": {"profile": [[-15.0, 1.3], [-5.0, 0.9], [-4.0, 0.0], [4.0, 0.0], [5.0, 0.9], [15.0, 1.3]]},
    "zone": [{"name": "aquifer", "kh": "12 m/d", "kv": "4 m/d", "specific_storage": "1e-4 1/m", "retention": SANDY_LOAM},
             {"name": "bed", "kh": "3 m/d", "kv": "1 m/d", "depth": 0.3, "x": [-5.0, 5.0], "retention": LOAM}],
    "stream": {"pulse": {"base": "0.4 m", "peak": "1.1 m", "start": "3 h", "rise": "6 h", "fall": "10 h"}},
    "sides": {"bottom": {"flux": "1.5 cm/d"}},
    "recharge": {"rate": "0.5 mm/d"},
    "time": {"end": "1.5 d", "step": "20 min", "output_every": "2 h"},
}


@pytest.fixture(scope="module")
def flood():
    return bedflux.simulate(bedflux.Scenario.from_dict(FLOOD))


def test_every_step_closes(flood):
    # mass balance to 1e-8 of the step's inflow with direct solves (the nonlinear tolerance is 1e-10)
    assert flood["step_closure"].size > 50
    assert np.max(np.abs(flood["step_closure"].values)) < 1e-8
    assert np.max(np.abs(flood["budget_closure"].values)) < 1e-8


def test_steps_land_on_outputs_and_breakpoints(flood):
    ends = flood["step_end"].values
    for t in list(flood["time"].values[1:]) + [3 * 3600.0, 9 * 3600.0]:  # outputs, pulse start and peak
        assert np.min(np.abs(ends - t)) < 1e-6
    assert flood["step_length"].max() <= 1200.0 + 1e-9


def test_storage_split_adds_up(flood):
    i = list(flood["term"].values).index("storage")
    total = flood["inflow"].values[1:, i] - flood["outflow"].values[1:, i]
    parts = flood["storage_saturated"].values[1:] + flood["storage_unsaturated"].values[1:]
    assert np.allclose(parts, total, rtol=1e-9, atol=1e-16)
    # the banks fill as the stage rises: pore water is taken up during the rise
    rising = (flood["time"].values > 3 * 3600) & (flood["time"].values <= 9 * 3600)
    assert np.all(flood["storage_unsaturated"].values[rising] < 0)


def test_water_table_rises_into_the_banks_and_drains(flood):
    x = flood["x"].values
    bank = (x > 6) & (x < 8)
    wt = flood["water_table"].values[:, bank]
    t = flood["time"].values
    peak = np.argmin(np.abs(t - 10 * 3600))
    assert np.all(wt[peak] > wt[0] + 0.05) and np.all(wt[-1] < wt[peak])
    # the zero-pressure level lies between the centres of a saturated cell and the unsaturated one above
    p = flood["pressure_head"].values[0]
    z = flood["z"].values
    col = np.flatnonzero(bank)[0]
    k = np.flatnonzero(p[:, col] >= 0)[0]
    assert z[k] <= flood["water_table"].values[0, col] <= z[k - 1]


RIPARIAN = {
    "grid": {"x": [-6.0, 14.0], "bottom": -4.0, "dx": 0.5, "dz": 0.1, "growth": 1.08, "dz_max": 0.4},
    "ground": {"profile": [[-6.0, 0.8], [-1.5, 0.7], [-1.0, 0.0], [1.0, 0.0], [1.5, 0.7], [14.0, 0.8]]},
    "zone": [{"name": "aquifer", "kh": "4 m/d", "kv": "1 m/d", "specific_storage": "1e-4 1/m", "retention": SANDY_LOAM}],
    "stream": {"stage": "0.3 m", "channel": [-1.5, 1.5]},
    "sides": {"left": {"head": 0.4}},
    "riparian": [{"x": [-0.5, 12.0], "max_rate": "8 mm/d", "extinction_depth": "2 m", "root_depth": "0.8 m",
                  "daily_cycle": True}],
    "time": {"end": "2 d", "step": "30 min", "output_every": "3 h"},
}


def test_root_uptake_budget_and_limits():
    with pytest.warns(UserWarning, match="extinction_depth is not used"):
        ds = bedflux.simulate(bedflux.Scenario.from_dict(RIPARIAN))
    assert np.max(np.abs(ds["step_closure"].values)) < 1e-8
    i = list(ds["term"].values).index("evapotranspiration")
    uptake = ds["outflow"].values[1:, i]
    t = ds["time"].values[1:]
    # the daily cycle: no uptake in intervals that lie wholly in the night (18:00-06:00)
    hour = (t % 86400) / 3600
    night = (hour > 20.9) | (hour < 6.1) & (hour > 0)
    assert np.all(uptake[night[: uptake.size]] == 0.0)
    # never more than the potential over the part of the zone that is not submerged
    # (the daily cycle peaks at pi times the mean)
    x = ds["x"].values
    open_width = np.diff(ds["x_edge"].values)[(x >= -0.5) & (x <= 12.0) & ~((x > -1.5) & (x < 1.5))].sum()
    assert uptake.max() <= np.pi * 8e-3 / 86400 * open_width * (1 + 1e-9)
    assert uptake.max() > 0


def test_infiltration_excess_ponds():
    # recharge above the saturated conductivity of the top soil: the surface saturates, becomes a
    # seepage face, and the excess is reported as ponding (never lost from the budget)
    d = {"grid": {"x": [0.0, 2.0], "bottom": -3.0, "dx": 0.5, "dz": 0.1},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "soil", "kh": "2 mm/d", "specific_storage": 0.0, "retention": LOAM}],
         "sides": {"bottom": {"head": -2.5}}, "recharge": {"rate": "50 mm/d"},
         "time": {"end": "20 d", "step": "6 h", "output_every": "5 d"}}
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    last = ds.isel(time=-1)
    assert np.all(last["ponding"].values > 0.9 * (50e-3 - 2e-3) / 86400)
    assert np.max(np.abs(ds["step_closure"].values)) < 1e-8
