"""Results that should not be believed say so: impossible heads, a stream that may be disconnected,
a stage below the bed.

Sources (docs/references.md, "Sources cited by the tests"):
- Hydraulic head h = z + psi (Freeze & Cherry 1979, ch. 2): a head below the elevation of a point
  is a negative pressure head there; a head below the base of the section is a negative pressure
  everywhere beneath it, which saturated flow cannot have.
- Recharge (here a net outflow) on a strip between fixed heads (Freeze & Cherry 1979, ch. 5, the
  recharge parabola): the head departs from the fixed heads by R x (L - x) / (2 T), at most
  R L^2 / (8 T); this predicts how far below the base the linear model must put the heads.
- Discrete maximum principle: with positive conductances the steady finite-difference solution
  has no interior extremum, so without sources every head lies between the lowest and highest
  head the boundaries hold (e.g. Varga 1962, Matrix Iterative Analysis, M-matrices, from memory).
- A disconnected stream (Brunner et al. 2009, from memory for the details): once the water table
  is far enough below a clogged bed, an unsaturated zone forms beneath the bed and the loss no
  longer grows with the depth of the water table.
"""
from __future__ import annotations

import json

import numpy as np
import pytest

import bedflux
from bedflux.outputs.files import write_summary
from bedflux.outputs.plausibility import impossible_heads, plausibility_warnings
from bedflux.report import findings

DAY = 86400.0

# an invented channel with a clogged bed, the stage 0.3 m above the ground
CHANNEL = {"grid": {"x": [0, 20], "bottom": -20, "dx": 0.5, "dz": 0.25}, "ground": {"elevation": 0},
           "zone": [{"name": "a", "kh": "5 m/d", "kv": "5 m/d"},
                    {"name": "bed", "kh": "0.05 m/d", "kv": "0.05 m/d", "depth": 0.3}],
           "stream": {"stage": 0.3, "channel": [8, 12]}}


def test_conductivity_too_low_for_the_imposed_outflow(tmp_path):
    # -86 mm/d of recharge (a net outflow) through K = 1e-12 m/s
    d = {"grid": {"x": [0, 20], "bottom": -10, "dx": 0.5, "dz": 0.25}, "ground": {"elevation": 0},
         "zone": [{"name": "a", "kh": 1e-12, "kv": 1e-12}],
         "stream": {"stage": 0.3, "channel": [8, 12]}, "recharge": {"rate": "-86 mm/d"}}
    # Freeze & Cherry (1979, ch. 5): a strip 8 m long between the channel and a no-flow side, like
    # half of a 16 m strip between fixed heads, T = K b with b = 10 m: the drop is R L^2 / (8 T)
    drop = 86e-3 / DAY * 16.0 ** 2 / (8 * 1e-12 * 10.0)
    assert drop > 1e6          # far more than the 10 m of the section: impossible
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    s = write_summary(ds, tmp_path)
    assert float(np.nanmin(ds["head"].values)) < -10.0          # the model did put heads below the base
    w = [x for x in s["warnings"] if "physically impossible" in x]
    assert w and "below the base of the section" in w[0] and "conductivity is too low" in w[0]
    assert "WARNING: physically impossible" in (tmp_path / "summary.txt").read_text()
    saved = json.loads((tmp_path / "summary.json").read_text())
    assert any("physically impossible" in x for x in saved["warnings"])
    f = findings.warnings_finding(saved, "run")
    assert f is not None and "Physically impossible heads" in f.text


def test_inflow_that_cannot_leave():
    # 1 cm/d pushed in at the base of a 10 m section of K = 1e-12 m/s: Darcy (Freeze & Cherry 1979,
    # ch. 2) needs a head difference q b / K = 1.2e6 m across it, far more than the section's size
    d = {"grid": {"x": [0, 20], "bottom": -10, "dx": 1.0, "dz": 0.5}, "ground": {"elevation": 0},
         "zone": [{"name": "a", "kh": 1e-12, "kv": 1e-12}],
         "stream": {"stage": 0.3}, "sides": {"bottom": {"flux": "1 cm/d"}}}
    assert 0.01 / DAY * 10.0 / 1e-12 > 1e6
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert float(np.nanmax(ds["head"].values)) > 1e5
    w = impossible_heads(ds)
    assert w and "rises to" in w[0] and "inflow (bottom" in w[0] and "conductivity is too low" in w[0]


def test_ordinary_runs_have_no_warning():
    # the built-in example and a connected losing channel: nothing to flag
    from bedflux.cli import example_path

    ds = bedflux.simulate(bedflux.load(example_path()))
    assert plausibility_warnings(ds) == []
    d = dict(CHANNEL, sides={"left": {"head": 0.1}, "right": {"head": 0.1}})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert np.nanmax(ds["bed_flux"].values) < 0                 # losing
    assert plausibility_warnings(ds) == []


def test_maximum_principle_without_sources():
    d = dict(CHANNEL, sides={"left": {"head": -1.0}, "right": {"head": 0.5}})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    # the boundaries hold -1.0 m (left), 0.3 m (stage), 0 m (exposed ground) and 0.5 m (right)
    assert ds.attrs["prescribed_head_min"] == pytest.approx(-1.0)
    assert ds.attrs["prescribed_head_max"] == pytest.approx(0.5)
    h = ds["head"].values
    assert np.nanmin(h) >= -1.0 - 1e-9 and np.nanmax(h) <= 0.5 + 1e-9   # the solve obeys it
    assert impossible_heads(ds) == []
    bad = ds.copy(deep=True)
    bad["head"].values[30, 10] = 0.9                             # an interior maximum: impossible
    w = impossible_heads(bad)
    assert w and "outside what the boundaries allow" in w[0] and "x = 5.25 m" in w[0]


def test_stream_over_a_deep_water_table_may_be_disconnected(tmp_path):
    # sides hold the water table 8.5 m below the bed; the clogged bed loses
    d = dict(CHANNEL, sides={"left": {"head": -8.5}, "right": {"head": -8.5}})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert np.nanmax(ds["bed_flux"].values) < 0
    s = write_summary(ds, tmp_path)
    w = [x for x in s["warnings"] if "disconnected" in x]
    assert w, s["warnings"]
    assert "saturated flow throughout" in w[0] and "set by its bed" in w[0]
    depth = float(w[0].split("water table about ")[1].split(" m below")[0])
    assert 7.5 < depth < 9.0        # the sides hold it 8.5 m below the ground
    f = findings.warnings_finding(json.loads((tmp_path / "summary.json").read_text()), "run")
    assert "The stream may be disconnected from the aquifer" in f.text


def test_stage_below_the_bed_is_said():
    d = dict(CHANNEL, stream={"stage": -0.5, "channel": [8, 12]}, sides={"left": {"head": -1.0}})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    from bedflux.outputs.summary import build_summary

    s, text, _ = build_summary(ds)
    assert "no bed under water" in text and "(neutral)" not in text
    assert any("below the ground of every column of the channel" in w for w in s["warnings"])
