"""Detectability of a reversal under a flood pulse.

Checks (consistency and limits that can fail):
- with a zero detection floor the seepage-meter duration equals the reversal duration that the
  exchange-event analysis finds at the same column (two independent codes on one result);
- a coarser reading resolution can only shorten the detectable time, and a resolution above the
  largest head difference leaves nothing detectable (definition of a reading resolution);
- the piezometer reversal happens while the stage stands above the head at the opening (Darcy's
  law across the bed: flow is downward exactly then; common practice of mini-piezometer work).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.events import exchange_events
from bedflux.plan.detect import detectability, head_at_depth


@pytest.fixture(scope="module")
def pulse_column():
    return bedflux.simulate(bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -4.0, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 5e-5, "kv": 2e-5, "ss": 2e-4}],
        "stream": {"pulse": {"base": 0.3, "peak": 0.9, "start": "2 h", "rise": "3 h", "fall": "4 h"}},
        "sides": {"bottom": {"head": 0.45}},
        "time": {"end": "1 d", "step": "5 min", "output_every": "10 min"},
    }))


def test_seepage_duration_matches_event_analysis(pulse_column):
    piezo, seep = detectability(pulse_column, np.array([0.1, 0.3]), 1e-12, 0.0)
    table, _ = exchange_events(pulse_column)
    assert seep["detectable_duration"].iloc[0] == pytest.approx(table["reversed_duration"].iloc[0],
                                                                rel=0.02, abs=600.0)
    assert seep["detectable_duration"].iloc[0] > 3600.0


def test_resolution_limits(pulse_column):
    depths = np.array([0.1, 0.2, 0.3])
    fine, _ = detectability(pulse_column, depths, 1e-6)
    coarse, _ = detectability(pulse_column, depths, 5e-3)
    assert np.all(coarse["detectable_duration"].to_numpy() <= fine["detectable_duration"].to_numpy() + 1e-9)
    h = head_at_depth(pulse_column, depths)
    biggest = float(np.nanmax(np.abs(h[:, :, 0] - pulse_column["stage"].values[:, None])))
    none, _ = detectability(pulse_column, depths, 1.01 * biggest)
    assert np.all(none["detectable_duration"] == 0.0)


def test_piezometer_reversal_while_stage_above_head(pulse_column):
    depths = np.array([0.3])
    piezo, _ = detectability(pulse_column, depths, 1e-9)
    h = head_at_depth(pulse_column, depths)[:, 0, 0]
    stage = pulse_column["stage"].values
    t = pulse_column["time"].values
    above = stage > h
    assert h[0] > stage[0]                              # gaining at the start
    row = piezo.iloc[0]
    assert row["first_time"] == pytest.approx(t[np.argmax(above)])
    assert row["last_time"] == pytest.approx(t[len(t) - 1 - np.argmax(above[::-1])])
