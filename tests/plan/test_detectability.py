"""Detectability of a reversal under a flood pulse, against Darcy's law in a quasi-steady column.

The column is 4 m of uniform sand, the stage on top and a head of 0.45 m at the base. Its
diffusion time L^2 Ss / K = 16 * 1e-7 / 2e-5 = 0.08 s is tiny against the 5 min steps, so at every
output time the head is the steady, linear profile between the stage and the base head (Darcy's
law in a uniform layer; Freeze & Cherry 1979, ch. 2, from memory):

    h(d, t) = stage(t) + (h_base - stage(t)) d / L,    q(t) = K (h_base - stage(t)) / L.

A manometer on a piezometer open at depth d reads h - stage = (h_base - stage) d / L: it shows
the reversal (downward flow) while the stage stands above h_base + resolution L / d, and a seepage
meter while the stage stands above h_base + floor L / K. The stage is the pulse as the scenario
defines it (docs/scenario.md, [stream.pulse]): base 0.3 m before 2 h, a raised-cosine rise to the
0.9 m peak over 3 h, then an exponential recession with a 4 h time constant; so the crossing times
of a level theta are, on the rise and on the recession,

    s1 = (rise / pi) arccos(1 - 2 (theta - base) / (peak - base)),
    s2 = rise + fall ln((peak - base) / (theta - base))            (s counted from the start).

The durations come from the output times (10 min apart), so they may differ from s2 - s1 by up to
one output interval; the first and last reading times lie within one output interval after the
crossing and before the end of it. Also checked: with a zero detection floor the seepage-meter
duration equals the reversal duration that the exchange-event analysis finds (two independent
codes on one result).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

import bedflux
from bedflux.section.events import exchange_events
from bedflux.planning.detect import detectability

BASE, PEAK, START, RISE, FALL = 0.3, 0.9, 2 * 3600.0, 3 * 3600.0, 4 * 3600.0
H_BASE, L, K = 0.45, 4.0, 2e-5
OUTPUT = 600.0


@pytest.fixture(scope="module")
def pulse_column():
    return bedflux.simulate(bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -L, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 5e-5, "kv": K, "specific_storage": 1e-7}],
        "stream": {"pulse": {"base": BASE, "peak": PEAK, "start": "2 h", "rise": "3 h", "fall": "4 h"}},
        "sides": {"bottom": {"head": H_BASE}},
        "time": {"end": "1 d", "step": "5 min", "output_every": "10 min"},
    }))


def crossing(theta: float) -> tuple[float, float]:
    """Times (s since t = 0) when the pulse rises through and falls back through ``theta``."""
    a = (theta - BASE) / (PEAK - BASE)
    return START + RISE / math.pi * math.acos(1.0 - 2.0 * a), START + RISE + FALL * math.log(1.0 / a)


@pytest.mark.parametrize("depth, resolution", [(0.3, 1e-3), (0.1, 1e-3), (0.3, 5e-3)])
def test_piezometer_reversal_follows_darcy(pulse_column, depth, resolution):
    piezo, _ = detectability(pulse_column, np.array([depth]), resolution)
    row = piezo.iloc[0]
    on, off = crossing(H_BASE + resolution * L / depth)
    assert row["initial_head_difference"] == pytest.approx((H_BASE - BASE) * depth / L, abs=1e-6)
    assert abs(row["detectable_duration"] - (off - on)) <= OUTPUT
    assert on <= row["first_time"] < on + OUTPUT
    assert off - OUTPUT < row["last_time"] <= off


def test_seepage_meter_reversal_follows_darcy(pulse_column):
    floor = 0.01 / 86400.0
    _, seep = detectability(pulse_column, np.array([0.3]), 1e-3, floor)
    row = seep.iloc[0]
    on, off = crossing(H_BASE + floor * L / K)
    assert row["initial_flux"] == pytest.approx(K * (H_BASE - BASE) / L, rel=1e-6)
    assert abs(row["detectable_duration"] - (off - on)) <= OUTPUT
    assert on <= row["first_time"] < on + OUTPUT


def test_resolution_limits(pulse_column):
    # the largest head difference over the run is at the peak (an output time): (peak - h_base) d / L
    depths = np.array([0.1, 0.2, 0.3])
    biggest = (PEAK - H_BASE) * depths.max() / L
    none, _ = detectability(pulse_column, depths, 1.01 * biggest)
    assert np.all(none["detectable_duration"] == 0.0)
    some, _ = detectability(pulse_column, depths, 0.99 * biggest)
    assert some.loc[some["depth"] == 0.3, "detectable_duration"].iloc[0] > 0.0
    fine, _ = detectability(pulse_column, depths, 1e-6)
    coarse, _ = detectability(pulse_column, depths, 5e-3)
    assert np.all(coarse["detectable_duration"].to_numpy() <= fine["detectable_duration"].to_numpy() + 1e-9)


def test_seepage_duration_matches_event_analysis(pulse_column):
    _, seep = detectability(pulse_column, np.array([0.1, 0.3]), 1e-12, 0.0)
    table, _ = exchange_events(pulse_column)
    assert seep["detectable_duration"].iloc[0] == pytest.approx(table["reversed_duration"].iloc[0],
                                                                rel=0.02, abs=OUTPUT)
    on, off = crossing(H_BASE)
    assert abs(seep["detectable_duration"].iloc[0] - (off - on)) <= OUTPUT
