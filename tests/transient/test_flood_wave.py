"""The flood wave is given by its height, the peak rise of the stage above base, or by
Cooper & Rorabaugh's N0 (``amplitude``).

Sources:
- Cooper & Rorabaugh (1963), USGS Water-Supply Paper 1536-J, hydrograph
  H(t) = N0 exp(-delta t)(1 - cos(omega t)) for 0 <= t <= tau, omega = 2 pi / tau (the form is from
  memory, references.md 6.5 [M]); with delta = 0 it peaks at 2 N0 at tau / 2, and in general at
  t_p = (2 / omega) arctan(omega / delta) (references.md 6.5 [D]: delta / omega = 0.5 gives
  t_p = 0.35242 tau, delta / omega = 1 gives 0.25 tau).
- Flooded width: the ground is piecewise linear, so the width below a level follows from similar
  triangles (geometry).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.outputs.summary import run_summary, run_summary_text

DAY = 86400.0
TAU = 4 * DAY
BASE, RISE = 0.2, 0.6


def wave(decay="0 1/d", **extra):
    fw = {"base": BASE, "peak_rise": RISE, "duration": TAU, "decay": decay, "start": "1 d"}
    fw.update(extra)
    return fw


def cooper_rorabaugh(t, n0, delta, start=DAY):
    """The published hydrograph with Cooper & Rorabaugh's N0."""
    s = np.asarray(t, dtype=float) - start
    inside = (s >= 0) & (s <= TAU)
    sc = np.clip(s, 0.0, TAU)
    return BASE + np.where(inside, n0 * np.exp(-delta * sc) * (1 - np.cos(2 * np.pi * sc / TAU)), 0.0)


def stage_of(fw, **time):
    d = {"grid": {"x": [0.0, 10.0], "bottom": -5.0, "dx": 1.0, "dz": 1.0},
         "ground": {"profile": [[0.0, 1.0], [4.0, 0.0], [6.0, 0.0], [10.0, 1.0]]},
         "zone": [{"name": "a", "kh": 1e-4}],
         "stream": {"flood_wave": fw}}
    if time:
        d["time"] = time
    return bedflux.Scenario.from_dict(d)


def test_without_decay_the_stage_rises_by_peak_rise_at_half_the_duration():
    s = stage_of(wave())
    t = DAY + np.linspace(0.0, TAU, 4001)
    # delta = 0: the peak 2 N0 lies at tau / 2, so N0 = RISE / 2 (Cooper & Rorabaugh 1963)
    np.testing.assert_allclose(s.stream.stage(t), cooper_rorabaugh(t, RISE / 2, 0.0), atol=1e-12)
    assert s.stream.stage(DAY + TAU / 2) == pytest.approx(BASE + RISE, abs=1e-12)
    assert s.stream.stage(t).max() == pytest.approx(BASE + RISE, abs=1e-12)


@pytest.mark.parametrize("ratio, tp", [(0.5, 0.35242), (1.0, 0.25)])
def test_with_decay_the_peak_is_still_the_peak_rise(ratio, tp):
    omega = 2 * np.pi / TAU
    delta = ratio * omega
    s = stage_of(wave(decay=delta))
    t = DAY + np.linspace(0.0, TAU, 200001)
    v = s.stream.stage(t)
    # the peak at t_p = (2 / omega) arctan(omega / delta) (references.md 6.5 [D]) ...
    assert (t[np.argmax(v)] - DAY) / TAU == pytest.approx(tp, abs=1e-4)
    # ... is the rise given, and the shape is the published one with the N0 that gives it
    assert v.max() == pytest.approx(BASE + RISE, abs=1e-9)
    n0 = RISE / (np.exp(-delta * tp * TAU) * (1 - np.cos(2 * np.pi * tp)))
    np.testing.assert_allclose(v, cooper_rorabaugh(t, n0, delta), rtol=0, atol=5e-5 * RISE)


@pytest.mark.parametrize("ratio", [0.0, 0.5, 1.0])
def test_amplitude_is_cooper_and_rorabaughs_n0(ratio):
    # the contract's key (shared design.md): amplitude = N0 of the published hydrograph
    delta = ratio * 2 * np.pi / TAU
    fw = {"base": BASE, "amplitude": 0.3, "duration": TAU, "decay": delta, "start": "1 d"}
    t = DAY + np.linspace(-0.1 * TAU, 1.1 * TAU, 20001)
    np.testing.assert_allclose(stage_of(fw).stream.stage(t), cooper_rorabaugh(t, 0.3, delta), atol=1e-12)


@pytest.mark.parametrize("keys", [("peak_rise", "amplitude"), ()])
def test_the_height_is_given_once(keys):
    fw = {"base": BASE, "duration": TAU, "decay": "0 1/d", **{k: 0.3 for k in keys}}
    with pytest.raises(bedflux.InputError, match="peak_rise") as err:
        stage_of(fw)
    assert "flood_wave" in str(err.value) and "amplitude" in str(err.value)


def test_summary_gives_peak_stage_its_time_and_the_flooded_width():
    # V-shaped channel: ground 0 m over x = 4..6 m, banks rising 1 m over 4 m on each side; at the
    # peak stage 0.8 m the water covers 2 m + 2 x (0.8 / 1 x 4 m) = 8.4 m (similar triangles)
    s = stage_of(wave(), end="3 d", step="1 h", output_every="7 h")
    ds = bedflux.simulate(s)
    summary = run_summary(ds)
    assert summary["peak_stage_m"] == pytest.approx(BASE + RISE, abs=1e-12)
    assert summary["peak_stage_time_s"] == pytest.approx(DAY + TAU / 2, abs=1e-6)   # 3 d: not an output time
    assert summary["flooded_width_m"] == pytest.approx(2.0 + 2 * (BASE + RISE) * 4.0, abs=1e-9)
    text = run_summary_text(summary)
    assert "peak stage: 0.8 m at t = 72 h" in text and "8.4 m wide" in text
