"""Transient two-dimensional infiltration against the Tracy (2006) box, exponential model.

Tracy, F.T. (2006), Clean two- and three-dimensional analytical solutions of Richards' equation
for testing numerical solvers, Water Resour. Res. 42, W08503: a box 2 m x 2 m at the pressure
head h_r everywhere; at t = 0 the top is switched to exp(alpha psi) = exp(alpha h_r)
+ (1 - exp(alpha h_r)) sin(pi x / a), the sides and the base stay at h_r. The series solution is
derived in analytic.py and checked against the equation in test_analytic_solutions.py.

A scenario cannot hold a pressure head on a face (a head side is hydrostatic, and an exposed top
takes a flux), so the scenario gives grid and soil and the test the boundary terms (columns.py),
as in the steady check. The model steps adaptively (``run_steps``) with the longest step halved
with the cells: backward Euler and upstream Kr are both first order, so the error should halve.
The early profile under the top is steep (its depth sqrt(Ks t / (alpha c)) is 0.23 m at 30 min),
so on coarse cells the order approaches 1 from below (docs/verification.md).
"""
from __future__ import annotations

import numpy as np
import pytest

from bedflux.section.richards_steps import run_steps

from .analytic import tracy_transient_relative_conductivity
from .columns import box, pressure_terms, stepper

A = L = 2.0
ALPHA, H_R, KS, RESIDUAL, SATURATED = 1.0, -1.0, 1e-5, 0.05, 0.40
TIMES = np.array([1800.0, 7200.0])  # 0.27 and 1.07 of the slowest mode's decay time (6,750 s)


def model_errors(n: int, dt_max: float) -> np.ndarray:
    """Largest errors in Kr and in psi (m) over all cells at each of :data:`TIMES`, rows by time."""
    retention = {"model": "exponential", "alpha": ALPHA, "residual": RESIDUAL, "saturated": SATURATED}
    sec = box(A, L, A / n, L / n, KS, retention)
    side = lambda s: H_R + 0 * s
    top = lambda x: np.log(np.exp(ALPHA * H_R) + (1 - np.exp(ALPHA * H_R)) * np.sin(np.pi * x / A)) / ALPHA
    st = stepper(sec, pressure_terms(sec, {"left": side, "right": side, "bottom": side, "top": top}))
    g = sec.grid
    x = np.broadcast_to(g.xc[None, :], g.active.shape)[g.active]
    z = g.z_centre[g.active]
    errors = []

    def on_stop(out, forcing, t):
        kr = tracy_transient_relative_conductivity(x, z, t, A, L, ALPHA, H_R, KS, SATURATED - RESIDUAL)
        errors.append((np.abs(np.exp(ALPHA * out.psi) - kr).max(), np.abs(out.psi - np.log(kr) / ALPHA).max()))

    run_steps(st, np.full(sec.n, H_R), sec.initial_active_set(), TIMES, dt_max, lambda *args: 0.0, on_stop)
    assert len(errors) == TIMES.size
    return np.array(errors)


def refinement(levels):
    """Errors (level, time, Kr/psi) and the orders log2(e_i / e_{i+1}) of cells and longest step halved."""
    e = np.array([model_errors(10 * 2**k, 600.0 / 2**k) for k in levels])
    return e, np.log2(e[:-1] / e[1:])


def test_tracy_transient_first_order():
    # cells 10 cm, 5 cm, 2.5 cm; longest step 5 min, 2.5 min, 75 s (measured in docs/verification.md)
    e, orders = refinement((1, 2, 3))
    # measured orders 0.72 to 0.82, then 0.82 to 0.90
    assert np.all(orders > 0.7) and np.all(orders[-1] > 0.8) and np.all(orders[-1] > orders[0]), (e, orders)
    assert e[-1, :, 1].max() < 0.01  # m of pressure head


@pytest.mark.slow
def test_tracy_transient_convergence_study():
    # cells 20 cm down to 1.25 cm, longest step 10 min down to 37.5 s: the order rises towards 1
    e, orders = refinement((0, 1, 2, 3, 4))
    assert np.all(np.diff(e, axis=0) < 0), e
    assert np.all(orders[1:] > 0.6) and np.all(np.diff(orders[1:], axis=0) > 0), (e, orders)
    assert np.all(orders[-1] > 0.85), (e, orders)
    assert e[-1, :, 1].max() < 0.0055  # m of pressure head
