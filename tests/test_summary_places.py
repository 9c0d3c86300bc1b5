"""The run summary gives every extreme its place and a robust figure beside it, and tells no small lies.

Sources (docs/references.md, "Sources cited by the tests"):
- Weighted percentile: with equal weights the midpoint rule is Hyndman & Fan (1996), definition 5,
  which numpy implements as ``method="hazen"``; with integer weights, at the middle of each value's
  share of the weight, it is that percentile of the sample in which each value is repeated as often
  as its weight.
- Strict JSON: RFC 8259 (2017), section 6: "Numeric values that cannot be represented in the
  grammar below (such as Infinity and NaN) are not permitted."
- Darcy's law (Freeze & Cherry 1979, ch. 2): with the head at the base above the stage everywhere
  and no sink, every column of the bed discharges upward: the reach has no losing part.
- SciPy 1.12.0 release notes: ``scipy.sparse.linalg.cg`` and the other iterative solvers take
  ``rtol`` from 1.12 on (``tol`` before).
"""
from __future__ import annotations

import json
import re
import tomllib
from pathlib import Path

import numpy as np
import pytest

import bedflux
from bedflux.outputs.extremes import weighted_percentile
from bedflux.outputs.files import write_summary
from bedflux.report import findings
from bedflux.outputs.summary import build_summary, run_summary

ROOT = Path(__file__).resolve().parents[1]
DAY = 86400.0

# An invented channel 4 m wide with a floodplain on both sides; a pulse floods the floodplain.
FLOOD = {"title": "Small flood over a floodplain (invented)",
         "grid": {"x": [-12, 12], "bottom": -5, "dx": "50 cm", "dz": "20 cm", "growth": 1.15, "dz_max": "1 m"},
         "ground": {"profile": [[-12, 1.0], [-3, 0.8], [-2, 0.0], [2, 0.0], [3, 0.8], [12, 1.0]]},
         "zone": [{"name": "aquifer", "kh": "10 m/d", "kv": "4 m/d", "specific_storage": "1e-4 1/m",
                   "specific_yield": 0.2},
                  {"name": "bed", "kh": "2 m/d", "kv": "1 m/d", "depth": "30 cm", "x": [-3, 3]}],
         "stream": {"pulse": {"base": "0.3 m", "peak": "1.3 m", "start": "2 h", "rise": "4 h", "fall": "8 h"}},
         "sides": {"bottom": {"flux": "1 cm/d"}},
         "time": {"end": "30 h", "step": "30 min", "output_every": "1 h"}}

# An invented gaining channel: base head 1 m above the stage and below the banks (no seepage face),
# no recharge or ET.
GAINING = {"grid": {"x": [0, 20], "bottom": -10, "dx": 0.5, "dz": 0.25},
           "ground": {"profile": [[0, 2.0], [7.5, 2.0], [8, 0.0], [12, 0.0], [12.5, 2.0], [20, 2.0]]},
           "zone": [{"name": "a", "kh": "5 m/d", "kv": "5 m/d"}],
           "stream": {"stage": 0.3, "channel": [8, 12]}, "sides": {"bottom": {"head": 1.3}}}


def strict_loads(text: str):
    def refuse(name):
        raise ValueError(f"not JSON (RFC 8259): {name}")
    return json.loads(text, parse_constant=refuse)


@pytest.fixture(scope="module")
def flood():
    ds = bedflux.simulate(bedflux.Scenario.from_dict(FLOOD))
    s, text, table = build_summary(ds)
    return ds, s, text


# --------------------------------------------------------------------------- weighted percentile

def test_weighted_percentile_with_equal_weights_is_hazen():
    # Hyndman & Fan (1996) definition 5 = numpy "hazen"
    rng = np.random.default_rng(7)
    v = rng.normal(size=37)
    for p in (1.0, 5.0, 37.5, 50.0, 95.0, 99.0):
        assert weighted_percentile(v, np.full(v.size, 0.3), p) == pytest.approx(
            np.percentile(v, p, method="hazen"), rel=1e-12, abs=1e-12)


