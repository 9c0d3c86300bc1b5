"""Recharge on a single-layer section between two fixed-head channels.

Source: steady 1D flow with uniform recharge R between fixed heads h0 (x = 0) and hL (x = L) in a
layer of transmissivity T, T h'' + R = 0:

    h(x) = h0 + (hL - h0) x / L + R x (L - x) / (2 T)

(the standard confined-aquifer recharge solution; e.g. Freeze & Cherry 1979, Groundwater, ch. 5).
The head stays below the ground, so the top is a pure recharge face (no seepage face).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

L = 100.0        # m between the channels
K = 1e-4         # m/s
BASE, GROUND = 0.0, 10.0
T = K * (GROUND - BASE)  # m^2/s; one row of cells spans the whole layer
R = 1e-8         # m/s (0.864 mm/d)


def section(dx, h0, hl):
    d = {"grid": {"x": [0.0, L], "bottom": BASE, "dx": dx, "dz": GROUND - BASE},
         "ground": {"elevation": GROUND},
         "zone": [{"name": "aquifer", "kh": K, "kv": K}],
         "recharge": {"rate": R},
         "sides": {"left": {"head": h0}, "right": {"head": hl}, "bottom": "no-flow"}}
    return bedflux.Scenario.from_dict(d)


def parabola(x, h0, hl):
    """Freeze & Cherry 1979 (ch. 5): h = h0 + (hL - h0) x / L + R x (L - x) / (2 T)."""
    return h0 + (hl - h0) * x / L + R * x * (L - x) / (2.0 * T)


def max_error(dx, h0, hl):
    r = bedflux.simulate(section(dx, h0, hl))
    assert r["head"].shape[0] == 1, "expected a single-layer section"
    h = r["head"].values[0]
    assert np.all(h < GROUND), "head reached the ground: the case would have a seepage face"
    assert float(r.inflow.sel(term="recharge")) == pytest.approx(R * L, rel=1e-12)  # all of it enters
    return float(np.max(np.abs(h - parabola(r.x.values, h0, hl))))


@pytest.mark.parametrize("h0, hl", [(5.0, 5.0), (5.0, 4.0)], ids=["equal-heads", "sloping"])
def test_parabola_second_order(h0, hl):
    rise = R * L**2 / (8.0 * T)  # 0.0125 m, the mound height for equal heads
    dxs = [10.0, 5.0, 2.5, 1.25, 0.625]
    errs = [max_error(dx, h0, hl) for dx in dxs]
    orders = [np.log(errs[i] / errs[i + 1]) / np.log(dxs[i] / dxs[i + 1]) for i in range(len(dxs) - 1)]
    # second-order scheme: each halving of dx cuts the error about fourfold
    assert min(orders) > 1.8, f"orders {orders}, errors {errs}"
    # and the error is small against the mound itself on the finest grid
    assert errs[-1] < 1e-3 * rise, errs


def test_equal_heads_budget_splits_recharge_evenly():
    # symmetry of the parabola: R L / 2 leaves through each side (Freeze & Cherry 1979, ch. 5)
    r = bedflux.simulate(section(2.0, 5.0, 5.0))
    out_left = float(r.outflow.sel(term="left"))
    out_right = float(r.outflow.sel(term="right"))
    assert out_left == pytest.approx(R * L / 2.0, rel=1e-9)
    assert out_right == pytest.approx(R * L / 2.0, rel=1e-9)
