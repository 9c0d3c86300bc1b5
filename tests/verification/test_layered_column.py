"""Steady vertical flow through beds in series (a 1D column).

Source: Darcy's law for layers in series, q = dh / sum(b_i / K_i) (Freeze & Cherry 1979,
Groundwater, ch. 2, layered formations: the equivalent vertical conductivity of a layered system is
K_v = sum(b_i) / sum(b_i / K_i)). With every layer interface on a cell face the block-centred scheme
with harmonic-mean face conductances reproduces the flux and the piecewise-linear head exactly, so
the comparison is to round-off.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

ROUND_OFF = 1e-10  # relative; the exact discrete solution differs from the analytic one only by round-off


def column(layers, stage, bottom_head, dz, nx=1, leakance=None):
    """A column of ``layers`` = [(name, thickness, kv), ...] from the ground (z = 0) down.

    Stream stage on the top face, ``{head = bottom_head}`` on the base, no-flow sides. Later zones
    override earlier ones, so the layers are written as nested depths from the deepest up.
    """
    total = sum(b for _, b, _ in layers)
    depths = np.cumsum([b for _, b, _ in layers])
    zones = [{"name": layers[-1][0], "kh": 1e-4, "kv": layers[-1][2]}]
    for (name, _, kv), depth in reversed(list(zip(layers[:-1], depths[:-1]))):
        # kh differs from kv on purpose: only kv may matter in a 1D column
        zones.append({"name": name, "kh": 3.0 * kv, "kv": kv, "depth": float(depth)})
    stream = {"stage": stage}
    if leakance is not None:
        stream["leakance"] = leakance
    d = {"grid": {"x": [0.0, float(nx)], "bottom": -total, "dx": 1.0, "dz": dz},
         "ground": {"elevation": 0.0},
         "zone": zones,
         "stream": stream,
         "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": bottom_head}}}
    return bedflux.Scenario.from_dict(d)


def series_flux(layers, stage, bottom_head, leakance=None):
    """q_up = (h_bottom - stage) / (sum b_i / K_i [+ 1 / leakance])   (Freeze & Cherry 1979, ch. 2)."""
    resistance = sum(b / kv for _, b, kv in layers)
    if leakance is not None:
        resistance += 1.0 / leakance  # a bed leakance K'/b' is one more resistance in series
    return (bottom_head - stage) / resistance


def analytic_head(layers, stage, q_up, z, leakance=None):
    """Piecewise-linear head: from the top face down, h falls/rises by q b / K in each layer."""
    top_head = stage + (q_up / leakance if leakance is not None else 0.0)
    h = np.empty_like(z)
    z_top, h_top = 0.0, top_head
    for _, b, kv in layers:
        inside = (z <= z_top) & (z >= z_top - b)
        # upward flux q_up = -kv dh/dz  ->  h(z) = h_top - q_up (z - z_top) / kv
        h[inside] = h_top - q_up * (z[inside] - z_top) / kv
        h_top = h_top + q_up * b / kv
        z_top -= b
    return h


THREE_BEDS = [("bed", 0.5, 2e-7), ("silt", 1.5, 3e-6), ("sand", 1.0, 1e-4)]


@pytest.mark.parametrize("stage, bottom_head", [(0.4, 2.0), (1.2, -0.8)], ids=["gaining", "losing"])
def test_flux_through_beds_in_series(stage, bottom_head):
    # Darcy, layers in series (Freeze & Cherry 1979, ch. 2)
    s = column(THREE_BEDS, stage, bottom_head, dz=0.25)
    r = bedflux.simulate(s)
    q = series_flux(THREE_BEDS, stage, bottom_head)
    assert np.sign(q) == np.sign(bottom_head - stage)  # sign convention: positive upward = gaining
    assert float(r.bed_flux[0]) == pytest.approx(q, rel=ROUND_OFF)
    assert float(r.exchange) == pytest.approx(q * 1.0, rel=ROUND_OFF)  # one column 1 m wide
    # the flux is the same in every cell of the column (continuity)
    np.testing.assert_allclose(r.qz.values[:, 0], q, rtol=ROUND_OFF)
    # head at the cell centres lies on the piecewise-linear profile
    h_exact = analytic_head(THREE_BEDS, stage, q, r.z.values)
    np.testing.assert_allclose(r["head"].values[:, 0], h_exact, rtol=0, atol=ROUND_OFF * abs(bottom_head - stage))


def test_many_thin_beds_fine_cells():
    # five beds over four orders of magnitude of kv, four cells per 0.1 m; same source
    layers = [("clog", 0.1, 1e-8), ("b2", 0.3, 5e-6), ("b3", 0.2, 1e-3), ("b4", 0.6, 2e-5), ("b5", 0.8, 4e-4)]
    s = column(layers, 0.3, 1.7, dz=0.025)
    r = bedflux.simulate(s)
    q = series_flux(layers, 0.3, 1.7)
    assert float(r.bed_flux[0]) == pytest.approx(q, rel=ROUND_OFF)
    np.testing.assert_allclose(r["head"].values[:, 0], analytic_head(layers, 0.3, q, r.z.values),
                               rtol=0, atol=ROUND_OFF * 1.4)


def test_units_in_strings_give_the_same_flux():
    # same column written in m/d; 1 m/d = 1/86400 m/s (references.md section 0)
    layers = [("bed", 0.5, 0.1 / 86400.0), ("sand", 1.5, 10.0 / 86400.0)]
    d = {"grid": {"x": [0, 1], "bottom": "-200 cm", "dx": "1 m", "dz": "25 cm"},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": "10 m/d", "kv": "10 m/d"},
                  {"name": "bed", "kh": "0.1 m/d", "kv": "0.1 m/d", "depth": "50 cm"}],
         "stream": {"stage": "30 cm"},
         "sides": {"bottom": {"head": "1.5 m"}}}
    r = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert float(r.bed_flux[0]) == pytest.approx(series_flux(layers, 0.3, 1.5), rel=ROUND_OFF)


def test_bed_leakance_adds_a_series_resistance():
    # leakance = K'/b' of a skin on the bed: one more resistance 1/leakance in series (Darcy)
    leak = 2e-6  # 1/s
    s = column(THREE_BEDS, 0.4, 2.0, dz=0.25, leakance=leak)
    r = bedflux.simulate(s)
    q = series_flux(THREE_BEDS, 0.4, 2.0, leakance=leak)
    assert float(r.bed_flux[0]) == pytest.approx(q, rel=ROUND_OFF)
    np.testing.assert_allclose(r["head"].values[:, 0], analytic_head(THREE_BEDS, 0.4, q, r.z.values, leak),
                               rtol=0, atol=ROUND_OFF * 1.6)


def test_several_identical_columns_each_carry_the_1d_flux():
    # no-flow sides and uniform layers: the section is 1D, every column carries the series flux
    s = column(THREE_BEDS, 0.4, 2.0, dz=0.25, nx=4)
    r = bedflux.simulate(s)
    q = series_flux(THREE_BEDS, 0.4, 2.0)
    np.testing.assert_allclose(r.bed_flux.values, q, rtol=ROUND_OFF)
    np.testing.assert_allclose(r.qx.values, 0.0, atol=ROUND_OFF * abs(q))
    assert float(r.exchange) == pytest.approx(4.0 * q, rel=ROUND_OFF)