def test_weighted_percentile_with_integer_weights_is_the_repeated_sample():
    # at the middle of each value's share of the weight, the percentile of the sample that repeats
    # each value as often as its weight (numpy "hazen") is that value, and so is the weighted one
    rng = np.random.default_rng(11)
    v = rng.normal(size=12)
    w = rng.integers(2, 9, size=12)
    sample = np.repeat(v, w)
    order = np.argsort(v)
    before = np.concatenate([[0], np.cumsum(w[order])[:-1]])
    for k, start in zip(order, before):
        p = 100.0 * (start + 0.5 * w[k]) / w.sum()
        assert np.percentile(sample, p, method="hazen") == pytest.approx(v[k], rel=1e-12)
        assert weighted_percentile(v, w.astype(float), p) == pytest.approx(v[k], rel=1e-12)


# --------------------------------------------------------------------------- places of extremes

def test_channel_and_floodplain_are_told_apart(flood):
    ds, s, _ = flood
    # geometry of the invented section: the base stage 0.3 m wets only the channel floor, where the
    # ground is below 0.3 m (|x| < 2.375 m); the 1.3 m peak floods the rest of the section
    x, ground = ds["x"].values, ds["ground"].values
    floor = ground < 0.3
    channel, plain = s["bed"]["channel"], s["bed"]["floodplain"]
    assert channel["length_m"] == pytest.approx(np.diff(ds["x_edge"].values)[floor].sum())
    lo, hi = channel["stretches_m"][0]
    assert lo <= x[floor].min() and hi >= x[floor].max() and len(channel["stretches_m"]) == 1
    assert len(plain["stretches_m"]) == 2   # both banks


def test_each_extreme_has_its_place_and_time(flood):
    ds, s, text = flood
    q = ds["bed_flux"].values
    wet_always = np.isfinite(q).all(axis=0)
    for part, mask in (("channel", wet_always), ("floodplain", np.isfinite(q).any(axis=0) & ~wet_always)):
        qs = np.where(mask[None, :], q, np.nan)
        k, j = np.unravel_index(np.nanargmin(qs), qs.shape)
        lose = s["bed"][part]["losing"]
        assert lose["peak_m_per_s"] == pytest.approx(qs[k, j])
        assert lose["x_m"] == pytest.approx(ds["x"].values[j])
        assert lose["time_s"] == pytest.approx(ds["time"].values[k])
        # the robust figure is beside the extreme and less extreme than it
        assert lose["peak_m_per_s"] <= lose["p05_m_per_s"]
        assert f"strongest downward flux {lose['peak_m_per_s'] * DAY:.3g} m/d at x = {lose['x_m']:.4g} m, " \
               f"t = {lose['time_s'] / 3600:.1f} h" in text
    # the deepest penetration has its place too
    pen = s["bed"]["floodplain"]["penetration"]
    assert pen["depth_m"] > 0 and pen["x_m"] is not None and pen["time_s"] is not None


def test_floodplain_edge_spike_is_seen_as_such(flood):
    # the strongest loss of the floodplain sits in one column at its edge when it first floods; the
    # 5th percentile over the wetted floodplain is far smaller
    _, s, _ = flood
    lose = s["bed"]["floodplain"]["losing"]
    assert abs(lose["p05_m_per_s"]) < 0.2 * abs(lose["peak_m_per_s"])


def test_report_gives_places(flood):
    _, s, _ = flood
    s = strict_loads(json.dumps(s, allow_nan=False))
    f = findings.pulse_finding(s)
    lose = s["bed"]["floodplain"]["losing"]
    assert f"the strongest downward flux is {findings.flux(lose['peak_m_per_s'])} at x = " \
           f"{findings.length(lose['x_m'])}, " \
           f"t = {findings.hours(lose['time_s'])}" in f.text
    assert f"over 95 % of the wetted bed and of the run it stays above {findings.flux(lose['p05_m_per_s'])}" in f.text
    assert "On the floodplain" in f.text and "On the channel bed" in f.text


# --------------------------------------------------------------------------- small lies

