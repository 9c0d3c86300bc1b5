"""Flow paths through variably saturated runs (Richards' equation): the water moves in the
water-filled pores, root water uptake takes its share, and the paths carry the budget's water.

Sources:
[VG]  van Genuchten (1980), Soil Sci. Soc. Am. J. 44: 892-898, eq. 3 (theta(h)) and eq. 8
      (Mualem relative conductivity ``Kr = Se^0.5 [1 - (1 - Se^(1/m))^m]^2``, m = 1 - 1/n).
[D]   Darcy's law with continuity: in steady vertical flow the Darcy flux q is the same at every
      depth; where the pressure head is uniform the gradient is gravity alone, so q = Ks Kr(Se)
      (unit-gradient drainage, e.g. Jury & Horton 2004, Soil Physics, ch. 3 - from memory), and
      water moves at q / theta: a depth D takes D theta / q.
[P]   Water balance of a steady run: what the stream gives the bed is the budget's stream inflow;
      with sides held below the stage, no recharge and a closed base, every drop of stream water
      leaves through a side and every drop leaving a side is stream water.
[M]   Water balance of a steady one-dimensional column (saturated or not): all the water entering the top passes
      through every depth, so the share the roots take is the budget's uptake over the inflow.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

import bedflux
from bedflux.flowpaths.paths import flowpaths_from_points

SAND = {"model": "van-genuchten", "alpha": "7.5 1/m", "n": 1.89, "residual": 0.065, "saturated": 0.41}
LOAM = {"model": "van-genuchten", "alpha": "3.6 1/m", "n": 1.56, "residual": 0.078, "saturated": 0.43}
DAY = 86400.0


def column(recharge="20 mm/d", riparian=None):
    spec = {"grid": {"x": [0.0, 1.0], "bottom": -6.0, "dx": 0.5, "dz": 0.1},
            "ground": {"elevation": 0.0},
            "zone": [{"name": "sand", "kh": "2 m/d", "kv": "2 m/d", "retention": SAND}],
            "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": -6.0}},
            "recharge": {"rate": recharge}}
    if riparian:
        spec["riparian"] = riparian
    return bedflux.Scenario.from_dict(spec)


def unit_gradient_water_content(q: float, ks: float, n: float, residual: float, saturated: float) -> float:
    """Water content at which Ks Kr(Se) = q [VG eq. 8], solved here independently of the model."""
    m = 1.0 - 1.0 / n

    def excess(se: float) -> float:
        return se ** 0.5 * (1.0 - (1.0 - se ** (1.0 / m)) ** m) ** 2 - q / ks

    se = brentq(excess, 1e-12, 1.0 - 1e-15, xtol=1e-15)
    return residual + se * (saturated - residual)


def test_travel_time_under_steady_downward_flow_is_depth_times_water_content_over_flux():
    # 20 mm/d infiltrating a sand column 6 m deep over a water table at its base: above the
    # capillary fringe the pressure head is uniform and the flow is unit-gradient drainage [D]
    sc = column()
    ds = bedflux.simulate(sc)
    q = 0.020 / DAY
    theta = unit_gradient_water_content(q, 2.0 / DAY, 1.89, 0.065, 0.41)  # [VG]
    assert theta < 0.7 * 0.41  # well below saturation: the pore space is not the porosity
    fp = flowpaths_from_points(sc, np.array([0.25, 0.75]), np.array([-0.5, -0.5]), ds, keep_geometry=True)
    assert set(fp.exit_kind.values) == {"base"}
    for z, t in zip(fp.path_z.values, fp.path_t.values):
        at = lambda depth: t[np.flatnonzero(np.isclose(z, -depth))[0]]  # noqa: E731 - vertex on a face
        # 100 x the nonlinear solver's residual tolerance (1e-10 of the throughput)
        np.testing.assert_allclose(at(3.5) - at(0.5), 3.0 * theta / q, rtol=1e-8)  # [D]


def test_roots_take_their_share_of_the_water_passing_through_the_root_zone():
    # a column infiltrated at 20 mm/d under roots taking up to 8 mm/d within 1 m of the ground:
    # the paths released at the top are taken up in the share the budget's uptake is of the
    # inflow [M], to the sampling error of the draws (binomial, 4 standard deviations)
    riparian = [{"x": [0.0, 1.0], "max_rate": "8 mm/d", "extinction_depth": 2.0, "root_depth": 1.0,
                 "uptake_heads": ["-10 cm", "-25 cm", "-4 m", "-80 m"]}]
    sc = column(riparian=riparian)
    with pytest.warns(UserWarning, match="extinction_depth"):
        ds = bedflux.simulate(sc)
    share = float(ds.outflow.sel(term="evapotranspiration") / ds.inflow.sel(term="recharge"))
    assert 0.1 < share < 0.5  # the roots take a real share but not all
    n = 4000
    fp = flowpaths_from_points(sc, np.linspace(0.01, 0.99, n), np.full(n, -0.001), ds)
    kinds = fp.exit_kind.values
    assert set(kinds) == {"sink", "base"}
    taken = float(np.mean(kinds == "sink"))
    assert abs(taken - share) <= 4.0 * np.sqrt(share * (1.0 - share) / n)
    # taken up in the root zone only
    assert np.all(fp.exit_x.values[kinds == "sink"] >= 0.0)
    z_taken = -fp.depth_reached.values[kinds == "sink"] - 0.001
    assert np.all(z_taken >= -1.0 - 1e-9)


def losing_channel_unsaturated():
    return bedflux.Scenario.from_dict({
        "grid": {"x": [-15.0, 15.0], "bottom": -6.0, "dx": 0.25, "dz": 0.1, "growth": 1.06, "dz_max": 0.5},
        "ground": {"profile": [[-15.0, 1.5], [-3.0, 1.3], [-2.0, 0.0], [2.0, 0.0], [3.0, 1.3], [15.0, 1.5]]},
        "zone": [{"name": "aquifer", "kh": 2e-4, "kv": 5e-5, "retention": SAND},
                 {"name": "bed", "kh": 5e-5, "kv": 1e-5, "depth": 0.3, "x": [-3.0, 3.0], "retention": LOAM}],
        "stream": {"stage": 0.5, "channel": [-3.0, 3.0]},
        "sides": {"left": {"head": 0.2}, "right": {"head": -0.1}, "bottom": "no-flow"}})


@pytest.fixture(scope="module")
def losing():
    sc = losing_channel_unsaturated()
    ds = bedflux.simulate(sc)
    return ds, bedflux.flowpaths(sc, ds, per_metre=300)


def test_weights_add_up_to_the_stream_inflow_of_the_unsaturated_budget(losing):
    ds, fp = losing
    # the banks above the water table are unsaturated: the run is not a saturated one in disguise
    assert float(np.nanmin(ds.saturation.values)) < 0.5
    np.testing.assert_allclose(fp.weight.sum(), ds.inflow.sel(term="stream"), rtol=1e-10)  # [P]


def test_paths_at_each_side_carry_its_outflow_in_an_unsaturated_run(losing):
    ds, fp = losing
    assert set(fp.exit_kind.values) == {"side"}
    assert np.all(np.isfinite(fp.residence_time)) and np.all(fp.residence_time > 0)
    w = float(fp.weight[0])
    for side, x_side in (("left", -15.0), ("right", 15.0)):
        at = np.isclose(fp.exit_x.values, x_side)
        assert abs(float(fp.weight.values[at].sum()) - float(ds.outflow.sel(term=side))) <= w  # [P]


def test_tracked_return_of_bank_storage_matches_the_budgets_stream_outflow():
    # A stage pulse on a closed section whose banks stand above the flood: the water table is at
    # the base stage before the pulse, the bank above it unsaturated. Stream water fills the bank's
    # pores on the rising limb and drains back on the falling limb; the water nearest the bed,
    # the stream water that went in last, comes back first (first in, last out: Pinder, Bredehoeft
    # & Cooper 1969 describe bank storage as this in-and-back exchange). While less water has come
    # back than went in, all of it is stream water, so the tracked stream water back in the stream
    # by any time is the budget's stream outflow by then [P], up to the granularity of the
    # tracking: one output interval's water and one path.
    step = 900.0
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 20.0], "bottom": -5.0, "dx": 0.5, "dz": 0.25},
        "ground": {"profile": [[0.0, 0.0], [4.0, 0.0], [5.0, 3.0], [20.0, 3.0]]},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 5e-5, "specific_storage": 1e-5, "retention": SAND}],
        "stream": {"pulse": {"base": 0.5, "peak": 1.5, "start": "1 h", "rise": "4 h", "fall": "8 h"}},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"},
        "time": {"end": "1 d", "step": step, "output_every": step}})
    ds = bedflux.simulate(sc)
    fp = bedflux.flowpaths(sc, ds, per_metre=500)
    t = ds.time.values
    stream_in = np.concatenate([[0.0], np.cumsum(ds.inflow.sel(term="stream").values[1:] * np.diff(t))])
    stream_out = np.concatenate([[0.0], np.cumsum(ds.outflow.sel(term="stream").values[1:] * np.diff(t))])
    np.testing.assert_allclose(fp.volume.sum(), stream_in[-1], rtol=1e-9)
    back = fp.exit_kind.values == "bed"
    exit_time = (fp.release_time + fp.residence_time).values[back]
    tracked = np.array([fp.volume.values[back][exit_time <= ti + 1e-9].sum() for ti in t])
    granularity = float(np.max(np.diff(stream_out))) + float(fp.volume.max())
    assert stream_out[-1] < stream_in[-1]  # less came back than went in
    assert np.max(np.abs(tracked - stream_out)) <= granularity
    assert stream_out[-1] > 10 * granularity  # the return takes many intervals


def test_saturated_runs_take_up_paths_by_the_same_share():
    # the same column, saturated (linear model) with its water table held near the ground:
    # evapotranspiration takes its share of the infiltration [M], and paths follow it
    spec = {"grid": {"x": [0.0, 1.0], "bottom": -4.0, "dx": 0.5, "dz": 0.1},
            "ground": {"elevation": 0.0},
            "zone": [{"name": "sand", "kh": "2 m/d", "kv": "2 m/d"}],
            "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": -0.5}},
            "recharge": {"rate": "20 mm/d"},
            "riparian": [{"x": [0.0, 1.0], "max_rate": "8 mm/d", "extinction_depth": 2.0, "root_depth": 1.0}]}
    sc = bedflux.Scenario.from_dict(spec)
    ds = bedflux.simulate(sc)
    share = float(ds.outflow.sel(term="evapotranspiration") / ds.inflow.sel(term="recharge"))
    assert 0.1 < share < 0.5
    n = 4000
    fp = flowpaths_from_points(sc, np.linspace(0.01, 0.99, n), np.full(n, -0.001), ds)
    kinds = fp.exit_kind.values
    assert set(kinds) == {"sink", "base"}
    taken = float(np.mean(kinds == "sink"))
    assert abs(taken - share) <= 4.0 * np.sqrt(share * (1.0 - share) / n)
