"""Steady temperature profile with vertical flow through a bed layer.

Source: Bredehoeft & Papadopulos (1965), WRR 1(2):325 (references.md section 9):

    T(z) = T0 + (TL - T0) (exp(Pe z / L) - 1) / (exp(Pe) - 1),   Pe = rho_w c_w q L / lambda

with z the depth below the bed, q positive downward, T0 at the bed and TL at depth L. The worked
example there (L = 1 m, T0 = 15, TL = 10 degC, lambda = 1.4 W m-1 K-1) gives T(0.5 m) =
12.686261 degC for q = +1e-7 m/s and 12.313739 degC for q = -1e-7 m/s (rel 1e-7).

The model: a steady run (no [time]) of a 1 m column, stream at 15 degC on the bed and the base held
at the groundwater temperature 10 degC. The interior flux is exponentially fitted (exact for this
problem); the half cells at the bed and the base carry advection upwind and conduction over half a
cell, a second-order error: the whole-profile error must fall as dz^2 (by at least 6 per
refinement by 3) and be below 1e-5 degC on the finest grid (dz = 4.4 mm).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

from .columns import WATER, column

KV = 1e-5


def profile(z, q_down, length=1.0, t0=15.0, tl=10.0, conductivity=1.4):
    """Bredehoeft & Papadopulos (1965)."""
    pe = WATER * q_down * length / conductivity
    return t0 + (tl - t0) * np.expm1(pe * z / length) / np.expm1(pe)


def test_formula_reproduces_the_worked_example():
    assert profile(0.5, 1e-7) == pytest.approx(12.686261, rel=1e-7)
    assert profile(0.5, -1e-7) == pytest.approx(12.313739, rel=1e-7)


@pytest.mark.parametrize("q_down", [1e-7, -1e-7])
def test_steady_profile_converges_to_the_closed_form(q_down):
    errors = []
    for dz in (0.04, 0.04 / 3, 0.04 / 9):
        d = column(dz, 1.0, KV, -q_down / KV, {"stream_temperature": 15, "groundwater_temperature": 10}, None)
        ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
        assert float(ds.qz.mean()) == pytest.approx(-q_down, rel=1e-9)
        depth = -ds.z.values
        errors.append(np.abs(ds.temperature.isel(x=0).values - profile(depth, q_down)).max())
    errors = np.array(errors)
    assert np.all(errors[:-1] / errors[1:] > 6.0), errors
    assert errors[-1] < 1e-5
