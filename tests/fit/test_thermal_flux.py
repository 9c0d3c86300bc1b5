"""The ``thermal_flux`` observation kind: the simulated vertical Darcy flux at a point of the bed.

Checks, each against something outside the operator under test:

- Darcy's law in a 1D column of two layers in series between the stage on top and a head on the
  base (Darcy 1856; layers in series, Freeze & Cherry 1979, ch. 2, from memory): the flux is
  uniform, ``q_up = (H_base - stage) / (b_bed / K_bed + b_aquifer / K_aquifer)``, at every depth.
- In a 2D section with a low-conductivity lens, the predicted value equals the result's ``qz``
  (:func:`bedflux.simulate`, cell-centre vertical flux) interpolated bilinearly at the point with
  xarray, a code path of its own.
- Taylor test of the Jacobian of a table with thermal-flux rows, steady and transient (the
  first-order Taylor expansion, Nocedal & Wright 2006, thm. 2.1): the remainder with J falls as
  O(h^2); a Jacobian that missed the thermal rows (zero rows) leaves an O(h) remainder and fails.
- The analytic thermal-flux columns against central differences of whole runs (truncation
  O(h^2), Nocedal & Wright 2006, eq. 8.7), steady (adjoint path: more parameters than rows) and
  transient.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

from tests.fit.test_jacobian import (CASES, EPS, STEPS, central_differences, free_list, observed_orders, section,
                                     taylor_remainders)

STAGE = 0.2
BED = 0.4
K_BED = 1e-5
K_AQUIFER = 5e-5
BASE_HEAD = 0.9
DEPTH = 2.0


def column() -> bedflux.Scenario:
    """A 2 m column: a 0.4 m bed over the aquifer, the stage on the top face (no leakance), a head on the base."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -DEPTH, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": K_AQUIFER},
                 {"name": "bed", "kh": 3e-5, "kv": K_BED, "depth": BED}],
        "stream": {"stage": STAGE},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": BASE_HEAD}}})


def rows(points, time=0.0) -> pd.DataFrame:
    return pd.DataFrame([dict(kind="thermal_flux", x=x, depth=d, time=time, value=0.0, sigma=1e-6)
                         for x, d in points])


def test_column_flux_is_darcy_in_series():
    # Darcy 1856 with the resistances of the two layers in series (Freeze & Cherry 1979, ch. 2)
    s = column()
    expected = (BASE_HEAD - STAGE) / (BED / K_BED + (DEPTH - BED) / K_AQUIFER)
    depths = [0.01, 0.1, 0.15, 0.38, 0.6, 1.25, 1.99]
    fw = Forward(s, rows([(0.5, d) for d in depths]),
                 free_parameters(s, [{"path": "bed.kv", "low": 1e-8, "high": 1e-3, "start": K_BED}]))
    predicted = fw.predict(fw.start())
    assert expected > 0  # upward: the base head stands above the stage
    np.testing.assert_allclose(predicted, expected, rtol=1e-9)


