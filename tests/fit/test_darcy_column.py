"""One unknown vertical conductivity from one metered flux and one gradient: Darcy's law.

Darcy's law for vertical flow, q_up = -K dh/dz = K (h(depth) - stage) / depth = K i
(Darcy 1856; Freeze & Cherry 1979, ch. 2, eq. 2.3, equation number from memory). Pairing a
seepage meter with a mini-piezometer this way is common practice (e.g. Lee & Cherry 1978, from
memory). When the piezometer opening lies
inside the layer whose kv is unknown (here the streambed), the head is linear across that layer,
so the fitted kv must equal q / i built from the two observed numbers alone.

When the opening lies below the layer, the same two numbers give the equivalent conductivity
K_eq = q / i of the layers in series, depth / K_eq = b1 / K_bed + (depth - b1) / K_aquifer
(Freeze & Cherry 1979, ch. 2, layered formations), from which K_bed follows.

The observed values are invented numbers, not model output.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.calibration import fit

STAGE = 0.2
BED = 0.4  # bed thickness (m)
K_AQUIFER = 5e-5
RECOVER = 1e-6


def column(bottom: dict) -> bedflux.Scenario:
    """A 2 m column: a 0.4 m bed over the aquifer, the stage on the top face (no leakance)."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": K_AQUIFER},
                 {"name": "bed", "kh": 3e-5, "kv": 1e-5, "depth": BED}],
        "stream": {"stage": STAGE},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": bottom}})


def table(q: float, i: float, depth: float) -> pd.DataFrame:
    return pd.DataFrame({"kind": ["seepage", "vhg"], "x": [0.5, 0.5], "depth": [0.0, depth], "time": 0.0,
                         "value": [q, i], "sigma": [abs(q) * 0.1, abs(i) * 0.1]})


KV_FREE = {"path": "bed.kv", "low": 1e-9, "high": 1e-2, "start": 1e-4}


@pytest.mark.parametrize("q, i", [(2e-6, 0.25), (-3e-6, -0.6)], ids=["gaining", "losing"])
def test_kv_is_flux_over_gradient_with_unknown_driving_head(q, i):
    # two data (a metered flux and a gradient inside the bed), two unknowns (bed kv and the head at
    # the base that drives the flow): the fit is exact and kv = q / i (Darcy)
    depth = 0.375  # a cell centre inside the 0.4 m bed
    free = [KV_FREE, {"path": "sides.bottom.head", "low": -3.0, "high": 3.0, "start": 0.6}]
    res = fit(column({"head": 0.6}), table(q, i, depth), free)
    assert res.best["bed.kv"] == pytest.approx(q / i, rel=RECOVER)
    # the base head is the one that passes q through both layers in series (Freeze & Cherry 1979)
    h_base = STAGE + q * (BED / (q / i) + (2.0 - BED) / K_AQUIFER)
    assert res.best["sides.bottom.head"] == pytest.approx(h_base, rel=RECOVER)
    np.testing.assert_allclose(res.residuals["residual"], 0.0, atol=1e-9 * abs(i))


@pytest.mark.parametrize("q, i", [(2e-6, 0.25), (-3e-6, -0.6)], ids=["gaining", "losing"])
def test_single_kv_from_metered_flux_through_the_base(q, i):
    # one unknown: the flux is imposed at the base (equal to the metered flux), the bed kv alone
    # sets the gradient; both observations are fitted and kv = q / i
    res = fit(column({"flux": q}), table(q, i, 0.225), [KV_FREE])
    assert res.best["bed.kv"] == pytest.approx(q / i, rel=RECOVER)
    seep = res.residuals[res.residuals["kind"] == "seepage"]
    assert float(seep["simulated"].iloc[0]) == pytest.approx(q, rel=1e-9)  # continuity


def test_gradient_across_two_layers_gives_the_series_value():
    # opening 0.975 m deep, below the 0.4 m bed: q / i is the equivalent conductivity of bed and
    # aquifer in series (Freeze & Cherry 1979, ch. 2); the fitted bed kv is the one that makes it so
    q, i, depth = 2e-6, 0.25, 0.975
    res = fit(column({"flux": q}), table(q, i, depth), [KV_FREE])
    k_eq = q / i
    kv_bed = BED / (depth / k_eq - (depth - BED) / K_AQUIFER)
    assert res.best["bed.kv"] == pytest.approx(kv_bed, rel=RECOVER)
    assert abs(res.best["bed.kv"] - k_eq) > 0.05 * k_eq  # and it is not the naive value
