"""The public contract of the design brief: names other code and users rely on."""
from __future__ import annotations

import numpy as np
import pandas as pd

import bedflux


def column(kv=1e-5):
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -2.0, "dx": 1.0, "dz": 0.1}, "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4}, {"name": "bed", "kh": 1e-4, "kv": kv, "depth": 0.3}],
        "stream": {"stage": 0.2}, "sides": {"bottom": {"head": 0.5}}})


def test_simulate_outputs_and_units():
    ds = bedflux.simulate(column())
    for name, units in (("head", "m"), ("bed_flux", "m s-1"), ("qx", "m s-1"), ("qz", "m s-1"),
                        ("exchange", "m2 s-1")):
        assert ds[name].attrs["units"] == units
    assert set(ds["head"].dims) == {"z", "x"}


def test_fit_and_plan_are_callable():
    truth = column(2e-5)
    ds = bedflux.simulate(truth)
    q = float(ds["bed_flux"].values[0])
    obs = pd.DataFrame({"kind": ["seepage"], "x": [0.5], "depth": [0.0], "time": [0.0], "value": [q],
                        "sigma": [0.05 * abs(q)]})
    free = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3, "start": 1e-5}]
    result = bedflux.fit(column(), obs, free)
    # Darcy through beds in series (Freeze & Cherry 1979, ch. 2): one flux fixes one kv exactly
    assert np.isclose(result.best["bed.kv"], 2e-5, rtol=1e-6)
    assert set(result.ci95) == {"bed.kv"} and result.n_forward_runs > 0
    table = bedflux.plan(column(), free, pd.DataFrame({"kind": ["seepage", "piezometer"], "x": [0.5, 0.5],
                                                       "depth": [0.0, 0.2]}), 1, target="bed.kv")
    assert list(table.columns[:6]) == ["rank", "kind", "x", "depth", "expected_sd", "reduction"]
