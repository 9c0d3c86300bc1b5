"""The analytic solutions used by the variably saturated checks satisfy Richards' equation.

They are derived in ``analytic.py`` (after Tracy 2006 and Srivastava & Yeh 1991); here each is
put back into the equation with finite differences, so a slip in the derivation cannot pass.
"""
from __future__ import annotations

import numpy as np

from .analytic import LayeredInfiltration, tracy_pressure, tracy_transient_relative_conductivity

DAY = 86400.0


def richards_rhs_1d(psi, z, ks, alpha):
    """d/dz [K (dpsi/dz + 1)] by centred differences, K = ks exp(alpha psi)."""
    k = ks * np.exp(alpha * psi)
    kf = 0.5 * (k[1:] + k[:-1])
    flux = kf * (np.diff(psi) / np.diff(z) + 1)
    return np.diff(flux) / (0.5 * (z[2:] - z[:-2]))


def test_tracy_solution_satisfies_the_steady_equation():
    # Tracy (2006): div(K grad(psi + z)) = 0 with K = Ks exp(alpha psi), boundary values as stated
    a, L, alpha, hr = 2.0, 2.0, 2.0, -5.0
    h = 1e-3
    x = np.array([0.3, 0.9, 1.4])[:, None]
    z = np.array([0.2, 1.0, 1.7])[None, :]

    def K(x, z):
        return np.exp(alpha * tracy_pressure(x, z, a, L, alpha, hr))

    def H(x, z):
        return tracy_pressure(x, z, a, L, alpha, hr) + z

    div = ((K(x + h / 2, z) * (H(x + h, z) - H(x, z)) - K(x - h / 2, z) * (H(x, z) - H(x - h, z)))
           + (K(x, z + h / 2) * (H(x, z + h) - H(x, z)) - K(x, z - h / 2) * (H(x, z) - H(x, z - h)))) / h**2
    assert np.max(np.abs(div)) < 1e-5 * np.max(K(x, z))
    xs = np.linspace(0, a, 9)
    assert np.allclose(tracy_pressure(xs, 0.0, a, L, alpha, hr), hr)  # base
    assert np.allclose(tracy_pressure(np.array([0.0, a]), 1.3, a, L, alpha, hr), hr)  # sides
    top = np.log(np.exp(alpha * hr) + (1 - np.exp(alpha * hr)) * np.sin(np.pi * xs[1:-1] / a)) / alpha
    assert np.allclose(tracy_pressure(xs[1:-1], L, a, L, alpha, hr), top)


def check_infiltration(sol: LayeredInfiltration, ks, width, alpha):
    L, z1 = sol.L, sol.z1
    # initial state: the steady profile of q_a (flux q_a downward everywhere); at t = 0 the series
    # converges slowly at the surface, where the eigenfunctions have no slope and the profile has
    z = np.linspace(0, L, 4001)
    err = np.abs(sol.relative_conductivity(z, 0.0) - sol.steady(z, sol.q_a))
    assert np.max(err[z < 0.9 * L]) < 2e-4 and np.sqrt(np.mean(err**2)) < 2e-4
    for t in (0.05 * DAY, 0.4 * DAY, 2 * DAY):
        # d(theta)/dt = d/dz [K (dpsi/dz + 1)] in each layer, by differences in time and space
        dt = 1.0
        for lo, hi, layer in ((0.0, min(z1, L), 0), (z1, L, 1)):
            if hi <= lo:
                continue
            zz = np.linspace(lo + 0.02, hi - 0.02, 801)
            psi = sol.pressure(zz, t)
            lhs = width[layer] * (sol.relative_conductivity(zz[1:-1], t + dt)
                                  - sol.relative_conductivity(zz[1:-1], t - dt)) / (2 * dt)
            rhs = richards_rhs_1d(psi, zz, ks[layer], alpha)
            assert np.max(np.abs(lhs - rhs)) < 2e-3 * sol.q_b, (t, layer)
        # water table at the base, surface flux q_b (downward), flux continuous at the interface
        assert abs(sol.relative_conductivity(0.0, t) - 1) < 1e-12
        e = 1e-5

        def flux(zt, k, side):  # Ks (Kr'/alpha + Kr), downward, one-sided second-order slope
            kr = sol.relative_conductivity(zt + side * e * np.arange(3), t)
            slope = side * (-3 * kr[0] + 4 * kr[1] - kr[2]) / (2 * e)
            return k * (slope / alpha + kr[0])

        assert abs(flux(L, ks[-1], -1) - sol.q_b) < 1e-4 * sol.q_b, t
        if z1 < L:
            below, above = flux(z1, ks[0], -1), flux(z1, ks[1], +1)
            assert abs(below - above) < 1e-4 * sol.q_b, (t, below, above)