def lens_section() -> bedflux.Scenario:
    """An invented 30 m section, flat ground under water, a low-conductivity lens, unequal side heads."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 30.0], "bottom": 0.0, "dx": 1.0, "dz": 0.25},
        "ground": {"elevation": 5.0},
        "zone": [{"name": "aquifer", "kh": "10 m/d", "kv": "2 m/d"},
                 {"name": "lens", "kh": "0.2 m/d", "kv": "0.05 m/d", "x": [8, 17], "z": [2.5, 3.5]}],
        "stream": {"stage": 5.3, "leakance": 1e-5},
        "sides": {"left": {"head": 5.8}, "right": {"head": 5.1}, "bottom": "no-flow"}})


def test_section_flux_equals_result_qz_interpolated():
    s = lens_section()
    points = [(7.3, 1.1), (12.6, 1.8), (16.9, 2.35), (21.4, 0.6), (4.05, 3.3)]
    fw = Forward(s, rows(points), free_parameters(s, [{"path": "aquifer.kv", "low": 1e-7, "high": 1e-2,
                                                        "start": 2 / 86400}]))
    predicted = fw.predict(fw.start())
    qz = bedflux.simulate(s)["qz"].sortby("z")
    expected = [float(qz.interp(x=x, z=5.0 - d)) for x, d in points]
    assert np.ptp(expected) > 0.2 * np.max(np.abs(expected))  # the lens makes the flux vary
    np.testing.assert_allclose(predicted, expected, rtol=1e-10, atol=1e-12 * np.max(np.abs(expected)))


THERMAL_POINTS = [("thermal_flux", 17.2, 0.15), ("thermal_flux", 20.6, 0.4), ("thermal_flux", 23.1, 1.1),
                  ("vhg", 19.6, 1.0), ("seepage", 20.0, 0.0), ("head", 8.1, 4.5)]
PATHS = ["aquifer.kv", "bed.kv", "bed.kh", "stream.leakance", "sides.left.head", "recharge.rate"]


@pytest.mark.parametrize("case", ["steady", "backward-euler"])
def test_taylor_with_thermal_flux_rows(case):
    scheme, _, times = CASES[case]
    s = section(scheme)
    obs = pd.DataFrame([dict(kind=k, x=x, depth=d, time=t, value=0.0, sigma=1.0)
                        for t in times[:2] for k, x, d in THERMAL_POINTS])
    fw = Forward(s, obs, free_parameters(s, free_list(s, PATHS)))
    m = fw.start()
    d0, J = fw.predict_and_jacobian(m)
    thermal = (obs["kind"] == "thermal_flux").to_numpy()
    assert np.all(np.isfinite(d0)) and np.all(np.abs(J[thermal]).max(axis=0) > 0)
    # the thermal rows are far smaller than heads: weigh them like data (value / sigma) do in a fit
    scale = np.where(thermal, 1e6, 1.0)
    fw_scaled = _Scaled(fw, scale)
    r0, r1 = taylor_remainders(fw_scaled, m, d0 * scale, J * scale[:, None])
    o0, o1 = observed_orders(STEPS, r0), observed_orders(STEPS, r1)
    print(f"Taylor test {case}: |r0| {r0}, |r1| {r1}")
    np.testing.assert_allclose(o0, 1.0, atol=0.1)
    usable = r1[1:] > 1e3 * EPS * np.linalg.norm(d0 * scale)  # clear of round-off in the data
    assert usable.sum() >= 3, f"too few steps above the round-off floor: {r1}"
    assert np.all(np.abs(o1[usable] - 2.0) < 0.15), f"orders with J: {o1}"


class _Scaled:
    """A Forward whose predictions are multiplied row-wise by ``scale`` (for the Taylor harness)."""

    def __init__(self, fw: Forward, scale: np.ndarray):
        self.fw, self.scale = fw, scale
        self.free, self.n_params = fw.free, fw.n_params

    def predict(self, m):
        return self.fw.predict(m) * self.scale


# ------------------------------------------------------------------------------------------
# the fit file: thermal-flux rows enter, and observation_times keeps the rows of one period

TIMED_OBS = ("kind,x,depth,time,value,sigma\n"
             "seepage,20,0,,1.2e-6,1e-7\n"
             "thermal_flux,20,0.15,43200,1.5e-6,8e-7\n"
             "thermal_flux,20,0.15,734400,-3e-6,8e-7\n"
             "vhg,60,0.5,40000,0.05,0.005\n")
KV = '[[free]]\npath = "bed.kv"\nlow = "0.01 m/d"\nhigh = "50 m/d"\nstart = "1 m/d"\n'


def fit_file(tmp_path, top: str, obs: str = TIMED_OBS):
    from tests.fit.test_fit_cli import write_fit

    return write_fit(tmp_path, KV, top=top, obs=obs)


def test_observation_times_keep_the_rows_of_the_window(tmp_path):
    from bedflux.calibration.spec import load_fit

    spec = load_fit(fit_file(tmp_path, 'observation_times = ["0 d", "8 d"]'))
    # the untimed meter row stays, the row at 8.5 d goes
    assert spec.observations["kind"].tolist() == ["seepage", "thermal_flux", "vhg"]
    assert load_fit(fit_file(tmp_path, "")).observations["kind"].tolist().count("thermal_flux") == 2


@pytest.mark.parametrize("top, words", [
    ('observation_times = ["8 d", "0 d"]', ["bad_fit.toml", "observation_times", "increasing"]),
    ('observation_times = ["10 d", "11 d"]', ["bad_fit.toml", "observation_times", "no observation"]),
    ('observation_times = ["0 m", "1 m"]', ["bad_fit.toml", "observation_times"]),
])
def test_bad_observation_times_exit_2(tmp_path, capsys, top, words):
    from bedflux.cli import main

    timed = TIMED_OBS.replace("seepage,20,0,,", "seepage,20,0,41000,")  # every row timed
    status = main(["fit", str(fit_file(tmp_path, top, timed)), "-o", str(tmp_path / "never"), "-q"])
    err = capsys.readouterr().err
    assert status == 2 and "Traceback" not in err
    for w in words:
        assert w in err, (w, err)
    assert not (tmp_path / "never").exists()


def test_worked_fit_takes_the_temperature_windows_of_the_campaign_day():
    # the demo records carry a flood from day 8 (scenarios/make_temperature_sheet.py); the steady
    # worked fit takes the windows of the day the meters and piezometers were read, none after
    from bedflux.calibration.spec import load_fit
    from tests.fit.test_fit_cli import ROOT

    obs = load_fit(ROOT / "scenarios" / "reach_fit.toml").observations
    thermal = obs[obs["kind"] == "thermal_flux"]
    assert len(thermal) > 0
    campaign = obs.loc[obs["kind"] != "thermal_flux", "time"]
    assert thermal["time"].max() - 43200.0 <= campaign.max() and thermal["time"].min() + 43200.0 >= campaign.min()


@pytest.mark.parametrize("case", ["steady", "backward-euler", "crank-nicolson"])
def test_thermal_flux_jacobian_agrees_with_central_differences(case):
    # the analytic columns (state sensitivities through the face fluxes, plus the explicit
    # derivative of the conductances and boundary inflows) against central differences of whole
    # runs (truncation O(h^2), Nocedal & Wright 2006, eq. 8.7), per column's scale
    scheme, _, times = CASES[case]
    s = section(scheme)
    obs = pd.DataFrame([dict(kind=k, x=x, depth=d, time=t, value=0.0, sigma=1.0)
                        for t in times[:2] for k, x, d in THERMAL_POINTS if k == "thermal_flux"])
    fw = Forward(s, obs, free_parameters(s, free_list(s, PATHS)))
    m = fw.start()
    runs = fw.n_forward_runs
    _, J = fw.predict_and_jacobian(m)
    assert fw.n_forward_runs - runs <= 1  # analytic: no central differences taken
    fd = central_differences(fw, m)
    scale = np.abs(fd).max(axis=0)
    assert np.all(scale > 0)
    np.testing.assert_allclose(J / scale, fd / scale, atol=1e-5)
