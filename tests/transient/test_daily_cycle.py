"""The daily cycle of riparian uptake: integrated over each step, on the run's clock.

Sources:
- Shape: a half-sine between sunrise (06:00) and sunset (18:00), zero at night, peaking at solar
  noon, scaled so that its daily mean is the given daily rate: the usual sinusoidal daytime
  distribution of daily evapotranspiration (common practice: daytime radiation, and with it transpiration, follows roughly a sine between
  sunrise and sunset, Campbell & Norman 1998, An Introduction to Environmental Biophysics, ch. 11;
  from memory). Its integrals are computed here independently in closed form:
      integral of pi sin(pi (tau - 6 h) / 12 h) over [a, b] (clipped to [6 h, 18 h])
          = (12 h) (cos(pi (a - 6 h) / 12 h) - cos(pi (b - 6 h) / 12 h)),
  and its integral over a whole day is 24 h, i.e. a daily mean of 1 (references.md 8 for the
  extinction-depth function ET = rate (1 - d / d_x)).
- Linear extinction-depth function (common practice, references.md 8): with the water table 1 m
  deep and d_x = 2 m, ET = rate / 2.

The section: a very permeable aquifer (K = 1e-2 m/s) between two fixed side heads 1 m below the
ground, so the uptake of 2.5 mm/d moves the water table by about 1e-6 m and ET stays within about
1e-6 of rate / 2 (tolerance 1e-4 of the daily volume, fixed before running).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

DAY = 86400.0
HOUR = 3600.0
RATE = 5e-3 / DAY          # 5 mm/d
WIDTH = 10.0               # m of riparian ground (10 columns of 1 m)
DEPTH, EXT = 1.0, 2.0      # water table depth, extinction depth (m)
ET_DAY = RATE * (1.0 - DEPTH / EXT) * WIDTH * DAY     # m3 per metre of section per day


def cycle_integral(a, b):
    """Integral (s) of the daily cycle between clock times a and b (s after one midnight, a <= b)."""
    def cumulative(c):
        days, tau = np.divmod(c, DAY)
        tau = np.clip(tau, 6 * HOUR, 18 * HOUR)
        return days * DAY + 12 * HOUR * (1.0 - np.cos(np.pi * (tau - 6 * HOUR) / (12 * HOUR)))
    return cumulative(b) - cumulative(a)


def strip(step, end="3 d", start=None, **extra):
    time = {"end": end, "step": step, "output_every": step}
    if start is not None:
        time["start"] = start
    d = {"grid": {"x": [0.0, WIDTH], "bottom": -10.0, "dx": 1.0, "dz": 0.5},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "aquifer", "kh": 1e-2, "specific_storage": 1e-5, "specific_yield": 0.2}],
         "sides": {"left": {"head": -DEPTH}, "right": {"head": -DEPTH}},
         "riparian": [{"x": [0.0, WIDTH], "max_rate": RATE, "extinction_depth": EXT, "daily_cycle": True}],
         "time": time}
    d.update(extra)
    return bedflux.simulate(bedflux.Scenario.from_dict(d))


def et_rates(ds):
    """ET out of the aquifer (m2/s): the mean over the step that ends at each output."""
    return ds["outflow"].sel(term="evapotranspiration").values


def test_reference_integral_has_a_daily_mean_of_one():
    assert cycle_integral(0.0, DAY) == pytest.approx(DAY, rel=1e-15)
    assert cycle_integral(12 * HOUR, 18 * HOUR) / (6 * HOUR) == pytest.approx(2.0, rel=1e-15)


@pytest.mark.parametrize("step_h", [2, 6, 24])
@pytest.mark.parametrize("start", [None, "2024-06-01T03:00"])
def test_daily_volume_does_not_depend_on_the_step(step_h, start):
    step = step_h * HOUR
    ds = strip(step, start=start)
    t = ds["time"].values
    day2 = (t > DAY + 1.0) & (t <= 2 * DAY + 1.0)       # the steps that make up the second day
    volume = float(np.sum(et_rates(ds)[day2]) * step)
    assert volume == pytest.approx(ET_DAY, rel=1e-4), f"step {step_h} h: {volume:.6g} vs {ET_DAY:.6g}"


def test_each_step_takes_the_mean_of_the_cycle_over_the_step():
    # 90-minute steps from 03:00: every step's uptake is the cycle's mean over that step
    ds = strip(1.5 * HOUR, end="1 d", start="2024-06-01T03:00:00")
    t = ds["time"].values
    clock0 = 3 * HOUR
    expected = np.array([RATE * (1 - DEPTH / EXT) * WIDTH * cycle_integral(clock0 + a, clock0 + b) / (b - a)
                         for a, b in zip(t[:-1], t[1:])])
    np.testing.assert_allclose(et_rates(ds)[1:], expected, rtol=1e-4, atol=1e-6 * expected.max())


def test_start_sets_the_clock():
    # from noon, the first 6 h step (12:00-18:00) takes twice the daily mean rate; from midnight none
    noon = strip(6 * HOUR, end="1 d", start="2024-06-01T12:00")
    night = strip(6 * HOUR, end="1 d")
    assert et_rates(noon)[1] == pytest.approx(2.0 * ET_DAY / DAY, rel=1e-4)
    assert et_rates(night)[1] == 0.0
    assert noon.attrs.get("start") == "2024-06-01T12:00:00"


def test_start_must_be_a_local_date_time():
    for bad in ("noon", "2024-06-01T12:00+02:00", 12):
        with pytest.raises(bedflux.InputError, match=r"\[time\] start"):
            strip(6 * HOUR, end="1 d", start=bad)


# ------------------------------------------------------------------ date-time series on the clock

def write_series(path, first, values, name="stage [m]"):
    stamps = np.datetime64(first) + np.arange(len(values)) * np.timedelta64(1, "h")
    path.write_text(f"datetime,{name}\n" + "".join(f"{str(s).replace('T', ' ')},{v}\n"
                                                  for s, v in zip(stamps, values)))


def bank(tmp_path, start=None, head_first=None):
    """A one-layer bank: a stage series from 2024-06-01 00:00 at the left side, optionally a
    side-head series at the right; stage(hour k) = 0.5 + 0.01 k, head(hour k) = 0.2 + 0.01 k."""
    write_series(tmp_path / "stage.csv", "2024-06-01T00:00", [0.5 + 0.01 * k for k in range(60)])
    d = {"grid": {"x": [0.0, 20.0], "bottom": -5.0, "dx": 1.0, "dz": 5.0},
         "ground": {"elevation": 2.0},
         "zone": [{"name": "aquifer", "kh": 1e-4}],
         "stream": {"stage_csv": "stage.csv", "channel": [-10.0, -5.0]},
         "sides": {"left": "stream"},
         "time": {"end": "12 h", "step": "1 h"}}
    if start is not None:
        d["time"]["start"] = start
    if head_first is not None:
        write_series(tmp_path / "head.csv", head_first, [0.2 + 0.01 * k for k in range(60)], "head [m]")
        d["sides"]["right"] = {"head_csv": "head.csv"}
    return bedflux.Scenario.from_dict(d, base_dir=tmp_path)


def test_stage_series_is_aligned_to_start(tmp_path):
    s = bank(tmp_path, start="2024-06-01T06:00")
    assert s.stream.stage(0.0) == pytest.approx(0.56, abs=1e-12)      # the row of 06:00
    assert s.stream.stage(2 * HOUR) == pytest.approx(0.58, abs=1e-12)


def test_without_start_the_stage_series_sets_the_clock(tmp_path):
    s = bank(tmp_path)
    assert s.stream.stage(0.0) == pytest.approx(0.50, abs=1e-12)
    assert s.time.clock0 == 0.0                                        # its first row, 00:00


def test_side_head_series_follows_the_same_clock(tmp_path):
    # the head series starts 2 h before the stage series: at t = 0 (00:00) it reads its row of 00:00
    s = bank(tmp_path, head_first="2024-05-31T22:00")
    assert s.right.signal(0.0) == pytest.approx(0.22, abs=1e-12)


def test_start_before_the_series_is_refused_with_the_clock(tmp_path):
    with pytest.raises(bedflux.InputError, match="t = 0 is 2024-05-31T23:00:00"):
        bank(tmp_path, start="2024-05-31T23:00")
