"""Transient two-dimensional recharge over a water table, run from a scenario, against a series solution.

The Kr transformation of Srivastava & Yeh (1991) and Tracy (2006) with the boundaries a scenario
states: a box 2 m x 2 m of one exponential-model soil, the water table at the base
(``bottom = {head = 0}``), hydrostatic sides (``{head = 0}``: psi = -z), at rest
(``[initial] head = 0``), and recharge on the whole top from t = 0. The sides hold the pressure
under the recharge down, so the flow is two-dimensional. The series solution (problem 3 of
analytic.py) is checked against the equation below, and against the one-dimensional Srivastava &
Yeh solution in the middle of a wide box.

The model runs through ``simulate`` with ``[time] step`` (the longest step) halved with the cells:
backward Euler and upstream Kr are first order. The largest error sits in the top cells at the
sides, where the recharge meets the held side pressure (the gradient is singular at the corner),
so the order approaches 1 more slowly than in the interior (docs/verification.md).
"""
from __future__ import annotations

import numpy as np
import pytest

from bedflux.scenario.spec import Scenario
from bedflux.section.simulate import simulate

from .analytic import BoxRecharge, LayeredInfiltration

A = L = 2.0
ALPHA, KS, RESIDUAL, SATURATED, Q = 1.0, 2.5e-6, 0.05, 0.40, 7.5e-7
TIMES = (7200.0, 28800.0)  # 0.19 and 0.77 of the slowest mode's decay time (37,400 s)


def test_series_satisfies_the_equation_and_the_boundaries():
    sol = BoxRecharge(A, L, ALPHA, KS, SATURATED - RESIDUAL, Q)
    h, dt = 1e-3, 1.0
    x = np.array([0.3, 0.9, 1.4])[:, None] + np.zeros((1, 3))
    z = np.array([0.2, 1.0, 1.7])[None, :] + np.zeros((3, 1))
    xs = np.linspace(0.1, A - 0.1, 7)
    for t in (1800.0, 7200.0, 28800.0):
        def kr(x, z, t=t):
            return sol.relative_conductivity(x, z, t)

        def H(x, z):
            return np.log(kr(x, z)) / ALPHA + z

        def K(x, z):
            return KS * kr(x, z)

        div = ((K(x + h / 2, z) * (H(x + h, z) - H(x, z)) - K(x - h / 2, z) * (H(x, z) - H(x - h, z)))
               + (K(x, z + h / 2) * (H(x, z + h) - H(x, z)) - K(x, z - h / 2) * (H(x, z) - H(x, z - h)))) / h**2
        rate = (SATURATED - RESIDUAL) * (kr(x, z, t + dt) - kr(x, z, t - dt)) / (2 * dt)
        assert np.max(np.abs(rate - div)) < 1e-4 * np.max(np.abs(rate)), t
        # water table at the base, hydrostatic sides
        assert np.allclose(kr(xs, 0 * xs), 1.0, atol=1e-12, rtol=0)
        zs = np.linspace(0.1, 1.9, 5)
        assert np.allclose(kr(0 * zs, zs), np.exp(-ALPHA * zs), atol=1e-12, rtol=0)
        assert np.allclose(kr(A + 0 * zs, zs), np.exp(-ALPHA * zs), atol=1e-12, rtol=0)
        # downward flux Ks (Kr'/alpha + Kr) = q on the top (one-sided second-order slope); the
        # truncated sine series of the constant flux converges as 1/(modes x) towards the corners
        e = 1e-5
        k = np.array([kr(xs, L - i * e + 0 * xs) for i in range(3)])
        slope = -(-3 * k[0] + 4 * k[1] - k[2]) / (2 * e)
        assert np.allclose(KS * (slope / ALPHA + k[0]), Q, rtol=1e-3, atol=0), t
    # at rest before the recharge reaches down
    assert abs(sol.relative_conductivity(1.0, 1.0, 60.0) - np.exp(-ALPHA)) < 1e-12


def test_series_matches_one_dimension_in_a_wide_box():
    # Srivastava & Yeh (1991) with q_A = 0 and q_B = q: the middle of a box 40 m wide
    wide = BoxRecharge(40.0, L, ALPHA, KS, SATURATED - RESIDUAL, Q)
    column = LayeredInfiltration(L, ALPHA, (KS, KS), (SATURATED - RESIDUAL,) * 2, L, 0.0, Q)
    z = np.linspace(0.05, L - 0.05, 12)
    for t in TIMES:
        mid = wide.relative_conductivity(20.0 + 0 * z, z, t)
        assert np.max(np.abs(mid - column.relative_conductivity(z, t))) < 1e-6, t


def scenario(n: int, step: float) -> Scenario:
    retention = {"model": "exponential", "alpha": ALPHA, "residual": RESIDUAL, "saturated": SATURATED}
    return Scenario.from_dict({
        "grid": {"x": [0.0, A], "bottom": 0.0, "dx": A / n, "dz": L / n}, "ground": {"elevation": L},
        "zone": [{"name": "soil", "kh": KS, "kv": KS, "specific_storage": 0.0, "retention": retention}],
        "sides": {"left": {"head": 0.0}, "right": {"head": 0.0}, "bottom": {"head": 0.0}},
        "recharge": {"rate": Q}, "initial": {"head": 0.0},
        "time": {"end": TIMES[-1], "step": step, "output_every": TIMES[0]}})


def model_errors(n: int, step: float) -> np.ndarray:
    """Largest errors in Kr and in psi (m) over all cells at each of :data:`TIMES`, rows by time."""
    ds = simulate(scenario(n, step))
    sol = BoxRecharge(A, L, ALPHA, KS, SATURATED - RESIDUAL, Q)
    x, z = np.meshgrid(ds.x.values, ds.z.values)
    # the whole top takes the recharge as a flux throughout (no seepage face), every step's budget closes
    assert np.allclose(ds.top_flux.values, -Q, rtol=1e-12, atol=0)
    assert np.max(np.abs(ds.step_closure.values)) < 1e-8
    errors = []
    for t in TIMES:
        psi = ds.pressure_head.sel(time=t).values
        kr = sol.relative_conductivity(x, z, t)
        errors.append((np.abs(np.exp(ALPHA * psi) - kr).max(), np.abs(psi - np.log(kr) / ALPHA).max()))
    return np.array(errors)


def refinement(levels):
    """Errors (level, time, Kr/psi) and the orders log2(e_i / e_{i+1}), cells and step halved."""
    e = np.array([model_errors(10 * 2**k, 1200.0 / 2**k) for k in levels])
    return e, np.log2(e[:-1] / e[1:])


def test_box_recharge_first_order():
    # cells 20, 10, 5 cm; [time] step 20, 10, 5 min (measured in docs/verification.md)
    e, orders = refinement((0, 1, 2))
    # measured orders 0.57 to 0.86, then 0.74 to 0.84
    assert np.all(orders > 0.5) and np.all(orders[-1] > 0.7), (e, orders)
    assert e[-1, :, 1].max() < 0.007  # m of pressure head


@pytest.mark.slow
def test_box_recharge_convergence_study():
    e, orders = refinement((0, 1, 2, 3))
    assert np.all(np.diff(e, axis=0) < 0), e
    assert np.all(orders[-1] > 0.75), (e, orders)
    assert e[-1, :, 1].max() < 0.004  # m of pressure head
