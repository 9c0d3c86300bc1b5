"""The daily temperature wave in a streambed column with steady vertical flow.

Source: Stallman (1965), JGR 70:2821, in the forms of Hatch et al. (2006), WRR 42:W10410
(references.md section 9; formulas in :mod:`tests.heat.columns`). The worked example of
references.md section 9 (lambda = 1.4 W m-1 K-1, rho c = 2.5e6 J m-3 K-1, rho_w c_w = 4.18e6,
P = 1 d, sensors 0.10 m apart) gives the amplitude ratio and phase lag the model must reproduce:

    q (down)   A_r        lag (s)
    +2e-6      0.585471   10706.9
    -2e-6      0.322233   10706.9

The model column: porosity 0.3 and solid heat capacity 1.78e6 give rho c = 2.5e6 exactly; the
base head sets the Darcy flux; the stream wave is 15 +/- 3 degC and the groundwater 15 degC, so
the mean profile is uniform. Sensors at 0.05 and 0.15 m (cell centres on every grid used);
harmonics fitted over the last of 8 days (the start-up transient from a uniform column has decayed
to about 5e-5 of the lag; the convergence study runs 14 days, leaving 1e-5), Crank-Nicolson in
time with 5-minute steps on the middle grid (time error about (omega dt)^2 / 12 = 4e-5, below the
spatial error checked); the convergence study refines the step with the grid (15, 5, 100/60 min), so
both errors fall as dz^2.

Tolerances. The scheme is second order in space: relative errors of dz^2 times a constant. The
convergence study (slow) checks the order: each refinement by 3 must cut the error by at least 6
(9 ideally). The quick test on the middle grid (dz = 6.7 mm) allows 5e-4, which is
(6.7 mm / 20 mm)^2 of the 4.5e-3 a first-order-accurate error term would leave at 2 cm.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

from .columns import WATER, column, harmonic, stallman_ratio_lag

KV = 1e-4
DEPTH = 2.0
BULK = 0.3 * WATER + 0.7 * 1.78e6
PERIOD = 86400.0


def test_reference_formulas_reproduce_the_worked_example():
    # references.md section 9 worked example (computed there from Stallman / Hatch; rel 1e-5)
    assert BULK == pytest.approx(2.5e6, rel=1e-12)
    for q, ratio, lag in ((2e-6, 0.585471, 10706.9), (0.0, 0.446733, 11080.5), (-2e-6, 0.322233, 10706.9),
                          (1e-5, 0.944004, 5758.58)):
        r, lg = stallman_ratio_lag(q, 0.10, 1.4, BULK)
        assert r == pytest.approx(ratio, rel=1e-5)
        assert lg == pytest.approx(lag, rel=1e-5)


def model_ratio_lag(dz: float, q_up: float, step: float = 300.0, days: int = 8) -> tuple[float, float, float]:
    """Amplitude ratio and phase lag (s) of the model between 0.05 and 0.15 m, and its flux."""
    d = column(dz, DEPTH, KV, q_up * DEPTH / KV,
               {"stream_temperature": {"mean": 15, "amplitude": 3, "period": "1 d"}, "groundwater_temperature": 15},
               {"end": days * PERIOD, "step": step, "output_every": 900.0, "scheme": "crank-nicolson"})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    depth = -ds.z.values
    last = ds.time.values >= (days - 1) * PERIOD - 1.0
    t = ds.time.values[last]
    temp = ds.temperature.isel(x=0).values[last]
    i1, i2 = np.argmin(abs(depth - 0.05)), np.argmin(abs(depth - 0.15))
    assert depth[i1] == pytest.approx(0.05) and depth[i2] == pytest.approx(0.15)
    a1, p1 = harmonic(t, temp[:, i1], PERIOD)
    a2, p2 = harmonic(t, temp[:, i2], PERIOD)
    lag = ((p2 - p1) % (2 * np.pi)) * PERIOD / (2 * np.pi)
    return a2 / a1, lag, float(ds.qz.isel(time=-1, x=0).mean())


@pytest.mark.parametrize("q_up", [2e-6, -2e-6])
def test_amplitude_ratio_and_lag_on_the_middle_grid(q_up):
    ratio, lag, q = model_ratio_lag(0.02 / 3, q_up)
    assert q == pytest.approx(q_up, rel=1e-9)
    exact_ratio, exact_lag = stallman_ratio_lag(-q_up, 0.10, 1.4, BULK)
    assert abs(ratio / exact_ratio - 1) < 5e-4
    assert abs(lag / exact_lag - 1) < 5e-4
    # gaining (upward) flow brings the deep temperature up: the wave is damped more than when losing
    assert (ratio < 0.4) == (q_up > 0)


@pytest.mark.slow
@pytest.mark.parametrize("q_up", [2e-6, -2e-6])
def test_errors_fall_at_second_order(q_up):
    exact_ratio, exact_lag = stallman_ratio_lag(-q_up, 0.10, 1.4, BULK)
    errors = []
    for dz, step in ((0.02, 900.0), (0.02 / 3, 300.0), (0.02 / 9, 100.0)):
        ratio, lag, _ = model_ratio_lag(dz, q_up, step, days=14)
        errors.append((abs(ratio / exact_ratio - 1), abs(lag / exact_lag - 1)))
    errors = np.array(errors)
    assert np.all(errors[:-1] / errors[1:] > 6.0), errors
    assert errors[-1].max() < 1e-4
