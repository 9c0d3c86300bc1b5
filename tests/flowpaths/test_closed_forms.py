"""The tracer in flow fields whose paths and travel times are closed forms.

Pollock (1988), Ground Water 26(6):743-750 [citation from memory]: with the velocity linear in
each direction inside a cell, ``x(t) = x0 + (v_p exp(a t) - v0) / a``, and the exit time is
``ln(v_face / v_p) / a``. A field that is uniform, or linear over the whole section, is then
represented exactly by its face values, so the traced path must be the exact one:

- uniform flow (U, W): a straight line, travel time = distance / speed (kinematics);
- stagnation-point flow ``u = a (x - xs)``, ``w = -a (z - zs)`` (divergence free):
  ``x - xs = (x0 - xs) e^(a t)``, ``z - zs = (z0 - zs) e^(-a t)``, so the path is the hyperbola
  ``(x - xs)(z - zs) = const`` and reaching ``x = xs + L`` takes ``ln(L / (x0 - xs)) / a``
  (e.g. Bear 1972, Dynamics of Fluids in Porous Media, plane potential flows [from memory]).
"""
from __future__ import annotations

import numpy as np
import pytest

from bedflux.flowpaths.field import CellField
from bedflux.flowpaths.tracer import BASE, SIDE, Paths, advance, locate


def _field(x_edges, z_edges, u, w, periodic=False):
    """A CellField with the face velocities of the velocity functions ``u(x, z)``, ``w(x, z)``."""
    nx, nz = x_edges.size - 1, z_edges.size - 1
    xc = 0.5 * (x_edges[1:] + x_edges[:-1])
    zc = 0.5 * (z_edges[1:] + z_edges[:-1])
    X0, Z = np.meshgrid(x_edges[:-1], zc)
    X1, _ = np.meshgrid(x_edges[1:], zc)
    XC, ZB = np.meshgrid(xc, z_edges[1:])
    _, ZT = np.meshgrid(xc, z_edges[:-1])
    return CellField(x_edges=x_edges, z_edges=z_edges, top_row=np.zeros(nx, dtype=int),
                     ground=np.full(nx, z_edges[0]), z0=ZB.ravel(), z1=ZT.ravel(),
                     vx0=u(X0, Z).ravel(), vx1=u(X1, Z).ravel(), vz0=w(XC, ZB).ravel(), vz1=w(XC, ZT).ravel(),
                     wet=np.ones(nx, dtype=bool), sink=np.zeros(nx * nz, dtype=bool), periodic=periodic)


def _graded(a, b, n, ratio):
    """``n`` cells from a to b, each ``ratio`` times the last (a non-uniform grid)."""
    sizes = ratio ** np.arange(n)
    return a + (b - a) * np.concatenate([[0.0], np.cumsum(sizes)]) / sizes.sum()


def _start(fieldv, x, z):
    col, row, z = locate(fieldv, np.asarray(x, float), np.asarray(z, float))
    return Paths(x=np.asarray(x, float).copy(), z=z, col=col, row=row, t=np.zeros(np.size(x)))


