"""Calibration on a variably saturated run: free ZONE.retention.alpha, .n and the conductivities.

The Jacobian of a variably saturated run comes from the direct method along the steps
(:mod:`bedflux.forward.unsaturated_sensitivity`; checked against central differences in
test_sensitivity.py); the Taylor test (common practice: the remainder without the Jacobian falls
as O(h), with it as O(h^2)) checks it here on a steady bank. A fit to noise-free synthetic
tensiometer heads, piezometer heads and a seepage flux recovers the values that made them, and a
transient fit to data with seeded noise of a stated spread holds the true values inside its 95 %
intervals.
"""
from __future__ import annotations

import copy
import warnings

import bedflux
import numpy as np
import pandas as pd
import pytest
from bedflux.forward.sensitivity import Forward, free_parameters

TRUE = {"alpha": 3.6, "n": 1.56, "kh": 1e-5}
BASE = {
    "grid": {"x": [0.0, 8.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
    "ground": {"profile": [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]},
    "zone": [{"name": "aquifer", "kh": TRUE["kh"], "kv": 4e-6, "specific_storage": 1e-4,
              "retention": {"model": "van-genuchten", "alpha": TRUE["alpha"], "n": TRUE["n"],
                            "residual": 0.078, "saturated": 0.43}}],
    "stream": {"stage": 0.3, "channel": [0.0, 2.0]},
    "sides": {"right": {"head": 0.2}},
    "recharge": {"rate": "60 mm/d"},
}
OBS = pd.DataFrame({"kind": ["head", "head", "head", "head", "head", "seepage"],
                    "x": [4.25, 5.75, 7.25, 5.75, 6.25, 1.0],
                    "depth": [0.15, 0.35, 0.55, 1.5, 0.75, 0.0],
                    "time": [0.0] * 6, "value": [0.0] * 6, "sigma": [0.01] * 5 + [1e-7]})
FREE = [{"path": "aquifer.retention.alpha", "low": 0.5, "high": 20.0, "start": 2.0, "log": True},
        {"path": "aquifer.retention.n", "low": 1.1, "high": 3.0, "start": 2.0},
        {"path": "aquifer.kh", "low": 1e-7, "high": 1e-3, "start": 3e-5}]


def forward(obs=OBS):
    scenario = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    return Forward(scenario, obs, free_parameters(scenario, FREE))


def test_parameter_paths():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    assert s.value_at("aquifer.retention.alpha") == 3.6
    t = s.with_values({"aquifer.retention.n": 1.8, "aquifer.retention.alpha": 5.0})
    assert t.zones[0].retention.n == 1.8 and t.zones[0].retention.alpha == 5.0
    with pytest.raises(bedflux.errors.InputError, match="retention table"):
        s.value_at("aquifer.retention.m")


def test_taylor():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        f = forward()
        m = np.array([np.log10(3.0), 1.7, np.log10(2e-5)])  # alpha and kh as log10
        d0, J = f.predict_and_jacobian(m)
        v = np.array([0.3, -0.2, 0.3])
        r1, r2 = [], []
        hs = [0.2, 0.1, 0.05, 0.025]
        for h in hs:
            dh = f.predict(m + h * v)
            r1.append(np.linalg.norm((dh - d0) / OBS["sigma"].to_numpy()))
            r2.append(np.linalg.norm((dh - d0 - h * J @ v) / OBS["sigma"].to_numpy()))
    o1 = np.log2(np.array(r1[:-1]) / np.array(r1[1:]))
    o2 = np.log2(np.array(r2[:-1]) / np.array(r2[1:]))
    assert np.all(np.abs(o1 - 1) < 0.15), o1
    assert np.all(o2 > 1.8), (o2, r2)
    # every parameter matters to these data
    assert np.all(np.abs(J).sum(axis=0) > 0)


def test_fit_recovers_retention_and_conductivity():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        truth = forward()
        m_true = np.array([np.log10(TRUE["alpha"]), TRUE["n"], np.log10(TRUE["kh"])])
        obs = OBS.copy()
        obs["value"] = truth.predict(m_true)
        result = bedflux.fit(bedflux.Scenario.from_dict(copy.deepcopy(BASE)), obs, FREE)
    for key, path in (("alpha", "aquifer.retention.alpha"), ("n", "aquifer.retention.n"), ("kh", "aquifer.kh")):
        assert result.best[path] == pytest.approx(TRUE[key], rel=1e-3), result.best


# ------------------------------------------------------------------------------------------
# a transient fit with noisy data: a stage pulse under a bank instrumented with tensiometers

PULSE_SECTION = {
    "grid": {"x": [0.0, 8.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
    "ground": {"profile": [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]},
    "zone": [{"name": "aquifer", "kh": 4e-5, "kv": 2e-5, "specific_storage": 1e-4,
              "retention": {"model": "van-genuchten", "alpha": 12.4, "n": 2.28, "residual": 0.057,
                            "saturated": 0.41}}],
    "stream": {"pulse": {"base": 0.05, "peak": 0.2, "start": "1 h", "rise": "2 h", "fall": "3 h"},
               "channel": [0.0, 2.0], "leakance": 2e-5},
    "sides": {"right": {"head": 0.2}},
    "recharge": {"rate": "40 mm/d"},
    "time": {"end": "8 h", "step": "20 min", "output_every": "4 h"},
}
#: A loamy sand (Carsel & Parrish 1988, class means, from memory: alpha 12.4 1/m, n 2.28,
#: theta_r 0.057, theta_s 0.41, Ks 3.5 m/d). With n > 2 the Mualem Kr is differentiable at
#: saturation; for n < 2 dKr/dpsi is unbounded as psi -> 0- (Ippisch, Vogel & Bastian 2006) and
#: Newton's method can stall at a cell on the water table, so the bounds keep n above 2.
PULSE_TRUE = {"aquifer.retention.alpha": 12.4, "aquifer.retention.n": 2.28, "aquifer.kh": 4e-5, "aquifer.kv": 2e-5}
PULSE_FREE = [{"path": "aquifer.retention.alpha", "low": 2.0, "high": 30.0, "start": 8.0, "log": True},
              {"path": "aquifer.retention.n", "low": 2.05, "high": 3.5, "start": 2.6},
              {"path": "aquifer.kh", "low": 1e-6, "high": 1e-3, "start": 1e-4},
              {"path": "aquifer.kv", "low": 1e-6, "high": 1e-3, "start": 5e-5}]
#: Standard deviation of the synthetic noise: 5 mm on a tensiometer or piezometer head (common
#: practice for a pressure transducer), 5e-8 m/s (4 mm/d) on a seepage-meter flux.
HEAD_SD, FLUX_SD = 0.005, 5e-8


def pulse_observations() -> pd.DataFrame:
    """Tensiometers at 0.2, 0.4 and 0.6 m and a piezometer at 1.5 m in the bank at x = 3.25 and
    5.25 m, read every 2 h, and two seepage meters on the bed."""
    rows = []
    for t in (0.0, 7200.0, 14400.0, 21600.0, 28800.0):
        for x in (3.25, 5.25):
            for depth in (0.2, 0.4, 0.6, 1.5):
                rows.append(("head", x, depth, t, HEAD_SD))
        for x in (0.75, 1.75):
            rows.append(("seepage", x, 0.0, t, FLUX_SD))
    return pd.DataFrame(rows, columns=["kind", "x", "depth", "time", "sigma"]).assign(value=0.0)


@pytest.mark.slow  # about 10 s alone, 30 s on a shared machine
def test_fit_recovers_parameters_from_noisy_transient_data():
    # synthetic data from the model at the true values plus seeded Gaussian noise of the stated
    # spread (one seed, fixed before the first run); the fitted 95 % intervals hold the truth
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        scenario = bedflux.Scenario.from_dict(copy.deepcopy(PULSE_SECTION))
        obs = pulse_observations()
        truth = Forward(scenario, obs, free_parameters(scenario, PULSE_FREE))
        clean = truth.predict(np.array([p.internal(PULSE_TRUE[p.path]) for p in truth.free]))
        rng = np.random.default_rng(20261203)
        obs["value"] = clean + rng.standard_normal(len(obs)) * obs["sigma"].to_numpy()
        result = bedflux.fit(scenario, obs, PULSE_FREE)
    for path, value in PULSE_TRUE.items():
        lo, hi = result.ci95[path]
        assert lo <= value <= hi, (path, value, (lo, hi), result.best[path])
    # and the data narrow every parameter well inside its bounds (in the estimation space)
    for p in result.free:
        lo, hi = (p.internal(v) for v in result.ci95[p.path])
        assert hi - lo < 0.75 * (p.internal(p.high) - p.internal(p.low)), (p.path, result.ci95[p.path])
    # the reduced chi-square of a fit to data with the stated noise is near 1 (chi-square with
    # n - p degrees of freedom: mean 1, spread sqrt(2 / (n - p)) ~ 0.15 here)
    assert 0.6 < result.statistics["reduced_chi_square"] < 1.4
