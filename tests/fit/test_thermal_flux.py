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
  O(h^2); the flow-parameter columns of such a table are central differences, so a Jacobian that
  missed the thermal rows (zero rows) leaves an O(h) remainder and fails.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

from tests.fit.test_jacobian import CASES, EPS, STEPS, free_list, observed_orders, section, taylor_remainders

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