@pytest.mark.parametrize("ratio", [1.0, 1.07])
def test_uniform_flow_is_a_straight_line_at_constant_speed(ratio):
    U, W = 2e-5, -1e-5  # m/s pore velocity, to the right and down
    fieldv = _field(_graded(0.0, 3.0, 40, ratio), _graded(0.0, -1.5, 30, ratio)[::1],
                    lambda x, z: np.full_like(x, U), lambda x, z: np.full_like(x, W))
    x0 = np.array([0.05, 0.7, 1.3, 2.2])
    p = _start(fieldv, x0, np.zeros(4))
    advance(fieldv, p, np.inf, 10_000)
    # straight line from (x0, 0): reaches the base z = -1.5 after 1.5/|W| unless x = 3 comes first
    t_base = 1.5 / abs(W)
    t_side = (3.0 - x0) / U
    t = np.minimum(t_base, t_side)
    np.testing.assert_allclose(p.elapsed, t, rtol=1e-12)
    np.testing.assert_allclose(p.x, x0 + U * t, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(p.z, W * t, rtol=1e-12, atol=1e-12)
    np.testing.assert_array_equal(p.exit, np.where(t_base < t_side, BASE, SIDE))
    np.testing.assert_allclose(p.length, np.hypot(U, W) * t, rtol=1e-12)


@pytest.mark.parametrize("ratio", [1.0, 0.93])
def test_stagnation_point_flow_follows_the_hyperbola(ratio):
    a, xs, zs, L, D = 3e-5, 0.0, -1.0, 2.0, 1.0  # 1/s; stagnation point at the bottom-left corner
    fieldv = _field(_graded(xs, xs + L, 50, ratio), _graded(zs + D, zs, 25, ratio),
                    lambda x, z: a * (x - xs), lambda x, z: -a * (z - zs))
    x0 = np.array([0.01, 0.1, 0.5, 1.2, 1.9])
    z0 = np.full(x0.size, zs + D)
    p = _start(fieldv, x0, z0)
    advance(fieldv, p, np.inf, 10_000)
    t_exact = np.log(L / (x0 - xs)) / a
    np.testing.assert_allclose(p.elapsed, t_exact, rtol=1e-10)
    np.testing.assert_allclose(p.z, zs + (z0 - zs) * (x0 - xs) / L, rtol=1e-10)
    np.testing.assert_allclose(p.x, xs + L, rtol=1e-12)
    assert np.all(p.exit == SIDE)
    # the deepest point is the exit (z falls all the way along the path)
    np.testing.assert_allclose(p.lowest, p.z, rtol=1e-10)


def test_a_path_stopped_part_way_is_on_the_exact_curve():
    a, xs, zs = 3e-5, 0.0, -1.0
    fieldv = _field(np.linspace(0.0, 2.0, 21), np.linspace(0.0, -1.0, 11),
                    lambda x, z: a * (x - xs), lambda x, z: -a * (z - zs))
    p = _start(fieldv, np.array([0.3]), np.array([0.0]))
    t_stop = 0.5 * np.log(2.0 / 0.3) / a
    advance(fieldv, p, t_stop, 10_000)
    assert p.exit[0] == -1  # still moving: its clock reached the limit
    np.testing.assert_allclose(p.x, 0.3 * np.exp(a * t_stop), rtol=1e-12)
    np.testing.assert_allclose(p.z, zs + 1.0 * np.exp(-a * t_stop), rtol=1e-12)


def test_uniform_flow_between_two_held_heads_through_the_whole_model():
    # Darcy (1856): q = K (H_left - H_right) / L between two sides held at heads, no flow at the
    # top (dry, no recharge, heads below the ground) and the base; the pore velocity q / n carries
    # a point from x0 to the right side in (L - x0) n / q, on a straight horizontal line
    import bedflux
    from bedflux.flowpaths.paths import flowpaths_from_points

    K, n, L, H0, H1 = 2e-4, 0.25, 20.0, 1.0, 0.0
    sc = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, L], "bottom": -5.0, "dx": 0.5, "dz": 0.5}, "ground": {"elevation": 3.0},
        "zone": [{"name": "aquifer", "kh": K, "kv": K / 4, "porosity": n}],
        "sides": {"left": {"head": H0}, "right": {"head": H1}, "bottom": "no-flow"}})
    x0 = np.array([0.3, 5.0, 12.2, 19.9])
    z0 = np.array([-4.9, -2.0, 0.7, 2.9])
    fp = flowpaths_from_points(sc, x0, z0)
    q = K * (H0 - H1) / L
    np.testing.assert_allclose(fp.residence_time, (L - x0) * n / q, rtol=1e-9)
    np.testing.assert_allclose(fp.exit_x, L)
    np.testing.assert_allclose(fp.depth_reached, 0.0, atol=1e-9)
    assert set(fp.exit_kind.values) == {"side"}
