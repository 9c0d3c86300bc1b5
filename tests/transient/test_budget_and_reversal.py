"""Water budget with storage, flow reversal under a flood pulse, and factorization reuse.

Sources:
- Mass balance: conservation of volume, sum(in) - sum(out) = 0 for every step including the
  storage change, to round-off (design brief: "the water budget closes to round-off").
- Storage term: the change of stored water is sum S_i (h_i(t1) - h_i(t0)) with S_i = ss * cell
  area, plus sy * dx on exposed top cells (the linearised water table of the design brief),
  recomputed here from the heads, the documented grid rule (top cell cut at the ground, issue 1 /
  grid docs) and the stage.
- Maximum principle for diffusion with sinks only (evapotranspiration): heads never exceed the
  largest head imposed on the boundary or present initially (e.g. Evans 1998, PDE, sec. 2.3,
  from memory; it holds for backward Euler on an M-matrix at any step).
- Evapotranspiration is a sink only: ET = ET_max(t) max(0, 1 - d / d_x) >= 0 (common practice,
  references.md 8).
- Reversal on a gaining reach: the bed flux is downward (losing) exactly while the stage is above
  the head in the sediment just beneath the bed (Darcy's law across the bed; common practice of
  mini-piezometer work, references.md 2). Checked in 2D against the simulated top-cell head, and in
  1D against an independent prediction: steady upward flux q0 plus the convolution of the stage
  rise with the erfc step response (Carslaw & Jaeger 1959; Pinder, Bredehoeft & Cooper 1969),
      q(t) = q0 - kv / sqrt(pi D) integral_0^t H'(s) / sqrt(t - s) ds.
- Factorization reuse (issue 3): a pulse that floods and drains the floodplain once refactors
  only when the set of faces changes, far fewer times than it steps.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

import bedflux

HOUR = 3600.0
DAY = 86400.0
SS, SY = 1e-4, 0.15
DZ, DX, BOTTOM = 0.25, 0.5, -8.0
PULSE = {"base": 0.3, "peak": 1.5, "start": 6 * HOUR, "rise": 8 * HOUR, "fall": 10 * HOUR}
RIGHT_HEAD = 1.0


def pulse_stage(t, base, peak, start, rise, fall):
    """The documented pulse (bedflux.scenario.forcing): half-cosine rise over ``rise``, exponential recession."""
    s = np.asarray(t, dtype=float) - start
    amp = peak - base
    rising = base + amp * 0.5 * (1.0 - np.cos(np.pi * np.clip(s, 0.0, rise) / rise))
    falling = base + amp * np.exp(-np.maximum(s - rise, 0.0) / fall)
    return np.where(s <= 0.0, base, np.where(s <= rise, rising, falling))


def flood_scenario(scheme, profile=((0, 0), (5, 0), (7, 0.8), (40, 1.2)), daily_cycle=True):
    """A channel and a sloping floodplain that floods and drains once; riparian ET on the floodplain."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 40.0], "bottom": BOTTOM, "dx": DX, "dz": DZ},
        "ground": {"profile": [list(p) for p in profile]},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 2e-5, "specific_storage": SS, "specific_yield": SY},
                 {"name": "bed", "kh": 1e-5, "kv": 5e-6, "specific_storage": SS, "specific_yield": SY, "depth": 0.5,
                  "x": [0, 6]}],
        "stream": {"pulse": dict(PULSE)},
        "sides": {"left": "no-flow", "right": {"head": RIGHT_HEAD}, "bottom": "no-flow"},
        "riparian": [{"x": [10, 40], "max_rate": "6 mm/d", "extinction_depth": "2 m", "daily_cycle": daily_cycle}],
        "time": {"end": "3 d", "step": "10 min", "output_every": "10 min", "scheme": scheme},
    })


@pytest.fixture(scope="module", params=["backward-euler", "crank-nicolson"])
def flood(request):
    return request.param, bedflux.simulate(flood_scenario(request.param))


# ------------------------------------------------------------------ budget

def test_budget_closes_at_every_output(flood):
    scheme, ds = flood
    bi = ds["inflow"].values
    bo = ds["outflow"].values
    total_in, total_out = bi.sum(axis=1), bo.sum(axis=1)
    scale = np.maximum(total_in, total_out)
    ok = scale > 0
    own = np.abs(total_in - total_out)[ok] / scale[ok]
    assert own.max() < 1e-10, f"{scheme}: budget imbalance {own.max():.3g}"
    assert np.abs(ds["budget_closure"].values).max() < 1e-10
    # the run really exercises flooding, storage, ET and the side
    terms = list(ds["term"].values)
    assert bo[:, terms.index("evapotranspiration")].max() > 0
    assert bo[:, terms.index("storage")].max() > 0 and bi[:, terms.index("storage")].max() > 0
    wet = ~np.isnan(ds["bed_flux"].values)
    assert wet.sum(axis=1).max() > 3 * wet.sum(axis=1).min()   # the floodplain floods


