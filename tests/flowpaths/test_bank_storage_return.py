"""Bank storage in transient flow: the tracked return of stream water against the run's budget.

A stage pulse pushes stream water into the bed of a channel whose banks stand above the flood, in
an aquifer with elastic storage only (no water table storage: specific yield 0, a confined
bank). All the water the stream gives goes into storage and the storage released on the falling
limb is all the water that comes back (the run's budget: stream in = storage taken up, storage
released = stream out, to round-off). The pressure wave moves the water so little (about a
millimetre) that the water entering last sits nearest the bed and leaves first (first in, last
out; Pinder, Bredehoeft & Cooper 1969 describe bank storage as this in-and-back exchange).
Particles are material markers of the water: with the storage volume change negligible beside
the pore volume (Ss * dh / porosity ~ 3e-5 here) the volume of tracked stream water back in the
stream by any time equals the storage released by then, up to the granularity of the tracking:
one output interval's water (each interval's water is released at one instant) and one path.
"""
from __future__ import annotations

import numpy as np

import bedflux
from bedflux.flowpaths.release import downwelling_flow

STEP = 900.0


def bank_scenario():
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 20.0], "bottom": -5.0, "dx": 0.5, "dz": 0.25},
        "ground": {"profile": [[0.0, 0.0], [4.0, 0.0], [5.0, 3.0], [20.0, 3.0]]},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 5e-5, "specific_storage": 1e-5, "specific_yield": 0.0,
                  "porosity": 0.3}],
        "stream": {"pulse": {"base": 0.5, "peak": 1.5, "start": "1 h", "rise": "4 h", "fall": "8 h"}},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"},
        "time": {"end": "3 d", "step": STEP, "output_every": STEP}})


def test_tracked_return_matches_the_storage_released():
    sc = bank_scenario()
    ds = bedflux.simulate(sc)
    fp = bedflux.flowpaths(sc, ds, per_metre=500)
    t = ds.time.values
    released = np.concatenate([[0.0], np.cumsum(ds.inflow.sel(term="storage").values[1:] * np.diff(t))])
    taken = np.concatenate([[0.0], np.cumsum(ds.outflow.sel(term="storage").values[1:] * np.diff(t))])
    back = fp.exit_kind.values == "bed"
    exit_time = (fp.release_time + fp.residence_time).values[back]
    tracked = np.array([fp.volume.values[back][exit_time <= ti + 1e-9].sum() for ti in t])
    granularity = (np.max(np.diff(np.maximum(released, taken))) + float(fp.volume.max()))
    assert released[-1] > 0.8 * taken[-1]  # most of the stored water is back by the end
    assert np.max(np.abs(tracked - released)) <= granularity
    # and the tracking is not trivially close: the return takes many intervals
    assert released[-1] > 10 * granularity


def test_volumes_add_up_to_the_water_that_entered():
    sc = bank_scenario()
    ds = bedflux.simulate(sc)
    fp = bedflux.flowpaths(sc, ds, per_metre=100)
    dx = np.diff(ds.x_edge.values)
    entered = sum(downwelling_flow(ds.bed_flux.values[k], ds.wetted_fraction.values[k], dx).sum() * STEP
                  for k in range(1, ds.sizes["time"]))
    # every interval's downwelling water is carried by its paths (the bed's share of the budget's
    # stream inflow: the stream enters only through the bed here)
    stream_in = float(np.sum(ds.inflow.sel(term="stream").values[1:] * STEP))
    np.testing.assert_allclose(fp.volume.sum(), entered, rtol=1e-12)
    np.testing.assert_allclose(fp.volume.sum(), stream_in, rtol=1e-9)
    assert set(fp.exit_kind.values) <= {"bed", "not out within the horizon"}
