"""Soil water properties against their published definitions, and every derivative by a Taylor test."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from bedflux.section.retention import (SoilWater, exponential, exponential_parameter_derivatives, van_genuchten,
                               van_genuchten_parameter_derivatives)

# A loam (Carsel & Parrish 1988, table of class means, from memory): alpha 3.6 1/m, n 1.56,
# theta_r 0.078, theta_s 0.43. A sand-like soil with n > 2 covers the other branch of the powers.
SOILS = [(3.6, 1.56, 0.078, 0.43), (14.5, 2.68, 0.045, 0.43), (0.8, 1.09, 0.068, 0.38)]
PSI = -np.array([1e-3, 0.05, 0.2, 0.7, 1.5, 4.0, 12.0, 60.0])


@pytest.mark.parametrize("alpha,n,tr,ts", SOILS)
def test_van_genuchten_water_content(alpha, n, tr, ts):
    # van Genuchten (1980) eq. (3): theta = theta_r + (theta_s - theta_r) / (1 + (alpha |h|)^n)^m, m = 1 - 1/n
    m = 1 - 1 / n
    p = van_genuchten(PSI, alpha, n, tr, ts)
    expected = tr + (ts - tr) / (1 + (alpha * np.abs(PSI)) ** n) ** m
    assert np.allclose(p.theta, expected, rtol=1e-14, atol=0)
    # saturated at and above zero pressure
    sat = van_genuchten(np.array([0.0, 0.3, 5.0]), alpha, n, tr, ts)
    assert np.all(sat.theta == ts) and np.all(sat.kr == 1.0) and np.all(sat.capacity == 0.0)


@pytest.mark.parametrize("alpha,n,tr,ts", SOILS)
def test_mualem_integral(alpha, n, tr, ts):
    # Mualem (1976): Kr = Se^(1/2) [ int_0^Se ds / h(s) / int_0^1 ds / h(s) ]^2 with h(Se) the
    # inverse of the retention curve; van Genuchten (1980) eq. (8) is its closed form for m = 1 - 1/n.
    m = 1 - 1 / n

    def inv_h(s):  # 1 / |h| as a function of Se (van Genuchten 1980, inverse of eq. 3)
        return alpha / (s ** (-1 / m) - 1) ** (1 / n)

    full = quad(inv_h, 0, 1, limit=400, epsabs=0, epsrel=1e-9)[0]
    p = van_genuchten(PSI, alpha, n, tr, ts)
    for se, kr in zip(p.se, p.kr):
        part = quad(inv_h, 0, se, limit=400, epsabs=0, epsrel=1e-9)[0]
        assert kr == pytest.approx(np.sqrt(se) * (part / full) ** 2, rel=2e-6, abs=1e-14)
    # the textbook form of eq. (8) agrees with the cancellation-free form used by the code
    textbook = np.sqrt(p.se) * (1 - (1 - p.se ** (1 / m)) ** m) ** 2
    assert np.allclose(p.kr, textbook, rtol=1e-7, atol=1e-15)


def test_exponential_model():
    # Gardner (1958): K = Ks exp(alpha h); water content of the same form (Srivastava & Yeh 1991)
    p = exponential(PSI, 2.0, 0.05, 0.40)
    assert np.allclose(p.kr, np.exp(2.0 * PSI), rtol=1e-15)
    assert np.allclose(p.theta, 0.05 + 0.35 * np.exp(2.0 * PSI), rtol=1e-15)
    assert np.all(exponential(np.array([0.0, 1.0]), 2.0, 0.05, 0.4).kr == 1.0)


def taylor_orders(f, df, x0, dx):
    """Remainders |f(x0 + h dx) - f(x0) - h df dx| for h = 1e-1 ... 1e-5: the observed orders."""
    f0 = f(x0)
    hs = 10.0 ** -np.arange(1, 6)
    r1, r2 = [], []
    for h in hs:
        fh = f(x0 + h * dx)
        r1.append(np.max(np.abs(fh - f0)))
        r2.append(np.max(np.abs(fh - f0 - h * df * dx)))
    r1, r2 = np.array(r1), np.array(r2)
    return np.log10(r1[:-1] / r1[1:]), np.log10(r2[:-1] / r2[1:]), r2


def assert_second_order(f, df, x0, dx):
    # Taylor test (common practice): without the derivative the remainder falls as O(h), with it O(h^2)
    o1, o2, r2 = taylor_orders(f, df, x0, dx)
    assert np.all(np.abs(o1 - 1) < 0.1)
    good = r2[1:] > 1e-13 * 1e3  # above round-off
    assert np.all(o2[good[: o2.size]] > 1.85), (o2, r2)


@pytest.mark.parametrize("alpha,n,tr,ts", SOILS)
@pytest.mark.parametrize("field", ["theta", "kr", "capacity"])
def test_pressure_derivatives_van_genuchten(alpha, n, tr, ts, field):
    deriv = {"theta": "capacity", "kr": "dkr", "capacity": "dcapacity"}[field]
    psi = np.array([-0.05, -0.3, -0.9, -2.5, -8.0])
    f = lambda p: getattr(van_genuchten(p, alpha, n, tr, ts), field)
    assert_second_order(f, getattr(van_genuchten(psi, alpha, n, tr, ts), deriv), psi, 0.01 * np.ones_like(psi))


@pytest.mark.parametrize("field", ["theta", "kr", "capacity"])
def test_pressure_derivatives_exponential(field):
    deriv = {"theta": "capacity", "kr": "dkr", "capacity": "dcapacity"}[field]
    psi = np.array([-0.05, -0.3, -0.9, -2.5])
    f = lambda p: getattr(exponential(p, 2.0, 0.05, 0.4), field)
    assert_second_order(f, getattr(exponential(psi, 2.0, 0.05, 0.4), deriv), psi, 0.01 * np.ones_like(psi))


@pytest.mark.parametrize("alpha,n,tr,ts", SOILS)
def test_parameter_derivatives_van_genuchten(alpha, n, tr, ts):
    psi = np.array([-0.05, -0.3, -0.9, -2.5, -8.0, 0.2])
    d = van_genuchten_parameter_derivatives(psi, alpha, n, tr, ts)
    for field, key in (("theta", "theta"), ("kr", "kr")):
        assert_second_order(lambda a: getattr(van_genuchten(psi, a, n, tr, ts), field),
                            getattr(d, key + "_alpha"), alpha, 0.1 * alpha)
        assert_second_order(lambda nn: getattr(van_genuchten(psi, alpha, nn, tr, ts), field),
                            getattr(d, key + "_n"), n, 0.02)
    assert d.theta_alpha[-1] == d.kr_n[-1] == 0.0  # saturated: no dependence


def test_parameter_derivatives_exponential():
    psi = np.array([-0.05, -0.3, -0.9, -2.5])
    d = exponential_parameter_derivatives(psi, 2.0, 0.05, 0.4)
    assert_second_order(lambda a: exponential(psi, a, 0.05, 0.4).theta, d.theta_alpha, 2.0, 0.2)
    assert_second_order(lambda a: exponential(psi, a, 0.05, 0.4).kr, d.kr_alpha, 2.0, 0.2)


def test_mixed_cells_match_each_model():
    psi = np.array([-0.1, -1.0, -3.0, 0.5])
    vg = np.array([True, False, True, False])
    soil = SoilWater(vg, np.array([3.6, 2.0, 3.6, 2.0]), np.array([1.56, np.nan, 1.56, np.nan]),
                     np.array([0.078, 0.05, 0.078, 0.05]), np.array([0.43, 0.4, 0.43, 0.4]))
    p = soil.properties(psi)
    a = van_genuchten(psi[vg], 3.6, 1.56, 0.078, 0.43)
    b = exponential(psi[~vg], 2.0, 0.05, 0.4)
    assert np.array_equal(p.kr[vg], a.kr) and np.array_equal(p.theta[~vg], b.theta)
    d = soil.parameter_derivatives(psi)
    assert np.array_equal(d.kr_n[~vg], np.zeros(2))
