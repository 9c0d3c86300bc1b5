"""Conduction of a step of the stream temperature into a bed without flow.

Source: Carslaw & Jaeger (1959), Conduction of Heat in Solids, 2nd ed., section 2.4 (semi-infinite
solid, surface held at a new temperature; citation details from memory):

    T(z, t) = T_i + (T_s - T_i) erfc(z / (2 sqrt(kappa t))),   kappa = lambda / (rho c)

The column (no flow: no-flow base, stage constant) starts at 10 degC; the stream is 15 degC from
t = 0. With kappa = 5.6e-7 m^2/s the wave reaches sqrt(kappa t) = 0.22 m after a day; the base at
2 m is held at 10 degC, which changes the solution by less than erfc(2 / 0.44) = 1e-10.

Crank-Nicolson (with two backward-Euler half steps at the start, Rannacher 1984) is second order
in time and the finite volumes in space: with dt refined with dz, the largest error over the day
must fall by at least 6 per refinement by 3 and be below 2e-4 degC on the finest grid (which is
(1/9)^2 of the 1.2e-2 degC error on the 2 cm grid at its first output, with a margin of 1.2).
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.special import erfc

import bedflux

from .columns import column

KAPPA = 1.4 / 2.5e6


@pytest.mark.parametrize("scheme", ["crank-nicolson"])
def test_step_follows_erfc_and_converges(scheme):
    errors = []
    for dz, dt in ((0.02, 600.0), (0.02 / 3, 200.0), (0.02 / 9, 600.0 / 9)):
        d = column(dz, 2.0, 1e-5, 0.0, {"stream_temperature": 15, "groundwater_temperature": 10, "initial": 10},
                   {"end": "1 d", "step": dt, "output_every": "3 h", "scheme": scheme}, bottom=None)
        ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
        assert float(np.abs(ds.qz).max()) == 0.0
        depth = -ds.z.values
        worst = 0.0
        for i, t in enumerate(ds.time.values[1:], start=1):
            exact = 10.0 + 5.0 * erfc(depth / (2.0 * np.sqrt(KAPPA * t)))
            worst = max(worst, float(np.abs(ds.temperature.isel(x=0, time=i).values - exact).max()))
        errors.append(worst)
    errors = np.array(errors)
    assert np.all(errors[:-1] / errors[1:] > 6.0), errors
    assert errors[-1] < 2e-4
