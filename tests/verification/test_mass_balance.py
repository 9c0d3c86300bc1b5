"""Water budget closes to round-off.

Source: conservation of mass for a steady incompressible flow (the divergence theorem: what enters
through the boundaries leaves through them; in a transient run the storage change makes up the
difference). A block-centred finite-volume scheme conserves mass cell by cell, so the budget over
all boundaries closes to the round-off of the linear solve (common practice: a relative closure
error well below 1e-10 with a direct solver).
"""
from __future__ import annotations

from pathlib import Path

import tomllib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import bedflux

ROOT = Path(__file__).resolve().parents[2]
CLOSURE = 1e-10


def _is_scenario(path: Path) -> bool:
    """Scenario files have a [grid] table; fit and plan files in scenarios/ name a scenario instead."""
    return "grid" in tomllib.loads(path.read_text(encoding="utf-8"))


SCENARIO_FILES = [p for p in sorted(ROOT.glob("scenarios/*.toml")) + sorted(ROOT.glob("model/bedflux/examples/*.toml"))
                  if _is_scenario(p)]


def check_closure(result, label):
    closure = np.abs(np.atleast_1d(result.budget_closure.values))
    assert np.all(np.isfinite(closure)), f"{label}: budget closure is not finite"
    assert closure.max() < CLOSURE, f"{label}: budget closure {closure.max():.3g} >= {CLOSURE:g}"
    # the lines must carry flow at all, or closure 0 would prove nothing
    assert float(np.abs(result.budget_in.values).sum()) > 0.0, f"{label}: no inflow at all"


def cross_section(**over):
    """A channel with banks: bed zone, clogging patch, recharge on the banks, fixed-head sides."""
    d = {"title": "constructed: channel with banks",
         "grid": {"x": [0.0, 60.0], "bottom": -15.0, "dx": 0.5, "dz": 0.1, "growth": 1.08, "dz_max": 1.0},
         "ground": {"profile": [[0.0, 2.0], [20.0, 1.2], [24.0, 0.0], [36.0, 0.0], [40.0, 1.0], [60.0, 1.6]]},
         "zone": [{"name": "aquifer", "kh": "20 m/d", "kv": "5 m/d", "ss": 1e-4, "sy": 0.2},
                  {"name": "bed", "kh": "5 m/d", "kv": "1 m/d", "depth": 0.4, "x": [22.0, 38.0]},
                  {"name": "clog", "kh": "0.05 m/d", "kv": "0.01 m/d", "x": [27.0, 31.0], "z": [-0.5, 0.0]}],
         "stream": {"stage": 0.6, "channel": [20.0, 40.0]},
         "recharge": {"rate": "2 mm/d"},
         "sides": {"left": {"head": 1.4}, "right": {"head": 1.1}, "bottom": "no-flow"}}
    d.update(over)
    return d


CONSTRUCTED = {
    "channel with banks": cross_section(),
    "seepage face on a low bank": cross_section(sides={"left": {"head": 2.3}, "right": {"head": 1.1},
                                                       "bottom": "no-flow"}, recharge={"rate": "20 mm/d"}),
    "bed leakance and bottom flux": cross_section(stream={"stage": 0.6, "channel": [20.0, 40.0],
                                                          "leakance": "0.5 1/d"},
                                                  sides={"left": "no-flow", "right": {"head": 1.0},
                                                         "bottom": {"flux": "1 mm/d"}}),
    "riparian evapotranspiration": cross_section(riparian=[{"x": [5.0, 18.0], "rate": "5 mm/d",
                                                            "extinction_depth": 2.0}]),
    "dune bed, periodic": {
        "grid": {"x": [0.0, 2.0], "bottom": -1.0, "dx": 0.02, "dz": 0.02},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 1e-3, "kv": 4e-4}],
        "stream": {"stage": 0.3, "bedform": {"velocity": 0.4, "height": 0.05, "depth": 0.3,
                                             "wavelength": 1.0, "phase": 0.3}},
        "sides": {"left": "periodic", "right": "periodic", "bottom": {"head": 0.32}}},
    "stream on the sides": cross_section(sides={"left": "stream", "right": {"flux": -1e-7},
                                                "bottom": {"head": 0.9}}),
}


