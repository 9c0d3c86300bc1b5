"""Analytic solutions of Richards' equation with the exponential model, derived here.

With ``K = Ks exp(alpha psi)`` and ``theta = theta_r + (theta_s - theta_r) exp(alpha psi)`` the
relative conductivity ``Kr = exp(alpha psi)`` obeys a *linear* equation (the transformation of
Srivastava & Yeh 1991 and Tracy 2006; their printed formulas are not copied, the solutions below
are derived step by step and checked against the equation by finite differences in
``test_analytic_solutions.py``):

    (theta_s - theta_r) dKr/dt = div(Ks/alpha grad Kr) + d(Ks Kr)/dz     (z up)

1. Tracy (2006), steady, two dimensions, box ``0 <= x <= a``, ``0 <= z <= L``, ``psi = h_r`` on
   the sides and the base, ``exp(alpha psi) = exp(alpha h_r) + (1 - exp(alpha h_r)) sin(pi x / a)``
   on the top. With ``Kr = exp(alpha h_r) + f(z) sin(pi x / a)``:
   ``f'' + alpha f' - (pi/a)^2 f = 0``, ``f(0) = 0``, ``f(L) = 1 - exp(alpha h_r)``, so
   ``f = (1 - exp(alpha h_r)) exp(alpha (L - z) / 2) sinh(beta z) / sinh(beta L)``,
   ``beta = sqrt(alpha^2 / 4 + (pi / a)^2)``.

   Transient (the same box, Tracy 2006 treats the transient case too; this is derived here):
   ``theta = theta_r + c Kr`` with ``c = theta_s - theta_r``, ``Kr = exp(alpha h_r)``
   everywhere at ``t = 0`` and the top profile above switched on at ``t = 0``. With
   ``Kr = exp(alpha h_r) + v(z, t) sin(pi x / a)`` and ``D = Ks / alpha``:
   ``c v_t = D v_zz + Ks v_z - D (pi/a)^2 v``, ``v(0, t) = 0``, ``v(L, t) = f(L)``, ``v(z, 0) = 0``.
   Split ``v = f + w`` with ``f`` the steady profile: ``w(0) = w(L) = 0``, ``w(z, 0) = -f(z)``.
   Put ``w = exp(alpha (L - z) / 2) u``; since ``D alpha = Ks`` the first derivative drops out:
   ``D w_zz + Ks w_z = D exp(alpha (L - z) / 2) (u_zz - alpha^2 / 4 u)``, so
   ``c u_t = D (u_zz - beta^2 u)``, ``u(0) = u(L) = 0``,
   ``u(z, 0) = -(1 - exp(alpha h_r)) sinh(beta z) / sinh(beta L)``. Sine series,
   ``lambda_n = n pi / L``:
   ``u = sum_n b_n sin(lambda_n z) exp(-gamma_n t)``, ``gamma_n = Ks (lambda_n^2 + beta^2) / (alpha c)``,
   ``b_n = (2 / L) int_0^L u(z, 0) sin(lambda_n z) dz``; with
   ``int_0^L sinh(beta z) sin(lambda_n z) dz = (-1)^(n+1) lambda_n sinh(beta L) / (beta^2 + lambda_n^2)``
   (integrate by parts twice; ``sin(lambda_n L) = 0``):
   ``b_n = (1 - exp(alpha h_r)) (2 / L) (-1)^n lambda_n / (beta^2 + lambda_n^2)``. Hence

       Kr = exp(alpha h_r) + (1 - exp(alpha h_r)) sin(pi x / a) exp(alpha (L - z) / 2)
            [sinh(beta z) / sinh(beta L) + (2 / L) sum_n (-1)^n lambda_n / (beta^2 + lambda_n^2)
             sin(lambda_n z) exp(-gamma_n t)]

   At ``t = 0`` the bracket is the sine series of ``sinh(beta z) / sinh(beta L)`` subtracted from
   itself (zero, converging as ``1/n``); for ``t > 0`` the terms fall as ``exp(-gamma_n t)``; as
   ``t -> infinity`` the steady solution remains.

2. Srivastava & Yeh (1991), one dimension, the water table at ``z = 0`` (``Kr = 1``), layers with
   a common ``alpha`` (so ``Kr`` is continuous where ``psi`` is), infiltration ``q_A`` at the
   surface ``z = L`` before ``t = 0`` (steady) and ``q_B`` after. In each layer the steady flux
   ``Ks (Kr'/alpha + Kr) = q`` gives ``Kr = q / Ks + C exp(-alpha z)``. The transient rest
   ``v = Kr - Kr_B`` is written ``v = exp(-alpha z) w``; then
   ``c exp(-alpha z) w_t = (Ks / alpha) (exp(-alpha z) w_z)_z`` with ``w(0) = 0``,
   ``w_z(L) = 0`` and ``w``, ``Ks w_z`` continuous at an interface: a regular Sturm-Liouville
   problem with weight ``c exp(-alpha z)``. Its eigenfunctions are
   ``exp(alpha z / 2) (A cos(b z) + B sin(b z))`` with ``b^2 = mu c alpha / Ks - alpha^2 / 4`` in
   each layer; the eigenvalues ``mu`` are the roots of ``w_z(L; mu) = 0`` and the coefficients
   are weighted projections of ``w(z, 0)``.
3. Recharge on a box over a water table, two dimensions (after the Tracy 2006 and Srivastava &
   Yeh 1991 transformation; the boundaries are those a scenario states): box ``0 <= x <= a``,
   ``0 <= z <= L``, the water table at the base (``psi = 0``), hydrostatic sides
   (``psi = -z``, ``Kr = exp(-alpha z)``), at rest (``psi = -z``) until ``t = 0``, then a
   uniform downward flux ``q`` at the top: ``D Kr_z + Ks Kr = q`` at ``z = L``. ``exp(-alpha z)``
   carries no flux, so ``Kr = exp(-alpha z) + U`` with ``U = 0`` on the sides, the base and at
   ``t = 0`` and ``D U_z + Ks U = q`` on the top. Expand ``q = sum_{k odd} q_k sin(m_k x)``,
   ``q_k = 4 q / (k pi)``, ``m_k = k pi / a``; each mode ``V_k(z, t)`` obeys
   ``c V_t = D V_zz + Ks V_z - D m_k^2 V``. Steady part (``beta_k^2 = alpha^2 / 4 + m_k^2``):
   ``V = C_k exp(-alpha z / 2) sinh(beta_k z)``, and the top condition gives
   ``C_k = q_k exp(alpha L / 2) / (D (beta_k cosh(beta_k L) + alpha / 2 sinh(beta_k L)))``.
   The rest ``exp(-alpha z / 2) phi`` (first derivative drops out as in 1.) obeys
   ``c phi_t = D (phi_zz - beta_k^2 phi)``, ``phi(0) = 0`` and, from
   ``D W_z + Ks W = D exp(-alpha z / 2) (phi_z + alpha / 2 phi)``, ``phi_z + alpha phi / 2 = 0``
   at ``z = L``: eigenfunctions ``sin(mu_j z)`` with ``mu_j cos(mu_j L) + alpha / 2 sin(mu_j L) = 0``
   (one root in each ``((j - 1/2) pi / L, j pi / L)``, the same for every ``k``), decay rates
   ``D (mu_j^2 + beta_k^2) / c``, and coefficients
   ``b_kj = -C_k int_0^L sinh(beta_k z) sin(mu_j z) dz / int_0^L sin^2(mu_j z) dz`` with
   ``int_0^L sinh(beta z) sin(mu z) dz = (beta cosh(beta L) sin(mu L) - mu sinh(beta L) cos(mu L)) / (beta^2 + mu^2)``
   and ``int_0^L sin^2(mu z) dz = L / 2 - sin(2 mu L) / (4 mu)``.
"""
from __future__ import annotations