def test_storage_line_equals_head_change(flood):
    """The storage line is minus d/dt of the stored water, recomputed from heads (every output is a step)."""
    scheme, ds = flood
    t = ds.time.values
    head = ds["head"].values                   # (time, z, x)
    ground = ds["ground"].values
    active = ~np.isnan(head[0])
    # row edges from the row centres: rows run down from the highest ground (grid rule), so
    # e[0] = max ground and e[k + 1] = 2 z_k - e[k]; the top active cell is cut at the ground
    zc = ds.z.values
    edges = np.empty(zc.size + 1)
    edges[0] = ground.max()
    for k, z in enumerate(zc):
        edges[k + 1] = 2.0 * z - edges[k]
    assert edges[-1] == pytest.approx(BOTTOM, abs=1e-9)
    cols = np.arange(head.shape[2])
    top_row = np.argmax(active, axis=0)
    thick = np.where(active, -np.diff(edges)[:, None], 0.0)
    thick[top_row, cols] = ground - edges[top_row + 1]
    assert np.all((thick[top_row, cols] > 0.5 * DZ - 1e-12) & (thick[top_row, cols] < 1.5 * DZ + 1e-12))
    terms = list(ds["term"].values)
    storage_net_in = ds["inflow"].values[:, terms.index("storage")] - ds["outflow"].values[:, terms.index("storage")]
    stage = pulse_stage(t, **PULSE)

    def content(k):
        """Stored water (m2 per m width, relative): ss V h in every cell, plus sy dx min(h, ground)
        in the top cell of an exposed column (the water table stores only below the ground; above
        it water is ponding or seeping) and sy dx ground in a flooded one (its pores are full)."""
        c = SS * DX * np.nansum(thick * np.nan_to_num(head[k]), axis=0)
        h_top = head[k][top_row, cols]
        flooded = ground < stage[k]
        return c + SY * DX * np.where(flooded, ground, np.minimum(h_top, ground))

    worst = 0.0
    for k in range(1, t.size):
        released = -np.sum(content(k) - content(k - 1)) / (t[k] - t[k - 1])
        worst = max(worst, abs(released - storage_net_in[k]))
    scale = np.abs(storage_net_in).max()
    assert worst <= 1e-9 * scale, f"{scheme}: storage line differs from head change by {worst / scale:.3g}"


def test_heads_obey_the_maximum_principle(flood):
    """Only sinks inside (ET): no head may exceed the highest boundary head (stage peak, side head)."""
    scheme, ds = flood
    h_max = max(PULSE["peak"], RIGHT_HEAD, float(np.nanmax(ds["head"].values[0])))
    over = float(np.nanmax(ds["head"].values)) - h_max
    assert over <= 1e-9, f"{scheme}: head exceeds the highest imposed head by {over:.3g} m"


def test_evapotranspiration_is_a_sink_only(flood):
    scheme, ds = flood
    et_in = ds["inflow"].sel(term="evapotranspiration").values
    et_out = ds["outflow"].sel(term="evapotranspiration").values
    assert et_in.max() <= 1e-12 * et_out.max(), (
        f"{scheme}: evapotranspiration adds water: up to {et_in.max():.3g} m2/s "
        f"({et_in.max() / et_out.max():.2g} of the largest ET), first at t = "
        f"{ds.time.values[np.argmax(et_in > 0)] / HOUR:.2f} h")


