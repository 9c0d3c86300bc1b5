"""Darcy flux from K and gradient against metered flux (Lee & Cherry 1978)."""
import numpy as np
import pytest

from bedflux.field import darcy_flux, implied_conductivity


def test_darcy_flux_upward():
    # Darcy with z up: q = K * VHG; K 1e-4 m/s, VHG 0.033333 -> 3.3333e-6 m/s = 28.80 cm/d (references 2.5).
    q = darcy_flux(1e-4, 0.01 / 0.30)
    assert q == pytest.approx(3.33333e-6, rel=1e-5)
    assert q * 8.64e6 == pytest.approx(28.80, rel=1e-4)


def test_implied_k_lee_cherry_exercise():
    # Lee & Cherry (1978): K = metered flux / VHG; 0.0940528 m/d over 0.033333 -> 2.82158 m/d (references 2.6).
    k = implied_conductivity(0.0940528 / 86400, 0.01 / 0.30) * 86400
    assert k == pytest.approx(2.82158, rel=1e-5)


def test_opposite_signs_give_no_k():
    # No positive conductivity fits a flux against the gradient.
    assert np.isnan(implied_conductivity(1e-6, -0.05))