import numpy as np
from scipy.optimize import brentq


def tracy_relative_conductivity(x, z, a: float, L: float, alpha: float, h_r: float) -> np.ndarray:
    """``Kr = exp(alpha psi)`` of the steady two-dimensional solution (z up from the base)."""
    beta = np.sqrt(alpha**2 / 4 + (np.pi / a) ** 2)
    er = np.exp(alpha * h_r)
    f = (1 - er) * np.exp(alpha * (L - z) / 2) * np.sinh(beta * z) / np.sinh(beta * L)
    return er + f * np.sin(np.pi * x / a)


def tracy_pressure(x, z, a: float, L: float, alpha: float, h_r: float) -> np.ndarray:
    """Pressure head of the steady two-dimensional solution."""
    return np.log(tracy_relative_conductivity(x, z, a, L, alpha, h_r)) / alpha


def tracy_transient_relative_conductivity(x, z, t: float, a: float, L: float, alpha: float, h_r: float,
                                          ks: float, width: float, terms: int | None = None) -> np.ndarray:
    """``Kr = exp(alpha psi)`` of the transient two-dimensional solution at time ``t > 0`` (s).

    ``ks`` is the saturated conductivity (m/s), ``width`` is ``theta_s - theta_r``. The series is
    summed until its terms fall below 1e-16 of the leading one (``terms`` fixes the count).
    """
    x, z = np.asarray(x, dtype=float), np.asarray(z, dtype=float)
    beta2 = alpha**2 / 4 + (np.pi / a) ** 2
    rate = ks / (alpha * width)
    if terms is None:
        if t <= 0:
            raise ValueError("give the number of terms at t = 0 (the series converges slowly there)")
        # exp(-rate lambda_n^2 t) < 1e-16 exp(-rate lambda_1^2 t)
        terms = int(np.ceil(L / np.pi * np.sqrt(np.log(1e16) / (rate * t) + (np.pi / L) ** 2))) + 1
    n = np.arange(1, terms + 1)
    lam = n * np.pi / L
    coef = (2 / L) * (-1.0) ** n * lam / (beta2 + lam**2) * np.exp(-rate * (lam**2 + beta2) * t)
    series = np.tensordot(np.sin(np.multiply.outer(z, lam)), coef, axes=([-1], [0]))
    beta = np.sqrt(beta2)
    er = np.exp(alpha * h_r)
    bracket = np.sinh(beta * z) / np.sinh(beta * L) + series
    return er + (1 - er) * np.sin(np.pi * x / a) * np.exp(alpha * (L - z) / 2) * bracket


