"""Temperature sensitivities to the flow parameters by the direct method (heat carried with the
head sensitivities of the flow run), with steady flow and with a flood that changes the flow.

Checks (standard checks of a derivative, common practice):
- the Jacobian agrees with central differences of whole runs (relative step 1e-5: truncation
  about 1e-10 of the column, round-off of the runs about 1e-9);
- Taylor test: the remainder |d(m + e v) - d(m) - e J v| falls as e^2 (a wrong J leaves e^1);
- the Jacobian costs one forward run (no run per parameter).
"""
from __future__ import annotations

import copy

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

from .test_energy_budget import SECTION
from .test_temperature_sensitivity import BASE, OBS

COLUMN_FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}, {"path": "aquifer.kv", "low": 1e-7, "high": 1e-3},
               {"path": "sides.bottom.head", "low": 0.4, "high": 0.6},
               {"path": "bed.thermal_conductivity", "low": 0.5, "high": 4.0}]
FLOOD_OBS = pd.DataFrame({
    "kind": ["temperature"] * 6 + ["head", "seepage"],
    "x": [0.25, 0.25, 2.0, -3.0, 10.0, -8.0, 0.0, 1.0],
    "depth": [0.1, 0.3, 0.2, 0.5, 0.8, 0.6, 1.0, 0.0],
    "time": [14400.0, 36000.0, 50000.0, 80000.0, 60000.0, 86400.0, 30000.0, 40000.0],
    "value": 15.0, "sigma": 0.1})
FLOOD_FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-2}, {"path": "aquifer.kh", "low": 1e-6, "high": 1e-2},
              {"path": "recharge.rate", "low": 0.0, "high": 1e-6}, {"path": "sides.left.head", "low": 0.0, "high": 2.0},
              {"path": "riparian.0.max_rate", "low": 0.0, "high": 1e-6},
              {"path": "aquifer.specific_storage", "low": 1e-6, "high": 1e-2},
              {"path": "bed.thermal_conductivity", "low": 0.5, "high": 4.0},
              {"path": "bed.heat_capacity", "low": 1e6, "high": 4e6}]


def _column(steady: bool) -> tuple[bedflux.Scenario, pd.DataFrame]:
    d = copy.deepcopy(BASE)
    obs = OBS.copy()
    if steady:
        d.pop("time")
        obs["time"] = np.nan
    return bedflux.Scenario.from_dict(d), obs


def _flood(scheme: str) -> tuple[bedflux.Scenario, pd.DataFrame]:
    d = copy.deepcopy(SECTION)
    d["time"]["scheme"] = scheme
    d["riparian"][0]["daily_cycle"] = True  # ET taken at the heads of each step's start
    return bedflux.Scenario.from_dict(d), FLOOD_OBS


CASES = {
    "steady run": (lambda: _column(True), COLUMN_FREE),
    "transient heat, steady flow": (lambda: _column(False), COLUMN_FREE),
    "flood, backward Euler": (lambda: _flood("backward-euler"), FLOOD_FREE),
    "flood, Crank-Nicolson": (lambda: _flood("crank-nicolson"), FLOOD_FREE),
}


@pytest.fixture(scope="module", params=list(CASES))
def case(request):
    make, free = CASES[request.param]
    s, obs = make()
    f = Forward(s, obs, free_parameters(s, free))
    m = f.start()
    d, J = f.predict_and_jacobian(m)
    runs = f.n_forward_runs
    return f, m, d, J, runs, (obs["kind"] == "temperature").to_numpy()


def test_jacobian_costs_one_forward_run(case):
    f, m, d, J, runs, temp = case
    assert runs == 1
    assert np.all(np.isfinite(d)) and np.all(np.isfinite(J))


def test_jacobian_agrees_with_central_differences(case):
    f, m, d, J, runs, temp = case
    fd = f.jacobian_fd(m, step=1e-5)
    scale = np.abs(fd[temp]).max(axis=0)
    flow = np.array([not p.path.endswith(("thermal_conductivity", "heat_capacity")) for p in f.free])
    assert np.all(scale[flow] > 0)  # every flow parameter moves some temperature
    assert np.all(np.abs(J[temp] - fd[temp]) <= 1e-6 * scale[None, :])


def test_taylor_remainder_is_second_order(case):
    f, m, d0, J, runs, temp = case
    v = np.random.default_rng(3).normal(size=m.size)
    v *= np.array([0.05 if p.log else 0.02 * (p.high - p.low) for p in f.free])
    remainders = []
    for e in (0.4, 0.2, 0.1, 0.05):
        d = f.predict(m + e * v)
        remainders.append(np.abs(d[temp] - d0[temp] - e * (J[temp] @ v)).max())
    ratios = np.array(remainders[:-1]) / np.array(remainders[1:])
    assert np.all(ratios > 3.5), (remainders, ratios)  # 4 for a correct Jacobian, 2 for a wrong one