def test_a_gaining_reach_has_no_losing_flux():
    ds = bedflux.simulate(bedflux.Scenario.from_dict(GAINING))
    s, text, _ = build_summary(ds)
    assert np.nanmax(ds["bed_flux"].values) > 0 and np.nanmin(ds["bed_flux"].values) > 0  # Darcy: all upward
    assert s["max_losing_flux_m_per_s"] is None
    assert "no losing reach" in text
    assert s["bed"]["channel"]["losing"] is None
    assert "no losing reach" in findings.exchange_finding(strict_loads(json.dumps(s))).text


@pytest.mark.parametrize("case", ["steady stage below the bed", "transient without bank storage"])
def test_summary_json_is_strict_json(tmp_path, case):
    if case.startswith("steady"):
        d = dict(GAINING, stream={"stage": -0.5, "channel": [8, 12]})
    else:
        d = dict(GAINING, time={"end": "2 h", "step": "30 min", "output_every": "1 h"})
        d["zone"] = [{"name": "a", "kh": "5 m/d", "kv": "5 m/d", "specific_storage": "1e-5 1/m", "specific_yield": 0.2}]
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    write_summary(ds, tmp_path)
    data = strict_loads((tmp_path / "summary.json").read_text())
    assert data["exchange_m2_per_s"] is not None


ALONG = {"title": "Reach along the channel (invented)",
         "grid": {"x": [0, 30], "bottom": -3, "dx": "1 m", "dz": "25 cm", "runs": "along"},
         "ground": {"elevation": 0},
         "zone": [{"name": "a", "kh": "5 m/d", "kv": "2 m/d", "specific_storage": "1e-4 1/m", "specific_yield": 0.2}],
         "stream": {"pulse": {"base": "0.3 m", "peak": "0.8 m", "start": "1 h", "rise": "2 h", "fall": "3 h"}},
         "sides": {"bottom": {"head": 0.5}},
         "time": {"end": "10 h", "step": "30 min", "output_every": "1 h"}}


def test_a_section_along_the_channel_never_says_per_metre_of_channel(tmp_path):
    ds = bedflux.simulate(bedflux.Scenario.from_dict(ALONG))
    s, text, table = build_summary(ds)
    s = strict_loads(json.dumps(s))
    wrong = re.compile(r"per metre of channel(?! width)")
    assert s["events"]["bank_storage_volume"] > 0
    assert not wrong.search(text), text
    for f in (findings.exchange_finding(s), findings.pulse_finding(s, table)):
        assert not wrong.search(f.text), f.text
    assert not wrong.search(ds["exchange"].attrs["long_name"])


def test_field_and_model_totals_per_the_same_length():
    # a section along the channel gives m3/d per metre of channel width over its length; the meters'
    # mean flux over the same length, per metre of width, is mean flux x length
    ds = bedflux.simulate(bedflux.Scenario.from_dict({k: v for k, v in ALONG.items() if k != "time"}
                                                     | {"stream": {"stage": 0.3}}))
    s = strict_loads(json.dumps(run_summary(ds)))
    field = {"reach": {"mean_flux [m/s]": 2.0e-6, "per_metre_of_channel [m^2/s]": 9.0e-6, "length [m]": 40.0}}
    text = findings.same_length_sentence(field, s, "reach")
    assert "over the same 30.0 m of channel" in text
    assert f"the meters give {findings.number(2.0e-6 * 30.0 * DAY)} m³/d and the model " \
           f"{findings.number(s['exchange_m2_per_s'] * DAY)} m³/d" in text
    across = dict(s, per_metre_of="channel")
    sentence = findings.same_length_sentence(field, across, "reach")
    assert f"the meters give {findings.number(9.0e-6 * DAY)} m³/d" in sentence


def test_scipy_pin_allows_the_rtol_keyword():
    # the iterative solver passes cg(rtol=...), a keyword of SciPy 1.12 and later (release notes 1.12.0)
    assert re.search(r"\bcg\([^)]*\brtol=", (ROOT / "model/bedflux/section/linear.py").read_text(), re.S)
    deps = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["dependencies"]
    pin = next(d for d in deps if re.match(r"scipy\b", d))
    low = re.search(r">=\s*([0-9.]+)", pin)
    assert low, f"scipy has no lower bound: {pin}"
    assert tuple(int(p) for p in low.group(1).split(".")[:2]) >= (1, 12), pin