def tracy_transient_pressure(x, z, t: float, a: float, L: float, alpha: float, h_r: float,
                             ks: float, width: float) -> np.ndarray:
    """Pressure head of the transient two-dimensional solution at time ``t > 0`` (s)."""
    return np.log(tracy_transient_relative_conductivity(x, z, t, a, L, alpha, h_r, ks, width)) / alpha


class BoxRecharge:
    """Problem 3 of the module doc: uniform recharge on a box over a water table with hydrostatic sides.

    Parameters
    ----------
    a, L
        Width and height of the box (m); the water table is the base.
    alpha, ks, width
        Exponential-model alpha (1/m), saturated conductivity (m/s) and ``theta_s - theta_r``.
    q
        Downward flux at the top from ``t = 0`` (m/s).
    modes
        Number of odd ``x`` modes of the steady part (the transient part needs far fewer).
    """

    def __init__(self, a: float, L: float, alpha: float, ks: float, width: float, q: float, modes: int = 4000):
        self.a, self.L, self.alpha, self.ks, self.width, self.q = a, L, alpha, ks, width, q
        self.k = 2 * np.arange(modes) + 1.0
        self.m = self.k * np.pi / a
        self.beta = np.sqrt(alpha**2 / 4 + self.m**2)
        self.diffusivity = ks / alpha
        self.mu = self._roots(400)

    def _roots(self, count: int) -> np.ndarray:
        L, half = self.L, self.alpha / 2
        f = lambda mu: mu * np.cos(mu * L) + half * np.sin(mu * L)
        return np.array([brentq(f, (j - 0.5) * np.pi / L, j * np.pi / L, xtol=1e-15, rtol=1e-15)
                         for j in range(1, count + 1)])

    def _steady_shape(self, z, beta):
        """``exp(alpha (L - z) / 2) sinh(beta z) / (beta cosh(beta L) + alpha / 2 sinh(beta L))``
        without overflow (``C_k exp(-alpha z / 2) sinh(beta_k z) = q_k / D`` times this)."""
        L, half = self.L, self.alpha / 2
        num = np.exp(beta * (z - L)) - np.exp(-beta * (z + L))
        den = beta * (1 + np.exp(-2 * beta * L)) + half * (1 - np.exp(-2 * beta * L))
        return np.exp(half * (L - z)) * num / den

    def relative_conductivity(self, x, z, t: float) -> np.ndarray:
        """``Kr = exp(alpha psi)`` at points ``(x, z)`` (same shape) and time ``t > 0`` (s)."""
        x, z = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(z, dtype=float))
        shape = x.shape
        x, z = x.ravel(), z.ravel()
        qk = 4 * self.q / (self.k * np.pi)
        sx = np.sin(np.outer(x, self.m))  # (points, modes)
        steady = np.sum(sx * qk / self.diffusivity * self._steady_shape(z[:, None], self.beta), axis=1)
        # transient part: only the modes that have not decayed below 1e-16 of the slowest
        rate = self.diffusivity / self.width
        keep_k = rate * self.m**2 * t < np.log(1e16) + rate * self.m[0] ** 2 * t
        keep_j = rate * self.mu**2 * t < np.log(1e16) + rate * self.mu[0] ** 2 * t
        if keep_j.all():
            raise ValueError("t is too small for the eigenfunctions kept")
        m, beta, q_k = self.m[keep_k], self.beta[keep_k], qk[keep_k]
        mu = self.mu[keep_j]
        L, half = self.L, self.alpha / 2
        # b_kj with C_k written as q_k exp(alpha L / 2) / D over (beta cosh + alpha/2 sinh), the
        # hyperbolic functions scaled by exp(-beta L) against overflow
        den = beta * (1 + np.exp(-2 * beta * L)) + half * (1 - np.exp(-2 * beta * L))
        ch = (1 + np.exp(-2 * beta * L)) / den  # cosh(beta L) / (beta cosh + alpha/2 sinh)
        sh = (1 - np.exp(-2 * beta * L)) / den  # sinh(beta L) / (...)
        proj = (beta[:, None] * ch[:, None] * np.sin(mu * L) - mu * sh[:, None] * np.cos(mu * L)) \
            / (beta[:, None] ** 2 + mu**2)
        norm = L / 2 - np.sin(2 * mu * L) / (4 * mu)
        b = -(q_k * np.exp(half * L) / self.diffusivity)[:, None] * proj / norm  # (k, j)
        decay = np.exp(-rate * (mu**2 + beta[:, None] ** 2) * t)
        zs = np.sin(np.outer(z, mu))  # (points, j)
        transient = np.exp(-half * z) * np.einsum("pk,kj,pj->p", np.sin(np.outer(x, m)), b * decay, zs)
        return (np.exp(-self.alpha * z) + steady + transient).reshape(shape)

    def pressure(self, x, z, t: float) -> np.ndarray:
        return np.log(self.relative_conductivity(x, z, t)) / self.alpha


