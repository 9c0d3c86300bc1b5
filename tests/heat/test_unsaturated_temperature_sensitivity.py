"""Temperature observations in a variably saturated run: predictions and sensitivities by the
direct method (heat carried with the pressure-head sensitivities of the Richards run).

Checks:
- the predicted temperature is the model's (the result Dataset of the same scenario at a cell
  centre and an output time, to the flow's Newton tolerance);
- the Jacobian agrees with central differences of whole runs, and the Taylor remainder falls as
  e^2 (standard checks of a derivative, common practice), for flow parameters (kh, kv, retention
  alpha and n, recharge) and thermal ones, in a bank whose water content changes;
- synthetic-truth recovery (common practice for checking an estimator): a fit of kv and the
  thermal conductivity to noisy loggers generated at known values holds the truth in its 95 %
  intervals;
- where a seepage face drains the bank (a side head above the ground), the error control shortens
  the steps and their lengths move with the retention parameters: the Jacobian still agrees with
  central differences of whole runs (Nocedal & Wright 2006, "Numerical Optimization", eq. 8.7:
  truncation O(h^2)), heads beside the face and temperatures, also under a stage pulse (the
  forcing changes while the step ends move) and where the control rejects a step.
"""
from __future__ import annotations

import copy

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

RETENTION = {"model": "van-genuchten", "alpha": 3.6, "n": 1.56, "residual": 0.078, "saturated": 0.35}
BANK = {"title": "bank above a water table (invented)",
        "grid": {"x": [0.0, 4.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
        "ground": {"profile": [[0.0, 0.0], [4.0, 0.4]]},
        "zone": [{"name": "sand", "kh": "2 m/d", "kv": "1 m/d", "porosity": 0.35, "retention": RETENTION,
                  "thermal_conductivity": 1.6}],
        "sides": {"left": {"head": -0.8}, "right": {"head": -0.5}},
        "recharge": {"rate": "20 mm/d"},
        "heat": {"groundwater_temperature": 10, "ground_temperature": {"mean": 18, "amplitude": 6}, "initial": 10},
        "initial": {"head": -0.1},  # a wetter start: the bank drains and its water content falls
        "time": {"end": "12 h", "step": "30 min", "output_every": "2 h"}}
OBS = pd.DataFrame({"kind": ["temperature"] * 5 + ["head"], "x": [0.25, 1.0, 2.2, 3.1, 3.8, 1.0],
                    "depth": [0.1, 0.3, 0.5, 0.2, 0.15, 1.0],
                    "time": [7200.0, 14400.0, 21600.0, 36000.0, 43200.0, 20000.0], "value": 15.0, "sigma": 0.1})
FREE = [{"path": "sand.kv", "low": 1e-7, "high": 1e-2}, {"path": "sand.kh", "low": 1e-7, "high": 1e-2},
        {"path": "sand.retention.alpha", "low": 0.5, "high": 10.0}, {"path": "sand.retention.n", "low": 1.2, "high": 3.0},
        {"path": "recharge.rate", "low": 0.0, "high": 1e-6},
        {"path": "sand.thermal_conductivity", "low": 0.5, "high": 4.0},
        {"path": "sand.heat_capacity", "low": 1e6, "high": 4e6}]
TEMP = (OBS["kind"] == "temperature").to_numpy()


@pytest.fixture(scope="module")
def bank():
    s = bedflux.Scenario.from_dict(BANK)
    f = Forward(s, OBS, free_parameters(s, FREE))
    m = f.start()
    d, J = f.predict_and_jacobian(m)
    return f, m, d, J


def test_prediction_is_the_model_temperature(bank):
    f, m, d, J = bank
    ds = bedflux.simulate(bedflux.Scenario.from_dict(BANK))
    assert float(np.nanmin(ds["saturation"].values)) < 0.9  # an unsaturated zone
    col = ds.temperature.sel(x=1.25, method="nearest")
    active = np.flatnonzero(np.isfinite(col.isel(time=0).values))
    k = int(active[3])
    depth = float(ds.ground.sel(x=1.25, method="nearest")) - float(ds.z.values[k])
    obs = pd.DataFrame({"kind": ["temperature"] * 2, "x": [1.25] * 2, "depth": [depth] * 2,
                        "time": [14400.0, 43200.0], "value": 15.0, "sigma": 0.1})
    s = bedflux.Scenario.from_dict(BANK)
    pred = Forward(s, obs, free_parameters(s, FREE[:1])).predict(np.log10([1.0 / 86400.0]))
    expected = [float(col.sel(time=t).values[k]) for t in (14400.0, 43200.0)]
    assert pred == pytest.approx(expected, abs=1e-6)
    assert abs(expected[1] - expected[0]) > 0.1


def test_jacobian_costs_one_run_and_agrees_with_central_differences(bank):
    f, m, d, J = bank
    assert f.n_forward_runs == 1
    fd = f.jacobian_fd(m, step=1e-5)
    scale = np.abs(fd[TEMP]).max(axis=0)
    assert np.all(scale > 0)
    assert np.all(np.abs(J[TEMP] - fd[TEMP]) <= 1e-6 * scale[None, :])


def test_taylor_remainder_is_second_order(bank):
    f, m, d0, J = bank
    v = np.random.default_rng(5).normal(size=m.size)
    v *= np.array([0.05 if p.log else 0.02 * (p.high - p.low) for p in f.free])
    remainders = []
    for e in (0.4, 0.2, 0.1, 0.05):
        d = f.predict(m + e * v)
        remainders.append(np.abs(d[TEMP] - d0[TEMP] - e * (J[TEMP] @ v)).max())
    ratios = np.array(remainders[:-1]) / np.array(remainders[1:])
    assert np.all(ratios > 3.5), (remainders, ratios)


def test_fit_recovers_conductivity_and_thermal_conductivity():
    s = bedflux.Scenario.from_dict(BANK)
    rows = [("temperature", x, z, t) for x in (1.0, 3.0) for z in (0.1, 0.3) for t in np.arange(1, 13) * 3600.0]
    obs = pd.DataFrame(rows + [("head", 1.0, 1.2, 21600.0)], columns=["kind", "x", "depth", "time"])
    obs["sigma"] = np.where(obs["kind"] == "temperature", 0.05, 0.005)
    obs["value"] = 0.0
    free = [{"path": "sand.kv", "low": 1e-7, "high": 1e-3}, {"path": "sand.thermal_conductivity", "low": 0.5, "high": 4}]
    forward = Forward(s, obs, free_parameters(s, free))
    obs["value"] = forward.predict(forward.start()) + np.random.default_rng(2).normal(0.0, obs["sigma"])
    start = copy.deepcopy(BANK)
    start["zone"][0].update(kv="3 m/d", thermal_conductivity=2.4)
    result = bedflux.fit(bedflux.Scenario.from_dict(start), obs, free)
    for path, true in (("sand.kv", 1.0 / 86400.0), ("sand.thermal_conductivity", 1.6)):
        low, high = result.ci95[path]
        assert low <= true <= high, (path, result.best[path], (low, high))


def test_thermal_flux_rows_take_direct_sensitivities():
    # vertical fluxes at sensor-pair mid-depths in and above the water table, beside a temperature
    obs = pd.DataFrame({"kind": ["thermal_flux"] * 4 + ["temperature"], "x": [0.25, 1.25, 2.75, 3.75, 1.0],
                        "depth": [0.1, 0.35, 0.25, 0.6, 0.3], "time": [3600.0, 14400.0, 28800.0, 43200.0, 14400.0],
                        "value": 0.0, "sigma": [1e-6] * 4 + [0.1]})
    s = bedflux.Scenario.from_dict(BANK)
    f = Forward(s, obs, free_parameters(s, FREE[:5]))
    m = f.start()
    d, J = f.predict_and_jacobian(m)
    assert f.n_forward_runs == 1
    fd = f.jacobian_fd(m, step=1e-5)
    rows = (obs["kind"] == "thermal_flux").to_numpy()
    scale = np.abs(fd[rows]).max(axis=0)
    assert np.all(scale > 0)
    for sel in (rows, ~rows):  # fluxes and the temperature, each against its own scale
        assert np.all(np.abs(J[sel] - fd[sel]) <= 1e-6 * np.abs(fd[sel]).max(axis=0)[None, :])


#: Heads beside the seepage face (x < 1.25 m, where the ground lies below the left head) while
#: the bank drains.
FACE_OBS = pd.DataFrame({"kind": "head", "x": [0.25, 0.25, 0.75, 0.75, 1.25], "depth": [0.05, 0.15, 0.05, 0.25, 0.05],
                         "time": 7200.0, "value": 0.0, "sigma": 0.01})
#: A stage pulse in a channel over the face (the flow forcing changes within the moving steps).
PULSE = {"pulse": {"base": 0.05, "peak": 0.15, "start": "1 h", "rise": "4 h", "fall": "6 h"}, "channel": [0.0, 1.0],
         "leakance": "2 1/d"}


def seepage_bank(case: str = "drain", alpha: float = RETENTION["alpha"]) -> bedflux.Scenario:
    """The bank with a side head above the ground at x < 0.25 m (a seepage face forms there):
    ``drain`` the bank draining; ``pulse`` with a stage pulse in a channel over the face;
    ``wetting`` a dry bank under a higher side head and heavy recharge, in long steps (the error
    control rejects a step and retries it shorter)."""
    d = copy.deepcopy(BANK)
    d["sides"]["left"] = {"head": 0.1}
    d["zone"][0]["retention"] = dict(RETENTION, alpha=alpha)
    if case == "pulse":
        d["stream"] = copy.deepcopy(PULSE)
        d["heat"]["stream_temperature"] = 14.0
    elif case == "wetting":
        d["sides"]["left"] = {"head": 0.3}
        d.update(initial={"head": -1.0}, recharge={"rate": "80 mm/d"},
                 time={"end": "12 h", "step": "3 h", "output_every": "3 h"})
    return bedflux.Scenario.from_dict(d)


def test_step_lengths_of_a_draining_bank_move_with_alpha():
    # the premise of the next test: the error control, not [time] step, sets steps here, and their
    # lengths change smoothly with the retention alpha (same number of steps)
    runs = [bedflux.simulate(seepage_bank("drain", a)) for a in (3.6, 3.6 * 1.01)]
    assert float(np.nanmax(runs[0]["outflow"].sel(term="seepage_face").values)) > 0.0
    lengths = [r["step_length"].values for r in runs]
    assert lengths[0].size == lengths[1].size
    assert np.abs(lengths[0] - lengths[1]).max() > 1.0  # s


@pytest.mark.parametrize("case", ["drain", "pulse", "wetting"])
def test_seepage_face_jacobian_agrees_with_central_differences(case):
    s = seepage_bank(case)
    if case == "wetting":  # the premise: a step rejected by the error control
        assert bedflux.simulate(s).attrs["rejected_steps"] > 0
    obs = pd.concat([OBS, FACE_OBS], ignore_index=True)
    f = Forward(s, obs, free_parameters(s, [FREE[0], FREE[2], FREE[3]]))  # kv, retention alpha and n
    m = f.start()
    _, J = f.predict_and_jacobian(m)
    assert f.n_forward_runs == 1
    fd = f.jacobian_fd(m, step=1e-5)
    for kind in ("temperature", "head"):  # each kind against its own column scale
        rows = (obs["kind"] == kind).to_numpy()
        scale = np.abs(fd[rows]).max(axis=0)
        assert np.all(scale > 0)
        error = np.abs(J[rows] - fd[rows]).max(axis=0)
        assert np.all(error <= 1e-6 * scale), (kind, error / scale)
