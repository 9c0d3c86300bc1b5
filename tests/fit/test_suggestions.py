"""The fit's "add a piezometer" suggestion respects what can be installed, as the plan does.

Case: a 5 m column, a 0.4 m bed over the aquifer, the stage on top and a head at the base.
Through layers in series the flux is q = (h_base - stage) / (b / K_bed + (L - b) / K_aquifer)
(Freeze & Cherry 1979, ch. 2, from memory): a metered flux and a gradient inside the bed give
K_bed = q / i, while the aquifer's conductivity and the head at the base enter the data almost
only through q, so the two are nearly inseparable (|r| > 0.95, the warning level of Hill &
Tiedeman 2007, from memory). A head read deep in the aquifer, close to the base, separates them;
a mini-piezometer pushed by hand reaches about 0.3 m (common practice, the plan's default
``max_depth``), which is still inside the bed. The suggestion must therefore say that the deep
piezometer needs a drive point, and name the best instrument within reach by hand.
"""
from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.calibration import fit
from bedflux.planning.candidates import DEFAULT_MAX_DEPTH
from bedflux.forward.sensitivity import Forward, free_parameters


@pytest.fixture(scope="module")
def result():
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -5.0, "dx": 1.0, "dz": 0.1},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 5e-5},
                 {"name": "bed", "kh": 3e-5, "kv": 1e-5, "depth": 0.4}],
        "stream": {"stage": 0.2}, "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": 0.6}}})
    obs = pd.DataFrame({"kind": ["seepage", "vhg", "head"], "x": 0.5, "depth": [0.0, 0.25, 0.7], "time": 0.0,
                        "value": 0.0, "sigma": 1.0})
    fw = Forward(s, obs, free_parameters(s, [{"path": "bed.kv", "low": 1e-8, "high": 1e-3}]))
    d = fw.predict(fw.start())
    obs["sigma"] = [0.05 * abs(d[0]), 0.05 * abs(d[1]), 0.01]
    obs["value"] = d + obs["sigma"].to_numpy() * np.array([0.5, -0.5, 0.3])   # fixed invented scatter
    free = [{"path": "bed.kv", "low": 1e-8, "high": 1e-3, "start": 2e-5},
            {"path": "aquifer.kv", "low": 1e-7, "high": 1e-2, "start": 2e-5},
            {"path": "sides.bottom.head", "low": 0.2, "high": 3.0, "start": 0.8}]
    return fit(s, obs, free)


def test_the_pair_is_reported_correlated(result):
    j, k = result.paths.index("aquifer.kv"), result.paths.index("sides.bottom.head")
    assert abs(result.correlation[j, k]) >= 0.95
    assert result.verdicts["aquifer.kv"].startswith("correlated with sides.bottom.head")


def test_a_deep_piezometer_is_said_to_need_a_drive_point(result):
    text = result.verdicts["aquifer.kv"]
    piezometers = re.findall(r"a piezometer at x = [-0-9.e]+ m, ([0-9.e]+) m below the bed([^;]*)", text)
    assert piezometers, text
    deep = [(float(d), rest) for d, rest in piezometers if float(d) > DEFAULT_MAX_DEPTH]
    assert deep, text                              # the best instrument here is a deep one
    for _, rest in deep:
        assert "drive point" in rest and f"{DEFAULT_MAX_DEPTH:g} m a hand-driven" in rest, text
    by_hand = text.split("within reach by hand, ", 1)[1]
    depth = re.match(r"a (seepage meter|piezometer at x = [-0-9.e]+ m, ([0-9.e]+) m below the bed)", by_hand)
    assert depth is not None and (depth.group(2) is None or float(depth.group(2)) <= DEFAULT_MAX_DEPTH), text
