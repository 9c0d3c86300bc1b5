"""Heat in variably saturated runs (zones with retention).

- A variably saturated run that stays saturated is the linear model (Richards' equation reduces to
  the saturated flow equation; the bulk heat capacity theta_s rho_w c_w + (1 - theta_s) c_s is the
  linear run's with porosity = theta_s): its temperatures must equal the linear run's, which the
  published solutions of this folder verify, to the Newton tolerance of the flow.
- With an unsaturated zone (the water content, and so the heat capacity, changes with time) the
  energy budget still closes to round-off and temperatures stay between their boundary and initial
  values (conservation of energy; maximum principle, Morton 1996, from memory).
"""
from __future__ import annotations

import copy

import numpy as np

import bedflux

from .columns import column

RETENTION = {"model": "van-genuchten", "alpha": 3.6, "n": 1.56, "residual": 0.078, "saturated": 0.35}


def test_saturated_run_carries_heat_like_the_linear_model():
    d = column(0.02, 1.0, 2e-5, 0.02, {"stream_temperature": {"mean": 15, "amplitude": 4}, "groundwater_temperature": 10},
               {"end": "1 d", "step": "15 min", "output_every": "3 h"}, porosity=0.35)
    linear = bedflux.simulate(bedflux.Scenario.from_dict(d))
    v = copy.deepcopy(d)
    v["zone"][0]["retention"] = RETENTION
    vs = bedflux.simulate(bedflux.Scenario.from_dict(v))
    assert float(np.nanmin(vs["saturation"].values)) == 1.0
    assert vs.attrs["heat_run"].startswith("variably saturated")
    assert np.nanmax(np.abs(vs["temperature"].values - linear["temperature"].values)) < 1e-8
    assert np.nanmax(np.abs(linear["temperature"].values - 15.0)) > 1.0  # the wave moved the bed


def test_unsaturated_bank_closes_its_energy_budget_within_bounds():
    d = {"title": "bank above a water table (invented)",
         "grid": {"x": [0.0, 4.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
         "ground": {"profile": [[0.0, 0.0], [4.0, 0.4]]},
         "zone": [{"name": "sand", "kh": "2 m/d", "kv": "1 m/d", "porosity": 0.35, "retention": RETENTION}],
         "sides": {"left": {"head": -0.8}, "right": {"head": -0.5}},
         "recharge": {"rate": "20 mm/d"},
         "heat": {"groundwater_temperature": 10, "ground_temperature": {"mean": 18, "amplitude": 6}, "initial": 10},
         "initial": {"head": -0.1},  # a wetter start: the bank drains and its water content falls
         "time": {"end": "12 h", "step": "30 min", "output_every": "2 h"}}
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert float(np.nanmin(ds["saturation"].values)) < 0.9  # an unsaturated zone
    water = ds["water_content"].values
    assert np.nanmax(np.abs(water[-1] - water[0])) > 1e-3  # whose water content changes
    assert np.nanmax(np.abs(ds["heat_closure"].values[1:])) < 1e-12
    temp = ds["temperature"].values
    assert np.nanmin(temp) >= 10.0 - 1e-9 and np.nanmax(temp) <= 24.0 + 1e-9
    assert np.nanmax(temp) > 12.0  # heat came in from the ground