def test_homogeneous_infiltration_solution():
    ks, width, alpha = (1e-6, 1e-6), (0.34, 0.34), 2.0
    sol = LayeredInfiltration(2.0, alpha, ks, width, 2.0, 0.1e-6, 0.8e-6)
    check_infiltration(sol, ks, width, alpha)


def test_two_layer_infiltration_solution():
    ks, width, alpha = (1e-6, 2.5e-6), (0.34, 0.30), 2.0
    sol = LayeredInfiltration(2.0, alpha, ks, width, 1.0, 0.1e-6, 0.8e-6)
    check_infiltration(sol, ks, width, alpha)


def test_transient_tracy_solution_satisfies_the_equation():
    # Tracy (2006), transient: (theta_s - theta_r) d(Kr)/dt = div(K grad(psi + z)), K = Ks Kr,
    # the series derived in analytic.py, put back into the equation by centred differences
    a, L, alpha, hr, ks, width = 2.0, 2.0, 1.0, -1.0, 1e-5, 0.35
    h, dt = 1e-3, 1.0
    x = np.array([0.3, 0.9, 1.4])[:, None]
    z = np.array([0.2, 1.0, 1.7])[None, :]
    for t in (300.0, 1800.0, 7200.0):
        def kr(x, z, t=t):
            return tracy_transient_relative_conductivity(x, z, t, a, L, alpha, hr, ks, width)

        def H(x, z):
            return np.log(kr(x, z)) / alpha + z

        def K(x, z):
            return ks * kr(x, z)

        div = ((K(x + h / 2, z) * (H(x + h, z) - H(x, z)) - K(x - h / 2, z) * (H(x, z) - H(x - h, z)))
               + (K(x, z + h / 2) * (H(x, z + h) - H(x, z)) - K(x, z - h / 2) * (H(x, z) - H(x, z - h)))) / h**2
        rate = width * (kr(x, z, t + dt) - kr(x, z, t - dt)) / (2 * dt)
        assert np.max(np.abs(rate - div)) < 1e-4 * np.max(np.abs(rate)), t
        # boundary values: h_r on the base and the sides, the switched-on profile on the top
        xs = np.linspace(0, a, 9)
        assert np.allclose(np.log(kr(xs, 0.0)) / alpha, hr, atol=1e-12, rtol=0)
        assert np.allclose(np.log(kr(np.array([0.0, a]), 1.3)) / alpha, hr, atol=1e-12, rtol=0)
        top = np.exp(alpha * hr) + (1 - np.exp(alpha * hr)) * np.sin(np.pi * xs / a)
        assert np.allclose(kr(xs, L), top, atol=1e-12, rtol=0)
    # t = 0: the dry start (the series converges as 1/n, so many terms and away from the top)
    zs = np.linspace(0, 0.9 * L, 10)
    start = tracy_transient_relative_conductivity(0.7, zs, 0.0, a, L, alpha, hr, ks, width, terms=20000)
    assert np.max(np.abs(start - np.exp(alpha * hr))) < 1e-4
    # long times: the steady solution
    late = tracy_transient_relative_conductivity(x, z, 40 * 86400.0, a, L, alpha, hr, ks, width)
    assert np.max(np.abs(late - np.exp(alpha * tracy_pressure(x, z, a, L, alpha, hr)))) < 1e-12