def _s(b2: float, z):
    """sin(b z) / b, continued to b^2 <= 0 (sinh)."""
    if b2 > 1e-14:
        b = np.sqrt(b2)
        return np.sin(b * z) / b
    if b2 < -1e-14:
        b = np.sqrt(-b2)
        return np.sinh(b * z) / b
    return z + 0 * z


def _c(b2: float, z):
    """cos(b z), continued to b^2 <= 0 (cosh)."""
    if b2 > 1e-14:
        return np.cos(np.sqrt(b2) * z)
    if b2 < -1e-14:
        return np.cosh(np.sqrt(-b2) * z)
    return 1 + 0 * z


def _ds(b2: float, z):
    """d/dz of sin(b z) / b."""
    return _c(b2, z)


def _dc(b2: float, z):
    """d/dz of cos(b z)."""
    return -b2 * _s(b2, z)


class LayeredInfiltration:
    """Srivastava & Yeh (1991) problem for up to two layers (see the module doc).

    Parameters
    ----------
    L
        Height of the surface above the water table (m).
    alpha
        Exponential-model alpha (1/m), common to the layers.
    ks, width
        Saturated conductivity and ``theta_s - theta_r`` of the lower and upper layer.
    interface
        Height of the layer interface above the water table (``L`` for one layer).
    q_a, q_b
        Infiltration rate (positive downward, m/s) before and after ``t = 0``.
    terms
        Number of eigenfunctions.
    """

    def __init__(self, L, alpha, ks, width, interface, q_a, q_b, terms=200):
        self.L, self.alpha = L, alpha
        self.ks, self.width = tuple(ks), tuple(width)
        self.z1 = interface
        self.q_a, self.q_b = q_a, q_b
        self.mu = self._eigenvalues(terms)
        self._coefficients()

    # steady states ------------------------------------------------------------------------
    def steady(self, z, q):
        z = np.asarray(z, dtype=float)
        a, (k1, k2) = self.alpha, self.ks
        c1 = 1 - q / k1
        c2 = c1 + (q / k1 - q / k2) * np.exp(a * self.z1)
        return np.where(z <= self.z1, q / k1 + c1 * np.exp(-a * z), q / k2 + c2 * np.exp(-a * z))

    # eigenfunctions -----------------------------------------------------------------------
    def _b2(self, mu, layer):
        return mu * self.width[layer] * self.alpha / self.ks[layer] - self.alpha**2 / 4

    def _layer2(self, mu):
        """Coefficients (A, B) of the upper layer for the eigenfunction with w = e^{az/2} s(b1, z) below."""
        a, z1 = self.alpha, self.z1
        b1 = self._b2(mu, 0)
        w1 = np.exp(a * z1 / 2) * _s(b1, z1)
        dw1 = np.exp(a * z1 / 2) * (a / 2 * _s(b1, z1) + _ds(b1, z1))
        dw2 = self.ks[0] / self.ks[1] * dw1  # Ks w_z continuous
        A = w1 * np.exp(-a * z1 / 2)
        B = dw2 * np.exp(-a * z1 / 2) - a / 2 * A  # times d/dz of s(b2, z - z1) at z1, which is 1
        return A, B

    def eigenfunction(self, mu, z):
        z = np.asarray(z, dtype=float)
        a, z1 = self.alpha, self.z1
        lower = np.exp(a * z / 2) * _s(self._b2(mu, 0), z)
        if z1 >= self.L:
            return lower
        A, B = self._layer2(mu)
        b2 = self._b2(mu, 1)
        upper = np.exp(a * z / 2) * (A * _c(b2, z - z1) + B * _s(b2, z - z1))
        return np.where(z <= z1, lower, upper)

    def _top_slope(self, mu):
        a, L, z1 = self.alpha, self.L, self.z1
        if z1 >= L:
            b1 = self._b2(mu, 0)
            return np.exp(a * L / 2) * (a / 2 * _s(b1, L) + _ds(b1, L))
        A, B = self._layer2(mu)
        b2 = self._b2(mu, 1)
        d = L - z1
        return np.exp(a * L / 2) * (a / 2 * (A * _c(b2, d) + B * _s(b2, d)) + A * _dc(b2, d) + B * _ds(b2, d))

    def _eigenvalues(self, terms):
        # scan mu on a grid fine enough to separate the roots, then refine each sign change
        scale = max(k / (w * self.alpha) for k, w in zip(self.ks, self.width))
        top = scale * (self.alpha**2 / 4 + (np.pi * (terms + 2) / self.L) ** 2) * 1.5
        grid = np.concatenate([[0.0], np.geomspace(top * 1e-9, top, 40 * terms)])
        f = np.array([self._top_slope(m) for m in grid])
        roots = [brentq(self._top_slope, grid[i], grid[i + 1], xtol=1e-14 * grid[i + 1], rtol=1e-14)
                 for i in range(grid.size - 1) if f[i] == 0 or np.sign(f[i]) != np.sign(f[i + 1])]
        roots = [r for r in roots if r > 0]
        if len(roots) < terms:
            raise RuntimeError("eigenvalue scan found too few roots")
        return np.array(roots[:terms])

    def _coefficients(self):
        a = self.alpha
        # Gauss-Legendre quadrature in each layer
        nodes, weights = np.polynomial.legendre.leggauss(400)
        parts = [(0.0, min(self.z1, self.L), 0)] + ([(self.z1, self.L, 1)] if self.z1 < self.L else [])
        zq, wq = [], []
        for lo, hi, layer in parts:
            z = 0.5 * (hi - lo) * nodes + 0.5 * (hi + lo)
            zq.append(z)
            wq.append(0.5 * (hi - lo) * weights * self.width[layer] * np.exp(-a * z))
        zq, wq = np.concatenate(zq), np.concatenate(wq)
        w0 = np.exp(a * zq) * (self.steady(zq, self.q_a) - self.steady(zq, self.q_b))
        self.coef = np.empty(self.mu.size)
        for k, mu in enumerate(self.mu):
            phi = self.eigenfunction(mu, zq)
            self.coef[k] = np.sum(wq * w0 * phi) / np.sum(wq * phi * phi)

    # solution -----------------------------------------------------------------------------
    def relative_conductivity(self, z, t: float):
        z = np.asarray(z, dtype=float)
        w = sum(c * np.exp(-mu * t) * self.eigenfunction(mu, z) for c, mu in zip(self.coef, self.mu))
        return self.steady(z, self.q_b) + np.exp(-self.alpha * z) * w

    def pressure(self, z, t: float):
        return np.log(self.relative_conductivity(z, t)) / self.alpha
