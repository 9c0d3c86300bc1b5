"""Water budget closes to round-off, and the closure figure says what it can judge.

Sources:
- Conservation of mass for incompressible flow (the divergence theorem): what enters through the
  boundaries leaves through them; in a transient run the storage change makes up the difference.
  A block-centred finite-volume scheme conserves mass cell by cell, so the budget over all
  boundaries closes to the round-off of the linear solve (common practice: a relative closure
  error well below 1e-10 of the throughput with a direct solver).
- The imbalance is recomputed here from the budget lines themselves (sum in - sum out) and judged
  against a tolerance computed from the same lines (1e-10 of the larger of the totals); the
  model's own closure figure is not used for that check.
- Round-off of a difference: a flow computed as ``a - b`` from two larger numbers carries an
  error of the order of the unit round-off times ``|a| + |b|`` (Higham 2002, Accuracy and
  Stability of Numerical Algorithms, 2nd ed., sec. 1.7 on cancellation; from memory). A
  closure scaled by the net flow therefore reads O(1) when the flows are tiny against the heads
  that drive them; the model scales it by the gross flow and says when it cannot be judged.
"""
from __future__ import annotations

from pathlib import Path

import tomllib

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import bedflux
from bedflux.outputs.summary import run_summary, run_summary_text

ROOT = Path(__file__).resolve().parents[2]
CLOSURE = 1e-10
#: A variably saturated run closes its budget to the tolerance of its Newton iterations, not to
#: round-off: per step within 1e-8 of the flow (the criterion set for Richards' equation with
#: direct solves; docs/numerics.md, variably saturated flow)
CLOSURE_VARIABLY_SATURATED = 1e-8
TOML_FOLDERS = (ROOT / "scenarios", ROOT / "model" / "bedflux" / "examples")


def _toml(path: Path) -> dict:
    return tomllib.loads(path.read_text(encoding="utf-8"))


SCENARIO_FILES = [p for folder in TOML_FOLDERS for p in sorted(folder.glob("*.toml")) if "grid" in _toml(p)]


def check_closure(result, label):
    """sum(in) - sum(out) from the budget lines, within 1e-10 of the larger total (1e-8 for a
    variably saturated run), at every output."""
    total_in = np.atleast_2d(result["inflow"].values).sum(axis=1)
    total_out = np.atleast_2d(result["outflow"].values).sum(axis=1)
    assert np.all(np.isfinite(total_in)) and np.all(np.isfinite(total_out)), f"{label}: budget not finite"
    imbalance = np.abs(total_in - total_out)
    limit = CLOSURE_VARIABLY_SATURATED if "pressure_head" in result else CLOSURE
    tolerance = limit * np.maximum(total_in, total_out)
    worst = int(np.argmax(imbalance - tolerance))
    assert np.all(imbalance <= tolerance), (
        f"{label}: output {worst}: in {total_in[worst]:.6g}, out {total_out[worst]:.6g} m2/s, "
        f"imbalance {imbalance[worst]:.3g} > {tolerance[worst]:.3g}")
    # the lines must carry flow, or a zero imbalance would prove nothing
    assert total_in.max() > 0.0, f"{label}: no inflow at all"


