"""Steady two-dimensional infiltration against Tracy (2006), exponential model.

Tracy, F.T. (2006), Clean two- and three-dimensional analytical solutions of Richards' equation
for testing numerical solvers, Water Resour. Res. 42, W08503: a box with the pressure head h_r
on the sides and the base and exp(alpha psi) = exp(alpha h_r) + (1 - exp(alpha h_r)) sin(pi x/a)
on the top. The solution is derived in analytic.py and checked against the equation in
test_analytic_solutions.py. Upstream relative conductivity is first order in space (Forsyth,
Wu & Pruess 1995); the grids halve the spacing, so the observed order log2(e_i / e_{i+1}).
"""
from __future__ import annotations

import numpy as np

from .analytic import tracy_pressure, tracy_relative_conductivity
from .columns import box, pressure_terms, stepper

A = L = 2.0


def errors(alpha, h_r, n):
    ret = {"model": "exponential", "alpha": alpha, "residual": 0.05, "saturated": 0.4}
    sec = box(A, L, A / n, L / n, 1e-5, ret)
    side = lambda s: h_r + 0 * s
    top = lambda x: np.log(np.exp(alpha * h_r) + (1 - np.exp(alpha * h_r)) * np.sin(np.pi * x / A)) / alpha
    st = stepper(sec, pressure_terms(sec, {"left": side, "right": side, "bottom": side, "top": top}))
    out, _, _ = st.solve_steady(np.full(sec.n, h_r), 0.0, sec.initial_active_set())
    g = sec.grid
    x = np.broadcast_to(g.xc[None, :], g.active.shape)[g.active]
    z = g.z_centre[g.active]
    kr_error = np.abs(np.exp(alpha * out.psi) - tracy_relative_conductivity(x, z, A, L, alpha, h_r)).max()
    psi_error = np.abs(out.psi - tracy_pressure(x, z, A, L, alpha, h_r)).max()
    return kr_error, psi_error


def orders(e):
    e = np.asarray(e)
    return np.log2(e[:-1] / e[1:])


def test_tracy_moderately_dry_first_order():
    # alpha = 1 1/m, h_r = -1 m: Kr from 0.37 to 1; measured errors (docs/verification.md)
    e = np.array([errors(1.0, -1.0, n) for n in (10, 20, 40, 80)])
    kr_orders, psi_orders = orders(e[:, 0]), orders(e[:, 1])
    assert np.all(kr_orders[1:] > 0.95) and np.all(psi_orders[1:] > 0.95), (e, kr_orders, psi_orders)
    assert e[-1, 1] < 1.5e-3  # m of pressure head on 2.5 cm cells


def test_tracy_very_dry_converges():
    # alpha = 2 1/m, h_r = -5 m (Kr 4.5e-5 at the boundary): the pressure drops steeply within the
    # first cell at the dry faces, where upstream Kr overestimates the flux by about
    # ln(Kr_cell / Kr_face), which falls only slowly as the cells shrink; the order approaches 1
    e = np.array([errors(2.0, -5.0, n) for n in (10, 20, 40, 80)])
    kr_orders = orders(e[:, 0])
    assert np.all(np.diff(e[:, 0]) < 0) and np.all(kr_orders > 0.6) and kr_orders[-1] > kr_orders[0]
    assert e[-1, 0] < 0.04
