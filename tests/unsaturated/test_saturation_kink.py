"""Newton at the kink of Mualem's Kr at saturation (van Genuchten n < 2).

For n < 2 the Mualem-van Genuchten Kr behaves as ``1 - c |psi|^(n-1)`` near saturation, so
dKr/dpsi is unbounded as psi -> 0- (Ippisch, Vogel & Bastian 2006, sec. 2) while it is zero for
psi >= 0. A cell whose root lies within round-off of psi = 0 sends Newton back and forth across
the kink: the residual cannot fall to the tolerance, although the step's water budget closes.
The published class means of loam and loamy sand (Carsel & Parrish 1988, from memory) have
n < 2, so such cells are common on a water table.
"""
from __future__ import annotations

import copy

import numpy as np
import pytest

import bedflux
from bedflux.section.discretisation import discretise
from bedflux.section.richards_run import run_variably_saturated

# a stage pulse under a bank (the transient calibration case of test_calibration.py) with the
# values a fit of that bank reached, n = 1.58: the steady start leaves a cell at psi = -4e-14,
# where the first step's Newton iteration stalls at 1.6e-8 of the throughput
BANK = {
    "grid": {"x": [0.0, 8.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
    "ground": {"profile": [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]},
    "zone": [{"name": "aquifer", "kh": 1.012791205995661e-05, "kv": 3.8004069620891114e-06,
              "specific_storage": 1e-4,
              "retention": {"model": "van-genuchten", "alpha": 3.6601142666561626, "n": 1.5827343109218872,
                            "residual": 0.057, "saturated": 0.41}}],
    "stream": {"pulse": {"base": 0.05, "peak": 0.2, "start": "1 h", "rise": "2 h", "fall": "3 h"},
               "channel": [0.0, 2.0], "leakance": 2e-5},
    "sides": {"right": {"head": 0.2}},
    "recharge": {"rate": "40 mm/d"},
    "time": {"end": "8 h", "step": "20 min", "output_every": "4 h"},
}


def run(n: float):
    d = copy.deepcopy(BANK)
    d["zone"][0]["retention"]["n"] = n
    return run_variably_saturated(discretise(bedflux.Scenario.from_dict(d)))


@pytest.fixture(scope="module")
def kinked():
    return run(BANK["zone"][0]["retention"]["n"])


def test_no_step_fails_at_the_kink(kinked):
    # Newton's stall at the kink is recognised (the step's budget closes): no step is cut
    assert kinked.attrs["failed_steps"] == 0
    # and the run takes no more steps than the same bank with a smooth Kr (n = 2.5)
    assert kinked.attrs["steps"] <= run(2.5).attrs["steps"]


def test_the_accepted_steps_close_their_budget(kinked):
    # mass balance per step to 1e-8 relative with direct solves (the project's target)
    assert np.max(np.abs(kinked["step_closure"].values)) < 1e-8
    assert np.max(np.abs(kinked["budget_closure"].values)) < 1e-8
