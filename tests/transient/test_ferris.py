"""Sinusoidal stage: damping and lag of the head wave into the bed and into the bank.

Source: Ferris (1951) (IASH Publ. 33; citation details from memory), as quoted in references.md
section 6.3 [C2/C]: for a stage mean + A sin(omega t) on the face of a semi-infinite medium with
diffusivity D,

    h(x, t) = mean + A exp(-x / delta) sin(omega t - x / delta),   delta = sqrt(2 D / omega)

so the amplitude ratio is exp(-x sqrt(omega / (2 D))) and the time lag x / sqrt(2 D omega).
Written here both for a 1D streambed column (x = depth, D = kv / ss) and for a one-layer bank
with the stream at its side (x = distance from the bank, D = T / S with T = kh b and
S = sy + ss b, the storage per unit area of the linearised water table plus the elastic storage
of the layer).

The model starts from rest (head = mean) and runs 16 periods; amplitude and phase are fitted by
linear least squares (mean + a sin + b cos) over the last two periods, when the start-up
transient has decayed below 2e-4 of A at the depths checked.

Tolerances. The time stepping is a known, exactly analysable change to Ferris' solution: a
time-discrete scheme replaces i omega by s = (1 - exp(-i omega dt)) / dt (backward Euler) or
s = (2 i / dt) tan(omega dt / 2) (Crank-Nicolson), so the wave number becomes sqrt(s / D)
(von Neumann / modified-equation analysis, common practice). Two checks:
1. against the continuous Ferris solution with tolerance |time-discrete deviation| + 5e-4;
2. against the time-discrete Ferris solution with tolerance 5e-4 (the grid spacing is delta/170
   for the column and delta/54 for the bank, spatial errors are O((dx/delta)^2) < 4e-4).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

P = 3600.0                 # period (s)
OMEGA = 2.0 * np.pi / P
A = 0.3                    # stage amplitude (m)
MEAN = 2.0
N_PERIODS = 16
DT = P / 360.0
DEPTHS = (0.5, 1.0, 2.0)   # in damping depths delta

COLUMN = dict(kv=1e-5, ss=1e-3)                 # D = 0.01 m2/s, delta = 3.39 m
BANK = dict(T=1e-2, sy=0.1, ss=1e-7, b=5.0)     # D = 0.1 m2/s,  delta = 10.7 m


def diffusivity(kind):
    if kind == "column":
        return COLUMN["kv"] / COLUMN["ss"]
    return BANK["T"] / (BANK["sy"] + BANK["ss"] * BANK["b"])


def ferris(x, D, s=None):
    """Amplitude ratio and time lag (s) at distance x.

    With ``s = None`` the continuous Ferris (1951) result exp(-x/delta), x / sqrt(2 D omega);
    otherwise the same solution with i omega replaced by the scheme's s: h ~ exp(-sqrt(s/D) x).
    """
    k = np.sqrt(1j * OMEGA / D) if s is None else np.sqrt(s / D)
    return np.exp(-k.real * x), k.imag * x / OMEGA


def scheme_s(scheme):
    if scheme == "backward-euler":
        return (1.0 - np.exp(-1j * OMEGA * DT)) / DT
    return 2j / DT * np.tan(OMEGA * DT / 2.0)


def test_ferris_formula_reproduces_worked_example():
    # references.md 6.3a-b [C]/[D]: T = 1000 m2/d, S = 0.1, t0 = 0.5 d, x = 100 m
    T, S, t0, x = 1000.0, 0.1, 0.5, 100.0
    D, om = T / S, 2.0 * np.pi / t0
    assert np.sqrt(T * t0 / (S * np.pi)) == pytest.approx(39.894228, rel=1e-6)
    k = np.sqrt(1j * om / D)
    assert np.exp(-k.real * x) == pytest.approx(0.0815427, rel=1e-6)
    assert k.imag * x / om == pytest.approx(0.199471, rel=1e-5)   # lag in days
    assert k.imag * x == pytest.approx(2.506628, rel=1e-6)        # phase in rad


def run(kind, scheme):
    t = {"end": N_PERIODS * P, "step": DT, "output_every": P / 72.0, "scheme": scheme}
    wave = {"mean": MEAN, "amplitude": A, "period": P}
    if kind == "column":
        kv, ss = COLUMN["kv"], COLUMN["ss"]
        d = {"grid": {"x": [0.0, 1.0], "bottom": -40.0, "dx": 1.0, "dz": 0.02},
             "ground": {"elevation": 0.0},
             "zone": [{"name": "bed", "kh": kv, "kv": kv, "specific_storage": ss, "specific_yield": 0.2}],
             "stream": {"wave": wave},
             "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"}}
    else:
        b = BANK["b"]
        kh = BANK["T"] / b
        # one layer 0..b; the top face is exposed (stream limited to a channel left of the
        # domain), so it carries sy; the left side follows the stage over its whole height
        d = {"grid": {"x": [0.0, 400.0], "bottom": 0.0, "dx": 0.2, "dz": b},
             "ground": {"elevation": b},
             "zone": [{"name": "bank", "kh": kh, "kv": kh, "specific_storage": BANK["ss"],
                       "specific_yield": BANK["sy"]}],
             "stream": {"wave": wave, "channel": [-10.0, -5.0]},
             "sides": {"left": "stream", "right": "no-flow", "bottom": "no-flow"}}
    d["time"] = t
    return bedflux.simulate(bedflux.Scenario.from_dict(d))


def fit(t, y):
    """Least-squares mean + a sin(omega t) + b cos(omega t); returns amplitude, phase (rad)."""
    M = np.column_stack([np.ones_like(t), np.sin(OMEGA * t), np.cos(OMEGA * t)])
    c, *_ = np.linalg.lstsq(M, y, rcond=None)
    return float(np.hypot(c[1], c[2])), float(np.arctan2(c[2], c[1]))


CASES = [(k, s) for k in ("column", "bank") for s in ("backward-euler", "crank-nicolson")]
#: Crank-Nicolson cases are marked slow (16 periods of 360 steps each; CI runs them with -m slow).
PARAMS = [pytest.param(c, marks=pytest.mark.slow) if c[1] == "crank-nicolson" else c for c in CASES]


@pytest.fixture(scope="module", params=PARAMS, ids=[f"{k}-{s}" for k, s in CASES])
def measured(request):
    kind, scheme = request.param
    ds = run(kind, scheme)
    t = ds.time.values
    # the stage is the documented sinusoid mean + A sin(2 pi t / P)
    np.testing.assert_allclose(ds["stage"].values, MEAN + A * np.sin(OMEGA * t), atol=1e-12)
    last = t >= t[-1] - 2 * P - 1e-6
    D = diffusivity(kind)
    delta = np.sqrt(2.0 * D / OMEGA)
    out = []
    for n in DEPTHS:
        x = n * delta
        if kind == "column":
            depth = -ds.z.values   # ground at 0
            series = np.array([np.interp(x, depth, row) for row in ds["head"].values[last, :, 0]])
        else:
            series = np.array([np.interp(x, ds.x.values, row) for row in ds["head"].values[last, 0, :]])
        amp, phase = fit(t[last], series)
        lag = ((0.0 - phase) / OMEGA + P / 2.0) % P - P / 2.0   # stage phase is 0
        out.append((x, amp / A, lag))
    return kind, scheme, D, out


def test_amplitude_ratio_and_lag_vs_ferris(measured):
    kind, scheme, D, out = measured
    s = scheme_s(scheme)
    for x, ratio, lag in out:
        r_exact, lag_exact = ferris(x, D)            # Ferris (1951)
        r_disc, lag_disc = ferris(x, D, s)           # same with the scheme's s (see module doc)
        tol_r = abs(r_disc / r_exact - 1.0) + 5e-4
        tol_lag = abs(lag_disc - lag_exact) + 5e-4 * P
        assert abs(ratio / r_exact - 1.0) <= tol_r, (
            f"{kind} {scheme} x={x:.2f} m: amplitude ratio {ratio:.6f} vs Ferris {r_exact:.6f}")
        assert abs(lag - lag_exact) <= tol_lag, (
            f"{kind} {scheme} x={x:.2f} m: lag {lag:.2f} s vs Ferris {lag_exact:.2f} s")


def test_amplitude_ratio_and_lag_vs_time_discrete_ferris(measured):
    kind, scheme, D, out = measured
    s = scheme_s(scheme)
    for x, ratio, lag in out:
        r_disc, lag_disc = ferris(x, D, s)
        assert abs(ratio / r_disc - 1.0) <= 5e-4, (
            f"{kind} {scheme} x={x:.2f} m: amplitude ratio {ratio:.6f} vs time-discrete {r_disc:.6f}")
        assert abs(lag - lag_disc) <= 5e-4 * P, (
            f"{kind} {scheme} x={x:.2f} m: lag {lag:.2f} s vs time-discrete {lag_disc:.2f} s")
