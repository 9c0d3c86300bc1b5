"""Inverted U-tube manometer and vertical hydraulic gradient."""
import numpy as np
import pytest

from bedflux import InputError
from bedflux.field import (amplification, gradient_sigma, head_resolution, manometer_head_difference, vertical_gradient)

INCH = 0.0254  # m, by definition


@pytest.mark.parametrize("relative_density, factor", [(0.9, 10.0), (0.8, 5.0)])
def test_light_oil_amplification(relative_density, factor):
    # Hydrostatics: dh = reading (rho_w - rho_f) / rho_w, so the amplification is 1 / (1 - SG):
    # 10 for SG 0.9 (common practice), 5 for SG 0.8 (references 2.2).
    assert amplification(relative_density * 1000.0) == pytest.approx(factor, rel=1e-12)
    assert manometer_head_difference(factor * 0.01, relative_density * 1000.0) == pytest.approx(0.01, rel=1e-12)


def test_air_amplification():
    # Hydrostatics with air of 1.2 kg/m^3: factor 1000 / 998.8 = 1.001201 (references 2.1).
    assert amplification(1.2) == pytest.approx(1.001201, rel=1e-6)


def test_caliper_resolution_through_amplification():
    # Common practice: a caliper read to 0.02-0.03 in on a tenfold oil manometer resolves
    # 0.002-0.003 in of head.
    np.testing.assert_allclose(head_resolution(np.array([0.02, 0.03]) * INCH, 900.0) / INCH,
                               [0.002, 0.003], rtol=1e-12)


def test_gradient_sign_and_value():
    # Lee & Cherry (1978); Baxter et al. (2003): VHG = (piezometer head - stage) / opening depth,
    # positive upward. +1.0 cm over 0.30 m is +0.033333 (references 2.4).
    assert vertical_gradient(0.010, 0.30) == pytest.approx(0.033333, abs=5e-7)  # value given to 6 decimals
    assert vertical_gradient(-0.010, 0.30) < 0


def test_gradient_uncertainty_from_resolution():
    # GUM (JCGM 100:2008, F.2.2.1): a reading of resolution d has standard uncertainty d / sqrt(12).
    # Caliper 0.02 in, SG 0.9 oil (x10), opening 0.30 m: sigma = 0.002 in / sqrt(12) / 0.30 m.
    expected = 0.002 * INCH / np.sqrt(12.0) / 0.30
    assert gradient_sigma(0.02 * INCH, 0.30, 900.0) == pytest.approx(expected, rel=1e-12)


def test_heavy_fluid_refused():
    with pytest.raises(InputError):
        manometer_head_difference(0.05, 1050.0)


def test_depth_must_be_positive():
    with pytest.raises(InputError):
        vertical_gradient(0.01, 0.0)