def cross_section(**over):
    """A channel with banks: bed zone, clogging patch, recharge on the banks, fixed-head sides."""
    d = {"title": "constructed: channel with banks",
         "grid": {"x": [0.0, 60.0], "bottom": -15.0, "dx": 0.5, "dz": 0.1, "growth": 1.08, "dz_max": 1.0},
         "ground": {"profile": [[0.0, 2.0], [20.0, 1.2], [24.0, 0.0], [36.0, 0.0], [40.0, 1.0], [60.0, 1.6]]},
         "zone": [{"name": "aquifer", "kh": "20 m/d", "kv": "5 m/d", "specific_storage": 1e-4, "specific_yield": 0.2},
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
    "riparian evapotranspiration": cross_section(riparian=[{"x": [5.0, 18.0], "max_rate": "5 mm/d",
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


def _case(path: Path):
    # a transient variably saturated example runs for minutes: a longer verification case
    slow = "retention" in path.read_text(encoding="utf-8") and "time" in _toml(path)
    return pytest.param(path, id=path.name, marks=[pytest.mark.slow] if slow else [])


@pytest.mark.parametrize("path", [_case(p) for p in SCENARIO_FILES])
def test_budget_closes_on_scenario_file(path):
    # every scenario shipped with the project (scenarios/ and the built-in examples), steady and
    # transient; a transient run is checked at every output time, storage included
    check_closure(bedflux.simulate(bedflux.load(path)), str(path))


def test_every_shipped_toml_is_a_scenario_or_names_one():
    # a TOML file left out of SCENARIO_FILES must be a fit or plan file whose scenario is checked
    checked = {p.resolve() for p in SCENARIO_FILES}
    for folder in TOML_FOLDERS:
        for p in sorted(folder.glob("*.toml")):
            if p.resolve() in checked:
                continue
            named = _toml(p).get("scenario")
            assert isinstance(named, str), f"{p}: neither a scenario ([grid]) nor a file naming one"
            assert (p.parent / named).resolve() in checked, f"{p}: names {named}, which is not checked"


def test_shipped_scenarios_include_steady_and_transient_runs():
    # the budget check above must see both kinds of run
    kinds = {"time" in _toml(p) for p in SCENARIO_FILES}
    assert kinds == {True, False}, f"scenario files checked: {[p.name for p in SCENARIO_FILES]}"


@pytest.mark.parametrize("name", list(CONSTRUCTED))
def test_budget_closes_on_constructed_case(name):
    check_closure(bedflux.simulate(bedflux.Scenario.from_dict(CONSTRUCTED[name])), name)


def test_budget_detects_a_missing_line():
    # the check can fail: drop the stream line from a gaining section and the books no longer balance
    r = bedflux.simulate(bedflux.Scenario.from_dict(CONSTRUCTED["channel with banks"]))
    stream = list(r.term.values).index("stream")
    assert r.outflow.values[stream] + r.inflow.values[stream] > 0
    broken = r.copy(deep=True)
    broken["outflow"].values[stream] = 0.0
    broken["inflow"].values[stream] = 0.0
    with pytest.raises(AssertionError, match="imbalance"):
        check_closure(broken, "stream line dropped")


# ------------------------------------------------------------------ what the closure figure says

def column(**over):
    d = {"grid": {"x": [0.0, 10.0], "bottom": -10.0, "dx": 1.0, "dz": 0.1},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "aquifer", "kh": 1e-4, "specific_storage": 1e-4}],
         "stream": {"stage": 0.5}}
    d.update(over)
    return bedflux.simulate(bedflux.Scenario.from_dict(d))


def closure_line(ds):
    return [ln for ln in run_summary_text(run_summary(ds)).splitlines() if ln.startswith("water budget closure")][0]


def test_nothing_flows_is_not_judged():
    # stage, side head and bottom head all equal: nothing flows, so no closure can be judged
    ds = column(sides={"left": {"head": 0.5}, "bottom": {"head": "50 cm"}})
    assert np.all(np.atleast_1d(ds["inflow"].values) == 0.0)
    s = run_summary(ds)
    assert s["budget_closure"] is None
    assert "not judgeable" in closure_line(ds) and "nothing flows" in closure_line(ds)


def test_tight_bed_under_a_very_permeable_aquifer():
    # 0.3 m bed of kv = 1e-14 m/s under a 1 m/s aquifer, upward head difference 1 m from a bottom
    # head: the exchange is Darcy's law through the beds in series (per 1 m of section width,
    # 10 columns of 1 m); the bottom line of the budget is a difference of numbers of 1e2 m2/s and
    # cannot show a 1e-13 m2/s flow, so the closure must not be reported as a large number.
    kv_bed, b_bed, dh = 1e-14, 0.3, 1.0
    ds = column(zone=[{"name": "aquifer", "kh": 1.0, "kv": 1.0},
                      {"name": "bed", "kh": kv_bed, "kv": kv_bed, "depth": b_bed}],
                sides={"bottom": {"head": 1.5}})
    resistance = b_bed / kv_bed + (10.0 - b_bed) / 1.0          # s, per unit area (Darcy in series)
    assert float(ds["exchange"]) == pytest.approx(10.0 * dh / resistance, rel=1e-9)
    s = run_summary(ds)
    assert s["budget_closure"] is None or abs(s["budget_closure"]) < 1e-12, closure_line(ds)
    if s["budget_closure"] is None:
        assert "an error in them would not show" in s["budget_closure_note"]


def test_tiny_steps_keep_a_round_off_closure():
    # 200 steps of 1 ms (the shortest step a scenario may ask for): the storage change per step
    # is a difference of two heads that differ by about 1e-10 of their size; a correct run must
    # neither stop nor report more than round-off
    ds = column(stream={"wave": {"mean": 0.5, "amplitude": 0.3, "period": "1 d"}, "channel": [0.0, 3.0]},
                sides={"right": {"head": 0.8}},
                time={"end": 0.2, "step": 1e-3, "output_every": 0.02})
    s = run_summary(ds)
    assert "partial" not in ds.attrs
    assert s["budget_closure"] is None or abs(s["budget_closure"]) < 1e-12, closure_line(ds)


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


@pytest.mark.parametrize("error, fails", [(1e-6, True), (1e-13, False)])
def test_a_steady_solve_whose_budget_does_not_close_fails(monkeypatch, error, fails):
    # heads off by a fraction `error` of themselves: 1e-6 leaves an imbalance of about that
    # fraction of the gross flow, above the 1e-8 a direct solve keeps to; 1e-13 is round-off
    import bedflux.section.steady as steady

    real = steady.factorize

    class Off:
        def __init__(self, factor):
            self.factor = factor
            self.method = factor.method

        def solve(self, b):
            return self.factor.solve(b) * (1.0 + error)

    monkeypatch.setattr(steady, "factorize", lambda A, method: Off(real(A, method)))
    if fails:
        with pytest.raises(bedflux.errors.SolverError, match="water budget does not close in the steady solve"):
            column(sides={"bottom": {"head": 1.5}})
    else:
        check_closure(column(sides={"bottom": {"head": 1.5}}), "round-off error")
