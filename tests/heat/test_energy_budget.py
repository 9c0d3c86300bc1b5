"""Energy budget, uniform temperature and the maximum principle on a section with changing flow.

- Energy balance: every step's heat inflows, outflows and the change of heat stored add up to
  round-off (conservation of energy; the closure is their imbalance over the gross of the parts,
  which a correct finite-volume step keeps near 1e-15).
- Maximum principle (e.g. Morton 1996, Numerical Solution of Convection-Diffusion Problems, ch. 2,
  from memory): without sources, temperatures stay between the lowest and highest boundary and
  initial temperatures; a scheme that oscillates breaks this at high cell Peclet numbers, and so
  does heat that water leaving storage fails to take along while the flood changes the flow.
"""
from __future__ import annotations

import copy

import numpy as np
import pytest

import bedflux

from .columns import column

SECTION = {
    "title": "flood over a gaining channel with heat (invented)",
    "grid": {"x": [-20.0, 20.0], "bottom": -6.0, "dx": 0.5, "dz": 0.1, "growth": 1.1, "dz_max": 0.5},
    "ground": {"profile": [[-20.0, 1.4], [-6.0, 1.0], [-4.0, 0.0], [4.0, 0.0], [6.0, 1.0], [20.0, 1.4]]},
    "zone": [{"name": "aquifer", "kh": "12 m/d", "kv": "4 m/d", "specific_storage": 1e-4, "specific_yield": 0.18,
              "thermal_conductivity": 2.2, "dispersivity": 0.05},
             {"name": "bed", "kh": "3 m/d", "kv": "1 m/d", "depth": 0.3, "x": [-5.0, 5.0], "porosity": 0.4,
              "thermal_conductivity": 1.5, "heat_capacity": "2.2 MJ/m^3/K"}],
    "stream": {"pulse": {"base": 0.4, "peak": 1.3, "start": "3 h", "rise": "6 h", "fall": "10 h"}},
    "sides": {"left": {"head": 0.8}, "right": "no-flow", "bottom": {"flux": "1 cm/d"}},
    "recharge": {"rate": "0.5 mm/d"},
    "riparian": [{"x": [8.0, 16.0], "max_rate": "4 mm/d", "extinction_depth": 2.0, "root_depth": 1.0}],
    "heat": {"stream_temperature": {"mean": 16, "amplitude": 4, "period": "1 d", "phase": 1.0},
             "groundwater_temperature": 10, "ground_temperature": 18},
    "time": {"end": "1 d", "step": "20 min", "output_every": "2 h"},
}


def run(d):
    return bedflux.simulate(bedflux.Scenario.from_dict(d))


@pytest.mark.parametrize("scheme", ["backward-euler", "crank-nicolson"])
def test_energy_budget_closes_to_round_off_with_changing_flow(scheme):
    d = copy.deepcopy(SECTION)
    d["time"]["scheme"] = scheme
    ds = run(d)
    assert ds.attrs["heat_run"].startswith("transient flow")
    closure = np.abs(ds["heat_closure"].values[1:])
    assert closure.max() < 1e-12
    # the closure is not trivially zero: heat is stored and released, and the stream and ground take part
    stored = ds["heat_inflow"].sel(heat_term="heat_storage") + ds["heat_outflow"].sel(heat_term="heat_storage")
    assert float(stored[1:].min()) > 0.0
    for line in ("stream", "ground", "left", "bottom", "evapotranspiration"):
        assert float((ds["heat_inflow"] + ds["heat_outflow"]).sel(heat_term=line).max()) > 0.0, line


def test_temperatures_stay_within_their_bounds():
    ds = run(SECTION)
    temp = ds["temperature"].values
    assert np.nanmin(temp) >= 10.0 - 1e-9  # groundwater 10; the stream never falls below 12
    assert np.nanmax(temp) <= 20.0 + 1e-9  # stream at most 20, ground 18


def test_no_overshoot_of_a_sharp_front_at_high_cell_peclet():
    # 4 m/d down through 5 cm cells: cell Peclet number 2.4 (above the smear advice of 2): the front of
    # a 5-degree step must stay monotone and inside [10, 15] (the maximum principle)
    q = 4.0 / 86400
    d = column(0.05, 3.0, 1e-3, -q * 3.0 / 1e-3, {"stream_temperature": 15, "groundwater_temperature": 10,
                                                  "initial": 10}, {"end": "6 h", "step": "10 min"})
    ds = run(d)
    assert ds.attrs["heat_cell_peclet_max"] > 2.0 and "heat_warning" in ds.attrs
    temp = ds["temperature"].isel(x=0).values
    assert np.nanmin(temp) >= 10.0 - 1e-12 and np.nanmax(temp) <= 15.0 + 1e-12
    assert np.all(np.diff(temp, axis=1) <= 1e-12)  # falls with depth at every output