@pytest.mark.parametrize("scheme", ["backward-euler", "crank-nicolson"])
def test_constant_forcing_from_steady_state_stays_steady(scheme):
    """A steady state is a fixed point of any consistent time stepping (storage change zero):
    constant stage, side head and ET, started from the steady state, must not move. The section
    has seepage faces on the lower floodplain, ET on the upper one."""
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 40.0], "bottom": BOTTOM, "dx": DX, "dz": DZ},
        "ground": {"profile": [[0, 0], [5, 0], [7, 0.8], [40, 1.2]]},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 2e-5, "specific_storage": SS, "specific_yield": SY}],
        "stream": {"stage": PULSE["base"]},
        "sides": {"left": "no-flow", "right": {"head": RIGHT_HEAD}, "bottom": "no-flow"},
        "riparian": [{"x": [10, 40], "max_rate": "6 mm/d", "extinction_depth": "2 m"}],
        "time": {"end": "1 d", "step": "10 min", "output_every": "2 h", "scheme": scheme}})
    ds = bedflux.simulate(sc)
    h = ds["head"].values
    drift = float(np.nanmax(np.abs(h - h[0])))
    storage = ds["inflow"].sel(term="storage").values + ds["outflow"].sel(term="storage").values
    total = ds["inflow"].values.sum(axis=1)
    assert drift <= 1e-9, f"{scheme}: heads drift {drift:.3g} m from the steady state under constant forcing"
    assert storage.max() <= 1e-9 * total.max(), f"{scheme}: storage moves {storage.max():.3g} m2/s"


# ------------------------------------------------------------------ factorizations

@pytest.mark.parametrize("scheme", ["backward-euler", "crank-nicolson"])
def test_flood_and_drain_once_reuses_factorizations(scheme):
    # a flat floodplain at 1.0 m floods when the stage passes 1.0 m and drains once
    ds = bedflux.simulate(flood_scenario(scheme, profile=((0, 0), (5, 0), (5.01, 1.0), (40, 1.0)),
                                         daily_cycle=False))
    wet = ~np.isnan(ds["bed_flux"].values)
    changes = int((np.diff(wet.astype(int), axis=0) != 0).any(axis=1).sum())
    assert changes == 2                                   # floods once, drains once
    steps, builds = ds.attrs["steps"], ds.attrs["factorizations"]
    assert builds <= steps / 10, f"{scheme}: {builds} factorizations for {steps} steps"


# ------------------------------------------------------------------ reversal, 2D section

REV_PULSE = {"base": 0.3, "peak": 1.2, "start": 3 * HOUR, "rise": 4 * HOUR, "fall": 6 * HOUR}
REV_OUT = 300.0


@pytest.fixture(scope="module", params=["backward-euler", "crank-nicolson"])
def gaining(request):
    """A gaining channel (side head 0.7 m above the base stage) with banks above every head."""
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 30.0], "bottom": -8.0, "dx": 0.5, "dz": 0.25},
        "ground": {"profile": [[0, 0], [5, 0], [5.5, 3.0], [30, 3.0]]},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 2e-5, "specific_storage": SS, "specific_yield": SY},
                 {"name": "bed", "kh": 1e-5, "kv": 5e-6, "specific_storage": SS, "specific_yield": SY, "depth": 0.5,
                  "x": [0, 5.5]}],
        "stream": {"pulse": dict(REV_PULSE), "channel": [0.0, 5.5]},
        "sides": {"left": "no-flow", "right": {"head": 1.0}, "bottom": "no-flow"},
        "time": {"end": "1 d", "step": "1 min", "output_every": REV_OUT, "scheme": request.param},
    })
    return request.param, bedflux.simulate(sc)


def crossings(t, y):
    """Instants (linear interpolation between outputs) where y changes sign, with the direction."""
    out = []
    for k in np.where(np.sign(y[:-1]) != np.sign(y[1:]))[0]:
        out.append((t[k] + (t[k + 1] - t[k]) * y[k] / (y[k] - y[k + 1]), np.sign(y[k + 1] - y[k])))
    return out


def test_reversal_matches_stage_crossing_local_head(gaining):
    scheme, ds = gaining
    t = ds.time.values
    stage = pulse_stage(t, **REV_PULSE)
    np.testing.assert_allclose(ds["stage"].values, stage, atol=1e-12)
    head = ds["head"].values
    q = ds["bed_flux"].values
    channel = np.where(~np.isnan(q[0]))[0]
    assert channel.size >= 8
    assert np.all(q[0, channel] > 0), "the reach must gain before the pulse"
    reversed_cols = 0
    for j in channel:
        top = np.where(~np.isnan(head[0, :, j]))[0][0]
        local = head[:, top, j]                       # head in the sediment just beneath the bed
        c_flux = crossings(t, q[:, j])
        c_head = crossings(t, local - stage)
        assert len(c_flux) == len(c_head), f"{scheme} x={ds.x.values[j]}: {len(c_flux)} flux vs {len(c_head)} head crossings"
        for (tf, sf), (th, sh) in zip(c_flux, c_head):
            assert sf == sh
            assert abs(tf - th) <= REV_OUT, f"{scheme} x={ds.x.values[j]}: flux reverses at {tf / HOUR:.3f} h, stage crosses head at {th / HOUR:.3f} h"
        reversed_cols += len(c_flux) == 2
    assert reversed_cols >= channel.size // 2, "the pulse should reverse most of the channel"


