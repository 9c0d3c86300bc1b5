"""The linear limit: a section that stays saturated everywhere gives the linear model's heads.

With every cell saturated, Kr = 1 and theta = theta_s, Richards' equation with specific storage
reduces to the saturated flow equation the linear model solves (Freeze & Cherry 1979, ch. 2:
the storage of a saturated cell is Ss per metre of head). Both use backward Euler on the same
grid, so the heads must agree to the nonlinear tolerance (1e-6 m asked).
"""
from __future__ import annotations

import copy

import numpy as np

import bedflux

RETENTION = {"model": "van-genuchten", "alpha": "3.6 1/m", "n": 1.56, "residual": 0.078, "saturated": 0.43}
BASE = {
    "grid": {"x": [0.0, 20.0], "bottom": -5.0, "dx": 0.5, "dz": 0.1, "growth": 1.1, "dz_max": 0.5},
    "ground": {"profile": [[0.0, 0.3], [8.0, 0.0], [12.0, 0.0], [20.0, 0.4]]},
    "zone": [{"name": "aquifer", "kh": "10 m/d", "kv": "3 m/d", "specific_storage": "2e-4 1/m"},
             {"name": "bed", "kh": "2 m/d", "kv": "0.5 m/d", "depth": 0.3, "x": [6.0, 14.0]}],
    "stream": {"wave": {"mean": "1.0 m", "amplitude": "0.4 m", "period": "1 d"}},
    "sides": {"left": {"head": 1.6}, "right": "no-flow", "bottom": {"flux": "1 cm/d"}},
}


def pair(transient: bool):
    d = copy.deepcopy(BASE)
    if transient:
        d["time"] = {"end": "1 d", "step": "1 h", "output_every": "3 h"}
    linear = bedflux.simulate(bedflux.Scenario.from_dict(d))
    for z in d["zone"]:
        z["retention"] = RETENTION
    return linear, bedflux.simulate(bedflux.Scenario.from_dict(d))


def test_steady_saturated_section_matches_linear_model():
    linear, vs = pair(False)
    assert np.nanmin(vs["pressure_head"].values) > 0  # saturated everywhere
    assert np.nanmax(np.abs(vs["head"].values - linear["head"].values)) < 1e-6
    assert abs(float(vs["exchange"]) - float(linear["exchange"])) < 1e-6 * abs(float(linear["exchange"]))


def test_transient_saturated_section_matches_linear_model():
    linear, vs = pair(True)
    assert np.nanmin(vs["pressure_head"].values) > 0
    assert np.allclose(np.nan_to_num(vs["saturation"].values, nan=1.0), 1.0)
    assert np.array_equal(vs["time"].values, linear["time"].values)
    assert np.nanmax(np.abs(vs["head"].values - linear["head"].values)) < 1e-6
    # the whole storage change is elastic
    assert np.allclose(vs["storage_unsaturated"].values, 0.0, atol=1e-15)


def test_saturated_banks_with_seepage_faces_match_linear_model():
    # the stage meets the bank inside a column (water's edge at x = 8 - 0.2 * 8 / 0.3 = 2.67 m) and
    # high side heads keep every cell saturated, so the banks above the water seep: the dry part of
    # the edge column and the exposed banks are seepage faces in both models, and the heads and the
    # exchange must agree to the nonlinear tolerance (Freeze & Cherry 1979, as above)
    d = copy.deepcopy(BASE)
    d["stream"] = {"stage": "0.2 m"}
    d["sides"] = {"left": {"head": 3.0}, "right": {"head": 3.0}, "bottom": "no-flow"}
    linear = bedflux.simulate(bedflux.Scenario.from_dict(d))
    for z in d["zone"]:
        z["retention"] = RETENTION
    vs = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert np.nanmin(vs["pressure_head"].values) > 0  # saturated everywhere
    assert np.nanmax(np.abs(vs["head"].values - linear["head"].values)) < 1e-6
    assert abs(float(vs["exchange"]) - float(linear["exchange"])) < 1e-6 * abs(float(linear["exchange"]))
