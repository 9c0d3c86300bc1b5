"""Calibration on a variably saturated run: free ZONE.retention.alpha, .n and a conductivity.

The Jacobian of a variably saturated run comes from central differences of the forward model
(Richards' equation solved to 1e-10 of the throughput); the Taylor test (common practice: the
remainder without the Jacobian falls as O(h), with it as O(h^2)) checks it, and a fit to
noise-free synthetic tensiometer heads, piezometer heads and a seepage flux recovers the values
that made them.
"""
from __future__ import annotations

import copy
import warnings

import numpy as np
import pandas as pd
import pytest

import bedflux
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
