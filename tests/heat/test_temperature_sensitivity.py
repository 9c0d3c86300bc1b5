"""Temperature observations in the forward interface and their sensitivities to thermal properties.

Checks (standard checks of a derivative, common practice; see tests/fit for the flow parameters):
- the Jacobian of the direct method agrees with central differences of whole runs;
- Taylor test: the remainder |d(m + e v) - d(m) - e J v| falls as e^2 (a wrong J leaves e^1);
- thermal parameters do not move heads, gradients or seepage fluxes (exactly zero columns there);
- the predicted temperature is the model's temperature at the logger (the result Dataset of the
  same run, at a cell centre and an output time).
"""
from __future__ import annotations

import copy

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.errors import InputError
from bedflux.forward.sensitivity import Forward, free_parameters

from .columns import column

KV = 2e-5
BASE = column(0.02, 1.0, KV, 0.01, {"stream_temperature": {"mean": 15, "amplitude": 4, "period": "1 d"},
                                    "groundwater_temperature": 10},
              {"end": "1 d", "step": "30 min", "output_every": "1 h", "scheme": "crank-nicolson"})
BASE["zone"][0].update(name="aquifer", dispersivity=0.01)
BASE["zone"].append({"name": "bed", "kh": KV, "kv": KV / 2, "depth": 0.3, "porosity": 0.4,
                     "thermal_conductivity": 1.5, "heat_capacity": 2.2e6})
OBS = pd.DataFrame({
    "kind": ["temperature"] * 6 + ["head", "seepage", "vhg"],
    "x": [0.5] * 9,
    "depth": [0.05, 0.05, 0.15, 0.15, 0.45, 0.25, 0.5, 0.0, 0.3],
    "time": [21600.0, 64800.0, 30000.0, 80000.0, 86400.0, 0.0, 3600.0, 7200.0, 43200.0],
    "value": [15.0] * 6 + [0.5, 0.0, 0.0],
    "sigma": [0.1] * 6 + [0.001, 1e-7, 0.01],
})
FREE = [{"path": "bed.thermal_conductivity", "low": 0.5, "high": 4.0},
        {"path": "bed.heat_capacity", "low": 1e6, "high": 4e6},
        {"path": "aquifer.dispersivity", "low": 0.0, "high": 0.5},
        {"path": "aquifer.thermal_conductivity", "low": 0.5, "high": 4.0}]


@pytest.fixture(scope="module")
def forward():
    s = bedflux.Scenario.from_dict(BASE)
    return Forward(s, OBS, free_parameters(s, FREE))


def test_jacobian_agrees_with_central_differences(forward):
    m = forward.start()
    d, J = forward.predict_and_jacobian(m)
    fd = forward.jacobian_fd(m, step=1e-4)
    temp = (OBS["kind"] == "temperature").to_numpy()
    assert np.all(np.abs(J[temp]).max(axis=0) > 0)  # every thermal parameter moves some temperature
    scale = np.abs(fd[temp]).max(axis=0)
    # central differences of relative step 1e-4 are exact to about (1e-4)^2 relative (truncation)
    assert np.all(np.abs(J[temp] - fd[temp]) <= 1e-6 * scale[None, :] + 1e-12)
    assert np.all(J[~temp] == 0.0)  # heads, seepage and gradients do not see thermal properties


def test_taylor_remainder_is_second_order(forward):
    m = forward.start()
    d0, J = forward.predict_and_jacobian(m)
    v = np.array([0.3, 2e5, 0.004, -0.2])
    remainders = []
    for e in (0.4, 0.2, 0.1, 0.05):
        d = forward.predict(m + e * v)
        remainders.append(np.abs(d - d0 - e * J @ v).max())
    ratios = np.array(remainders[:-1]) / np.array(remainders[1:])
    assert np.all(ratios > 3.5), (remainders, ratios)  # 4 for a correct Jacobian, 2 for a wrong one


def test_prediction_is_the_model_temperature(forward):
    ds = bedflux.simulate(bedflux.Scenario.from_dict(BASE))
    obs = pd.DataFrame({"kind": ["temperature"], "x": [0.5], "depth": [0.15], "time": [7200.0],
                        "value": [15.0], "sigma": [0.1]})
    s = bedflux.Scenario.from_dict(BASE)
    d = Forward(s, obs, free_parameters(s, FREE[:1])).predict(np.array([1.5]))
    depth = -ds.z.values
    k = int(np.argmin(abs(depth - 0.15)))
    assert depth[k] == pytest.approx(0.15)
    assert d[0] == pytest.approx(float(ds.temperature.sel(time=7200.0).isel(x=0).values[k]), abs=1e-9)


def test_temperature_observations_need_heat():
    d = copy.deepcopy(BASE)
    del d["heat"]
    s = bedflux.Scenario.from_dict(d)
    with pytest.raises(InputError, match=r"\[heat\]"):
        Forward(s, OBS, free_parameters(s, [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}]))


def test_temperatures_through_a_flood_are_the_model_temperatures():
    # a run whose flow changes (stage pulse over a floodplain): heat follows every flow step, and a
    # logger's prediction is the model temperature at its point (a cell centre at an output time)
    from .test_energy_budget import SECTION

    s = bedflux.Scenario.from_dict(SECTION)
    ds = bedflux.simulate(s)
    col = ds.temperature.sel(x=0.25, method="nearest")
    active = np.flatnonzero(np.isfinite(col.isel(time=0).values))
    k = int(active[2])  # the third cell below the bed: a full cell, its centre at the row centre
    depth = float(ds.ground.sel(x=0.25, method="nearest")) - float(ds.z.values[k])
    assert 0.05 < depth < 1.0  # in the bed layer or just below it
    obs = pd.DataFrame({"kind": ["temperature", "temperature"], "x": [0.25, 0.25], "depth": [depth, depth],
                        "time": [14400.0, 36000.0], "value": [15.0, 15.0], "sigma": [0.1, 0.1]})
    f = Forward(s, obs, free_parameters(s, [{"path": "bed.thermal_conductivity", "low": 0.5, "high": 4.0}]))
    d = f.predict(f.start())
    expected = [float(col.sel(time=t).values[k]) for t in (14400.0, 36000.0)]
    assert d == pytest.approx(expected, abs=1e-9)
    assert abs(expected[1] - expected[0]) > 0.1  # the temperature moved between the two readings