# ------------------------------------------------------------------ reversal, 1D column vs convolution

KV1, SS1 = 1e-5, 1e-3
D1 = KV1 / SS1
L1 = 60.0
Q0 = 2e-7                       # steady upward (gaining) flux before the pulse
COL_PULSE = {"base": 0.5, "peak": 1.0, "start": 1 * HOUR, "rise": 2 * HOUR, "fall": 3 * HOUR}
COL_OUT = 300.0


def pulse_rate(s):
    p = COL_PULSE
    u = s - p["start"]
    amp = p["peak"] - p["base"]
    if u <= 0.0:
        return 0.0
    if u <= p["rise"]:
        return amp * 0.5 * np.pi / p["rise"] * np.sin(np.pi * u / p["rise"])
    return -amp / p["fall"] * np.exp(-(u - p["rise"]) / p["fall"])


def column_flux(t):
    """q0 - kv / sqrt(pi D) * integral H'(s) / sqrt(t - s) ds (Carslaw & Jaeger 1959 step response,
    convolved; Pinder, Bredehoeft & Cooper 1969). The column is semi-infinite for the run:
    erfc(2 L / (2 sqrt(D t_end))) < 1e-5."""
    p = COL_PULSE
    a, b = p["start"], p["start"] + p["rise"]
    total = 0.0
    for lo, hi in ((a, b), (b, np.inf)):
        hi = min(hi, t)
        if hi <= lo:
            continue
        if hi == t:
            v, _ = quad(pulse_rate, lo, hi, weight="alg", wvar=(0.0, -0.5), limit=200)
        else:
            v, _ = quad(lambda s: pulse_rate(s) / np.sqrt(t - s), lo, hi, limit=200)
        total += v
    return Q0 - KV1 / np.sqrt(np.pi * D1) * total


def test_column_reversal_vs_convolution():
    H_bottom = COL_PULSE["base"] + Q0 * L1 / KV1      # steady q0 = kv (H_b - stage) / L
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -L1, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "bed", "kh": KV1, "kv": KV1, "specific_storage": SS1, "specific_yield": 0.2}],
        "stream": {"pulse": dict(COL_PULSE)},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": H_bottom}},
        "time": {"end": "12 h", "step": "1 min", "output_every": COL_OUT},
    })
    ds = bedflux.simulate(sc)
    t = ds.time.values
    q = ds["bed_flux"].values[:, 0]
    assert q[0] == pytest.approx(Q0, rel=1e-9)           # Darcy: kv (H_b - stage) / L
    model = crossings(t, q)
    assert len(model) == 2, f"expected the flux to reverse and recover, got {len(model)} crossings"
    grid = np.arange(COL_PULSE["start"], 12 * HOUR, 60.0)
    f = np.array([column_flux(s) for s in grid])
    exact = [brentq(column_flux, grid[k], grid[k + 1], xtol=1e-3) for k in np.where(np.diff(np.sign(f)) != 0)[0]]
    assert len(exact) == 2
    for (tm, _), te in zip(model, exact):
        assert abs(tm - te) <= COL_OUT, f"reversal at {tm / HOUR:.3f} h, convolution predicts {te / HOUR:.3f} h"


def test_pulse_slopes_as_documented():
    """bedflux.scenario.forcing documents the pulse: slope continuous at the start (zero on both sides),
    zero at the peak from below, and -(peak - base) / fall at the start of the recession."""
    p = PULSE
    eps = 1.0
    sig = flood_scenario("backward-euler").stream.stage
    scale = (p["peak"] - p["base"]) / min(p["rise"], p["fall"])
    t0 = p["start"]
    left = (float(sig(t0)) - float(sig(t0 - eps))) / eps
    right = (float(sig(t0 + eps)) - float(sig(t0))) / eps
    assert abs(right - left) <= 1e-3 * scale, f"stage slope jumps at the start: {left:.3g} -> {right:.3g} m/s"
    tp = p["start"] + p["rise"]
    below = (float(sig(tp)) - float(sig(tp - eps))) / eps
    above = (float(sig(tp + eps)) - float(sig(tp))) / eps
    assert abs(below) <= 1e-3 * scale
    assert above == pytest.approx(-(p["peak"] - p["base"]) / p["fall"], rel=1e-3)
