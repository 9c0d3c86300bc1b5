"""A planning target on the median residence time of stream water in the bed.

Darcy's law [P]: in a homogeneous bed with heads fixed on its boundaries, the head field does not
depend on the conductivity K, so the pore velocity ``-K grad h / n`` scales with K and every
residence time with 1/K. Raising kh and kv together by a factor c divides the median residence
time by c: the gradient of the target with respect to log10 kh and log10 kv must sum to
``-ln(10) T`` (Elliott & Brooks 1997 bedform pumping as the flow, references.md section 5).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.errors import InputError
from bedflux.flowpaths.hyporheic import median_residence_time
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.planning.targets import parse_target, prediction, target_gradient


def dunes():
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 0.6], "bottom": -0.15, "dx": 0.02, "dz": 0.01},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 4e-4, "kv": 2e-4}],
        "stream": {"stage": 0.25, "bedform": {"amplitude": 0.01, "wavelength": 0.6}},
        "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}})


FREE = [{"path": "sand.kh", "low": 1e-6, "high": 1e-2}, {"path": "sand.kv", "low": 1e-6, "high": 1e-2}]


@pytest.fixture(scope="module")
def forward():
    s = dunes()
    obs = pd.DataFrame({"kind": ["head"], "x": [0.3], "depth": [0.05], "time": [np.nan], "value": [0.25],
                        "sigma": [0.001]})
    return Forward(s, obs, free_parameters(s, FREE))


def test_the_target_reads_the_median_of_the_runs_flow_paths(forward):
    t = parse_target("residence_time", ["sand.kh", "sand.kv"])
    value = prediction(forward, t, forward.start())
    assert value == pytest.approx(median_residence_time(bedflux.flowpaths(dunes())), rel=1e-12)
    under = parse_target("residence_time:0.0:0.1", ["sand.kh", "sand.kv"])
    assert under.x_range == (0.0, 0.1)
    assert prediction(forward, under, forward.start()) != pytest.approx(value, rel=1e-3)


def test_residence_time_scales_with_one_over_conductivity(forward):
    t = parse_target("residence_time", ["sand.kh", "sand.kv"])
    g, value = target_gradient(forward, t, forward.start())
    assert (g[0] + g[1]) / value == pytest.approx(-math.log(10.0), rel=1e-5)  # central differences: 2e-7 when written
    assert g[0] < 0 and g[1] < 0


def test_bad_residence_targets_are_refused():
    for text in ("residence_time:1", "residence_time:2:1", "residence_time:a:b"):
        with pytest.raises(InputError, match="residence_time:A:B"):
            parse_target(text, ["sand.kh"])
