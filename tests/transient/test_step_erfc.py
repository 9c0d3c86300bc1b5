"""Step rise of stream stage over a deep 1D streambed column.

Source: Carslaw & Jaeger (1959), Conduction of Heat in Solids, semi-infinite solid with a sudden
change of surface value (the "erfc" solution; references.md section 6.1, which reads it from
Bakker & Post 2022, ch. 5; the Carslaw & Jaeger citation details are from memory):

    h(d, t) - h0 = dh * erfc(d / (2 sqrt(D t))),   D = kv / ss,   d = depth below the bed
    bed flux (positive upward) = -kv dh / sqrt(pi D t)
    water taken into storage per unit bed area = 2 dh sqrt(kv ss t / pi)

The column is 40 m deep; at the latest time checked sqrt(D t) = 6 m, so the no-flow base (an image
source at twice the depth) changes the solution by at most 2 erfc(40 / 12) < 4e-6 of dh.

Tolerances are truncation-error estimates fixed before running:
- backward Euler is first order in time: relative flux error and head error (as a fraction of
  dh) at most dt / t (the leading term of its lag is dt / 2 on a t^-1/2 signal, i.e. dt / (4 t));
- Crank-Nicolson is second order: 5e-4 of dh (or relative), which covers (dt/t)^2 = 3e-4 at the
  earliest time and the spatial error (dz / sqrt(D t))^2 = 7e-5 with a margin.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.special import erfc

import bedflux

KV = 1e-5          # m/s
SS = 1e-3          # 1/m
D = KV / SS        # m^2/s
GROUND = 100.0     # bed surface elevation (m)
H0 = 100.0         # initial head everywhere (m)
DH = 0.5           # stage step (m)
DZ = 0.02
DT = 10.0          # s
CHECK_TIMES = (600.0, 1800.0, 3600.0)


def step_head(depth, t, dh=DH):
    """Carslaw & Jaeger (1959): dh erfc(d / (2 sqrt(D t)))."""
    return dh * erfc(depth / (2.0 * np.sqrt(D * t)))


def step_flux(t, dh=DH):
    """Carslaw & Jaeger (1959): surface flux kv dh / sqrt(pi D t), downward (so negative upward)."""
    return -KV * dh / np.sqrt(np.pi * D * t)


def step_volume(t, dh=DH):
    """Integral of ss (h - h0) over depth: 2 dh sqrt(kv ss t / pi) (references.md 6.1, V(t))."""
    return 2.0 * dh * np.sqrt(KV * SS * t / np.pi)


def test_reference_formulas_reproduce_the_worked_examples():
    # references.md 6.1a-d (Bakker & Post 2022 prints u and h; [C]/[D]): T = 100 m2/d, S = 0.2,
    # H0 = 2 m, x = 100 m, t = 10 d.  The functions above with D = T/S must give the same numbers.
    T, S, H, x, t = 100.0, 0.2, 2.0, 100.0, 10.0   # in m and d
    u = x / (2.0 * np.sqrt(T / S * t))
    assert u == pytest.approx(0.707107, rel=1e-6)
    assert H * erfc(u) == pytest.approx(0.634621, rel=1e-6)
    assert H * np.sqrt(T * S / (np.pi * t)) == pytest.approx(1.595769, rel=1e-6)   # Q(0, 10 d)
    assert 2.0 * H * np.sqrt(S * T * t / np.pi) == pytest.approx(31.915382, rel=1e-6)  # V(10 d)


def run(scheme):
    d = {"grid": {"x": [0.0, 1.0], "bottom": GROUND - 40.0, "dx": 1.0, "dz": DZ},
         "ground": {"elevation": GROUND},
         "zone": [{"name": "sand", "kh": 3 * KV, "kv": KV, "specific_storage": SS, "specific_yield": 0.2}],
         "stream": {"stage": H0 + DH},
         "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"},
         "time": {"end": "1 h", "step": DT, "output_every": "10 min", "scheme": scheme},
         "initial": {"head": H0}}
    return bedflux.simulate(bedflux.Scenario.from_dict(d))


@pytest.fixture(scope="module", params=["backward-euler", "crank-nicolson"])
def result(request):
    return request.param, run(request.param)


def tolerance(scheme, t):
    return DT / t if scheme == "backward-euler" else 5e-4


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_head_follows_erfc(result, t):
    scheme, ds = result
    h = ds["head"].sel(time=t).values[:, 0]
    depth = GROUND - ds.z.values
    err = np.max(np.abs((h - H0) - step_head(depth, t)))
    # Carslaw & Jaeger (1959) erfc step response
    assert err <= tolerance(scheme, t) * DH, f"{scheme} t={t:g}s: max head error {err:.3g} m"


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_bed_flux_follows_inverse_sqrt_t(result, t):
    scheme, ds = result
    q = float(ds["bed_flux"].sel(time=t).values[0])
    rel = abs(q / step_flux(t) - 1.0)
    # Carslaw & Jaeger (1959): q = -kv dh / sqrt(pi D t); sign: negative = losing (stream water enters)
    assert q < 0.0
    assert rel <= tolerance(scheme, t), f"{scheme} t={t:g}s: bed flux relative error {rel:.3g}"


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_exchange_is_the_flux_at_the_output_time(result, t):
    """`exchange` at time t is the net exchange at that instant (the contract's per-time variable),
    here the bed flux times the 1 m column width; compared with Carslaw & Jaeger (1959)."""
    scheme, ds = result
    ex = float(ds["exchange"].sel(time=t))
    rel = abs(ex / (step_flux(t) * 1.0) - 1.0)
    assert rel <= tolerance(scheme, t), f"{scheme} t={t:g}s: exchange relative error {rel:.3g}"


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_storage_volume_from_heads(result, t):
    scheme, ds = result
    h = ds["head"].sel(time=t).values[:, 0]
    vol = SS * np.sum((h - H0) * DZ)   # uniform cells, the top one is exactly dz thick (ground on a face)
    rel = abs(vol / step_volume(t) - 1.0)
    # volume into storage 2 dh sqrt(kv ss t / pi) (Carslaw & Jaeger 1959; references.md 6.1)
    assert rel <= tolerance(scheme, t), f"{scheme} t={t:g}s: storage volume relative error {rel:.3g}"
