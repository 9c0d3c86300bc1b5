"""Parameter derivatives of the soil water properties (``alpha``, ``n``) against the complex-step
derivative of the published formulas.

The complex-step derivative ``f'(x) = Im f(x + i h) / h`` (Squire & Trapp 1998, SIAM Review 40;
Martins, Sturdza & Alonso 2003, ACM TOMS 29) has no subtractive cancellation, so with
``h = 1e-30`` it is exact to round-off. It is taken here of the formulas as published, written
independently of :mod:`bedflux.section.retention` (which uses another, cancellation-free form of
Kr):

- van Genuchten (1980) eq. (3): ``theta = theta_r + (theta_s - theta_r) (1 + (alpha |h|)^n)^-m``,
  ``m = 1 - 1/n``;
- van Genuchten (1980) eq. (8) (Mualem 1976): ``Kr = Se^(1/2) (1 - (1 - Se^(1/m))^m)^2``;
- the exponential model (Gardner 1958): ``Se = Kr = exp(alpha h)``.
"""
from __future__ import annotations

import numpy as np
import pytest
from bedflux.section.retention import (
    SoilWater,
    exponential_parameter_derivatives,
    van_genuchten_parameter_derivatives,
)

H = 1e-30
# A loam (Carsel & Parrish 1988, class means, from memory), a sand-like soil with n > 2 and a
# clay-like soil with n close to 1.
SOILS = [(3.6, 1.56, 0.078, 0.43), (14.5, 2.68, 0.045, 0.43), (0.8, 1.09, 0.068, 0.38)]
PSI = -np.array([0.02, 0.1, 0.3, 0.9, 2.5, 8.0])


def published_van_genuchten(psi, alpha, n, tr, ts):
    m = 1 - 1 / n
    se = (1 + (alpha * np.abs(psi)) ** n) ** (-m)
    return tr + (ts - tr) * se, np.sqrt(se) * (1 - (1 - se ** (1 / m)) ** m) ** 2


def complex_step(f, x):
    return np.imag(f(x + 1j * H)) / H


@pytest.mark.parametrize("alpha,n,tr,ts", SOILS)
def test_van_genuchten_alpha_and_n(alpha, n, tr, ts):
    d = van_genuchten_parameter_derivatives(PSI, alpha, n, tr, ts)
    for i, name in enumerate(("theta", "kr")):
        by_alpha = complex_step(lambda a, i=i: published_van_genuchten(PSI, a, n, tr, ts)[i], alpha)
        by_n = complex_step(lambda nn, i=i: published_van_genuchten(PSI, alpha, nn, tr, ts)[i], n)
        np.testing.assert_allclose(getattr(d, name + "_alpha"), by_alpha, rtol=1e-9, atol=1e-14, err_msg=name)
        np.testing.assert_allclose(getattr(d, name + "_n"), by_n, rtol=1e-9, atol=1e-14, err_msg=name)


def test_saturated_cells_do_not_depend_on_the_shape():
    d = van_genuchten_parameter_derivatives(np.array([0.0, 0.4]), 3.6, 1.56, 0.078, 0.43)
    for f in ("theta_alpha", "kr_alpha", "theta_n", "kr_n"):
        assert np.all(getattr(d, f) == 0.0), f


def test_exponential_alpha():
    alpha, tr, ts = 2.0, 0.05, 0.40
    d = exponential_parameter_derivatives(PSI, alpha, tr, ts)
    np.testing.assert_allclose(d.kr_alpha, complex_step(lambda a: np.exp(a * PSI), alpha), rtol=1e-12)
    np.testing.assert_allclose(d.theta_alpha, complex_step(lambda a: tr + (ts - tr) * np.exp(a * PSI), alpha),
                               rtol=1e-12)
    assert np.all(d.kr_n == 0.0) and np.all(d.theta_n == 0.0)


def test_mixed_section_takes_each_cell_its_own_model():
    vg = np.array([True, False, True, False])
    psi = np.array([-0.3, -0.3, -2.0, -2.0])
    soil = SoilWater(vg, np.array([3.6, 2.0, 3.6, 2.0]), np.array([1.56, np.nan, 1.56, np.nan]),
                     np.array([0.078, 0.05, 0.078, 0.05]), np.array([0.43, 0.40, 0.43, 0.40]))
    d = soil.parameter_derivatives(psi)
    expected_vg = complex_step(lambda a: published_van_genuchten(psi[vg], a, 1.56, 0.078, 0.43)[1], 3.6)
    np.testing.assert_allclose(d.kr_alpha[vg], expected_vg, rtol=1e-9)
    np.testing.assert_allclose(d.kr_alpha[~vg], complex_step(lambda a: np.exp(a * psi[~vg]), 2.0), rtol=1e-12)
