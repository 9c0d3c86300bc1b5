"""Riparian evapotranspiration acts only on ground that is out of the water.

Source: riparian plants take groundwater through their roots from the unsaturated zone above the
water table, ET = ET_max max(0, 1 - d / d_x) with d the depth to water below the ground
(references.md 8; White 1932). Under the stream or a flood there is no such ground: the sink is
zero there (common practice: the extinction-depth function applies to land, not to the channel).
So a riparian range that reaches under the channel must remove exactly what the same range
limited to its dry part removes, and a flooded floodplain evaporates no groundwater.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

DAY = 86400.0
HOUR = 3600.0
#: The banks rise from the channel bottom (0 m) at |x| = 10 m to the floodplain (1.5 m) at 10.5 m.
BANK = ((10.0, 0.0), (10.5, 1.5))


def section(riparian, stage=None, time=None, channel=None, dx=0.75):
    """A channel 20 m wide with steep banks in a 60 m section; 0.75 m columns, so neither the
    water's edge nor the range ends fall on a column edge."""
    (x0, z0), (x1, z1) = BANK
    stream = dict(stage or {"stage": 0.8})
    if channel is not None:
        stream["channel"] = channel
    d = {"grid": {"x": [-30.0, 30.0], "bottom": -6.0, "dx": dx, "dz": 0.1},
         "ground": {"profile": [[-30, z1], [-x1, z1], [-x0, z0], [x0, z0], [x1, z1], [30, z1]]},
         "zone": [{"name": "aquifer", "kh": 5 / DAY, "kv": 1 / DAY, "specific_storage": 1e-4, "specific_yield": 0.2}],
         "stream": stream,
         "sides": {"left": {"head": 1.0}, "right": {"head": 1.0}},
         "riparian": [{"x": list(riparian), "max_rate": "5 mm/d", "extinction_depth": "2 m"}]}
    if time is not None:
        d["time"] = time
    return bedflux.Scenario.from_dict(d)


def et_out(ds) -> np.ndarray:
    return ds["outflow"].sel(term="evapotranspiration").values


def water_edge(stage: float) -> float:
    """Where the stage meets the right bank (the bank is straight)."""
    (x0, z0), (x1, z1) = BANK
    return x0 + (x1 - x0) * (stage - z0) / (z1 - z0)


def test_a_range_reaching_under_the_channel_removes_what_its_dry_part_removes():
    # steady: the range [0, 20] m is half under water; the water's edge is at 10.27 m on the bank
    edge = water_edge(0.8)
    half = bedflux.simulate(section([0.0, 20.0]))
    dry = bedflux.simulate(section([edge, 20.0]))
    assert float(et_out(dry)) > 0.0
    assert float(et_out(half)) == pytest.approx(float(et_out(dry)), rel=1e-12)
    np.testing.assert_allclose(half["head"].values, dry["head"].values, rtol=0, atol=1e-12)
    assert float(half.exchange) == pytest.approx(float(dry.exchange), rel=1e-12)


def test_the_same_holds_in_a_transient_run():
    # a stage wave inside channel limits that end on the bank at 10.25 m: the water's edge stays
    # there whatever the stage, so the dry part of [0, 20] is [10.25, 20] at every step
    time = {"end": "1 d", "step": "1 h", "output_every": "3 h"}
    stage = {"wave": {"mean": 0.8, "amplitude": 0.3, "period": "12 h"}}
    limits = [-10.25, 10.25]
    half = bedflux.simulate(section([0.0, 20.0], stage, time, limits))
    dry = bedflux.simulate(section([10.25, 20.0], stage, time, limits))
    assert np.all(et_out(dry)[1:] > 0.0)
    np.testing.assert_allclose(et_out(half), et_out(dry), rtol=1e-12, atol=0.0)
    np.testing.assert_allclose(half["head"].values, dry["head"].values, rtol=0, atol=1e-12)


def test_a_flooded_floodplain_evaporates_no_groundwater():
    # a pulse lifts the stage from 0.8 m over the floodplain (1.5 m) to 1.9 m and back; the
    # riparian range lies on the floodplain only
    pulse = {"pulse": {"base": 0.8, "peak": 1.9, "start": "6 h", "rise": "6 h", "fall": "6 h"}}
    ds = bedflux.simulate(section([12.0, 25.0], pulse, {"end": "2 d", "step": "30 min", "output_every": "30 min"}))
    et = et_out(ds)
    flooded = ds["stage"].values > BANK[1][1]
    assert flooded.sum() >= 4 and (~flooded).sum() >= 4   # the run floods and drains
    assert np.all(et[flooded] == 0.0), f"ET under the flood: {et[flooded].max():.3g} m2/s"
    assert np.all(et[~flooded][1:] > 0.0)
    # and the budget still closes with the sink switching off and on (conservation of volume)
    assert np.abs(ds["budget_closure"].values).max() < 1e-10
