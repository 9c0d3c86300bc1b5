"""Conservation: the paths carry the run's downwelling water, and every path says where it ends.

Water balance of a steady run [P]: what the stream gives the bed is the budget's stream inflow;
in a section whose only other boundaries are two sides held below the stage (no recharge, closed
base), every drop of stream water leaves through a side and every drop leaving a side is stream
water, so the paths ending at each side carry that side's outflow. Streamlines of a steady
field do not cross, so the traced share is right to within one path's weight.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.flowpaths.tracer import EXIT_KINDS


def losing_channel(left_head=0.2, right_head=-0.1):
    return bedflux.Scenario.from_dict({
        "grid": {"x": [-15.0, 15.0], "bottom": -6.0, "dx": 0.25, "dz": 0.1, "growth": 1.06, "dz_max": 0.5},
        "ground": {"profile": [[-15.0, 1.5], [-3.0, 1.3], [-2.0, 0.0], [2.0, 0.0], [3.0, 1.3], [15.0, 1.5]]},
        "zone": [{"name": "aquifer", "kh": 2e-4, "kv": 5e-5, "porosity": 0.28},
                 {"name": "bed", "kh": 5e-5, "kv": 1e-5, "depth": 0.3, "x": [-3.0, 3.0], "porosity": 0.35}],
        "stream": {"stage": 0.5, "channel": [-3.0, 3.0]},
        "sides": {"left": {"head": left_head}, "right": {"head": right_head}, "bottom": "no-flow"}})


@pytest.fixture(scope="module")
def run():
    sc = losing_channel()
    ds = bedflux.simulate(sc)
    return ds, bedflux.flowpaths(sc, ds, per_metre=300)


def test_weights_add_up_to_the_budgets_stream_inflow(run):
    ds, fp = run
    np.testing.assert_allclose(fp.weight.sum(), ds.inflow.sel(term="stream"), rtol=1e-10)
    np.testing.assert_allclose(fp.attrs["exchange_flux"] * float(np.sum(ds.wetted_fraction * np.diff(ds.x_edge))),
                               ds.inflow.sel(term="stream"), rtol=1e-10)


def test_every_path_ends_with_a_stated_exit(run):
    _, fp = run
    assert set(fp.exit_kind.values) <= set(EXIT_KINDS)
    assert set(fp.exit_kind.values) == {"side"}
    assert np.all(np.isfinite(fp.residence_time)) and np.all(fp.residence_time > 0)
    assert np.all(fp.depth_reached >= 0) and np.all(fp.length > 0)


def test_paths_at_each_side_carry_its_outflow(run):
    ds, fp = run
    w = float(fp.weight[0])
    for side, x_side in (("left", -15.0), ("right", 15.0)):
        at = np.isclose(fp.exit_x.values, x_side)
        assert abs(float(fp.weight.values[at].sum()) - float(ds.outflow.sel(term=side))) <= w


def test_a_short_horizon_keeps_every_path_and_says_it_is_not_out():
    sc = losing_channel()
    fp = bedflux.flowpaths(sc, per_metre=50, max_time=3600.0)
    # the stage 0.5 m wets the channel floor (4 m) and the banks up to 0.5 / 1.3 m of their 1 m
    assert fp.sizes["path"] == round(50 * (4.0 + 2 * 0.5 / 1.3))
    assert set(fp.exit_kind.values) == {"not out within the horizon"}
    np.testing.assert_allclose(fp.time_tracked, 3600.0)
    assert np.isinf(fp.attrs["median_residence_time"]) and fp.attrs["not_out_fraction"] == 1.0


def test_stream_water_drawn_by_roots_ends_in_the_root_zone():
    # steady: water enters from the stream and a side, leaves only to the stream and the roots; the
    # stream water that does not come back is taken up by the roots, and that is no more than the
    # budget's evapotranspiration [P]
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [-15.0, 25.0], "bottom": -6.0, "dx": 0.5, "dz": 0.1, "growth": 1.08, "dz_max": 0.5},
        "ground": {"profile": [[-15.0, 1.0], [-2.5, 0.8], [-1.5, 0.0], [1.5, 0.0], [2.5, 0.8], [25.0, 1.0]]},
        "zone": [{"name": "aquifer", "kh": "4 m/d", "kv": "1 m/d"}],
        "stream": {"stage": 0.3, "channel": [-2.5, 2.5]},
        "sides": {"left": {"head": 0.4}, "right": "no-flow"},
        "riparian": [{"x": [2.5, 20.0], "max_rate": "10 mm/d", "extinction_depth": 2.5, "root_depth": 1.0}]})
    ds = bedflux.simulate(sc)
    fp = bedflux.flowpaths(sc, ds, per_metre=50)
    kinds = set(fp.exit_kind.values)
    assert "sink" in kinds and kinds <= {"sink", "bed"}
    taken = float(fp.weight.values[fp.exit_kind.values == "sink"].sum())
    assert taken <= float(ds.outflow.sel(term="evapotranspiration")) * (1 + 1e-12)
    # taken up when they reach the root zone, not left creeping towards it until the horizon
    assert np.all(fp.residence_time < 0.1 * fp.attrs["horizon"])
    assert np.all(fp.exit_x.values[fp.exit_kind.values == "sink"] >= 2.0)