@pytest.mark.parametrize("path", SCENARIO_FILES, ids=[p.name for p in SCENARIO_FILES])
def test_budget_closes_on_scenario_file(path):
    # every scenario shipped with the project (scenarios/ and the built-in examples)
    check_closure(bedflux.simulate(bedflux.load(path)), str(path))


def test_scenario_files_are_checked_when_present():
    # guards the glob above: the parametrized test must see every scenario file, none skipped silently
    found = {p.resolve() for p in SCENARIO_FILES}
    for folder in (ROOT / "scenarios", ROOT / "model" / "bedflux" / "examples"):
        for p in folder.glob("*.toml") if folder.is_dir() else []:
            assert p.resolve() in found or not _is_scenario(p)


@pytest.mark.parametrize("name", list(CONSTRUCTED))
def test_budget_closes_on_constructed_case(name):
    check_closure(bedflux.simulate(bedflux.Scenario.from_dict(CONSTRUCTED[name])), name)


def test_budget_detects_a_missing_line():
    # the check can fail: drop the stream line from a gaining section and the books no longer balance
    r = bedflux.simulate(bedflux.Scenario.from_dict(CONSTRUCTED["channel with banks"]))
    terms = list(r.term.values)
    total_in = r.budget_in.values.sum()
    total_out = r.budget_out.values.sum()
    stream = terms.index("stream")
    assert r.budget_out.values[stream] + r.budget_in.values[stream] > 0
    unbalanced = (total_in - r.budget_in.values[stream]) - (total_out - r.budget_out.values[stream])
    assert abs(unbalanced) / max(total_in, total_out) > 1e-3


NX, NZ = 24, 12


@st.composite
def random_case(draw):
    seed = draw(st.integers(0, 2**32 - 1))
    sigma = draw(st.floats(0.0, 2.5))              # ln-K standard deviation
    log_mean = draw(st.floats(np.log(1e-6), np.log(1e-3)))
    anis = draw(st.floats(np.log(0.1), np.log(10.0)))
    stage = draw(st.floats(0.05, 1.5))
    left = draw(st.floats(-3.0, 0.0))              # side heads below the ground (0 m) ...
    right = draw(st.floats(-3.0, 0.0))
    bottom = draw(st.sampled_from(["no-flow", "head"]))
    bottom_head = draw(st.floats(-3.0, 2.0))
    channel = draw(st.sampled_from([None, (6.0, 18.0), (0.0, 9.0)]))
    return seed, sigma, log_mean, anis, stage, left, right, bottom, bottom_head, channel


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_case())
def test_budget_closes_on_random_heterogeneous_fields(case):
    # random lognormal kh, kv fields (a heterogeneous field through the Python API)
    seed, sigma, log_mean, anis, stage, left, right, bottom, bottom_head, channel = case
    rng = np.random.default_rng(seed)
    ln_kh = log_mean + sigma * rng.standard_normal((NZ, NX))
    ln_kv = ln_kh + anis + 0.5 * sigma * rng.standard_normal((NZ, NX))
    kh = np.clip(np.exp(ln_kh), 1e-11, 1e-1)
    kv = np.clip(np.exp(ln_kv), 1e-11, 1e-1)
    stream = {"stage": stage}
    if channel is not None:
        stream["channel"] = list(channel)
    d = {"grid": {"x": [0.0, 24.0], "bottom": -6.0, "dx": 1.0, "dz": 0.5},
         "ground": {"profile": [[0.0, 0.0], [8.0, -0.2], [16.0, -0.1], [24.0, 0.0]]},
         "zone": [{"name": "aquifer", "kh": 1e-4}],
         "stream": stream,
         "recharge": {"rate": "1 mm/d"},
         "sides": {"left": {"head": left}, "right": {"head": right},
                   "bottom": "no-flow" if bottom == "no-flow" else {"head": bottom_head}}}
    s = bedflux.Scenario.from_dict(d)
    r = bedflux.simulate(s, fields={"kh": kh, "kv": kv})
    assert r["head"].shape == (NZ, NX)
    check_closure(r, f"random field {case}")
