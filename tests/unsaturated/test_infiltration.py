"""One-dimensional transient infiltration towards the water table against Srivastava & Yeh (1991).

Srivastava, R. & Yeh, T.-C.J. (1991), Analytical solutions for one-dimensional, transient
infiltration toward the water table in homogeneous and layered soils, Water Resour. Res. 27(5),
753-762: exponential model, the water table at the base, the surface flux switched at t = 0 from
q_A to q_B. The series solution is derived in analytic.py and checked against the equation in
test_analytic_solutions.py. The model runs the column with recharge q_B from its own steady
state under q_A; backward Euler and upstream Kr are first order, so the error halves when the
cell size and the longest step both halve.
"""
from __future__ import annotations

import numpy as np

from bedflux.scenario.spec import Scenario
from bedflux.section.richards import RichardsSystem
from bedflux.section.richards_steps import SectionBoundaries, Stepper, run_steps, soil_water
from bedflux.section.discretisation import discretise

from .analytic import LayeredInfiltration

DAY = 86400.0
L, ALPHA, Q_A, Q_B = 2.0, 2.0, 0.1e-6, 0.8e-6
TIMES = np.array([0.1, 0.5, 2.0]) * DAY


def column(dz, recharge, layers):
    lower, upper = layers
    zones = [{"name": "lower", "kh": lower[0], "specific_storage": 0.0,
              "retention": {"model": "exponential", "alpha": ALPHA, "residual": 0.06, "saturated": 0.06 + lower[1]}}]
    if upper is not None:
        zones.append({"name": "upper", "kh": upper[0], "specific_storage": 0.0, "depth": upper[2],
                      "retention": {"model": "exponential", "alpha": ALPHA, "residual": 0.10,
                                    "saturated": 0.10 + upper[1]}})
    return discretise(Scenario.from_dict({
        "grid": {"x": [0, 0.1], "bottom": 0.0, "dx": 0.1, "dz": dz}, "ground": {"elevation": L},
        "zone": zones, "sides": {"bottom": {"head": 0.0}}, "recharge": {"rate": recharge}}))


def model_errors(dz, step, layers, exact):
    before = column(dz, Q_A, layers)
    st0 = Stepper(RichardsSystem(before, soil_water(before.scenario, before)), SectionBoundaries(before))
    start, _, state = st0.solve_steady(np.full(before.n, -0.5), 0.0, before.initial_active_set())
    after = column(dz, Q_B, layers)
    system = RichardsSystem(after, soil_water(after.scenario, after))
    st = Stepper(system, SectionBoundaries(after))
    z = after.grid.z_centre[after.grid.active]
    errs, closures = [], []

    def on_step(out, forcing, storage, t0, t1):
        from bedflux.section.fluxes import BUDGET_LINES
        from bedflux.section.richards_steps import step_budget
        closures.append(step_budget(system, out.evaluation, forcing, storage, BUDGET_LINES).closure)
        return closures[-1]

    def on_stop(out, forcing, t):
        errs.append(np.abs(out.psi - exact.pressure(z, t)).max())

    run_steps(st, start.psi, state, TIMES, step, on_step, on_stop)
    return np.array(errs), np.max(np.abs(closures))


def check(layers, exact, finest_error):
    e = [model_errors(dz, step, layers, exact) for dz, step in ((0.04, 7200.0), (0.02, 3600.0), (0.01, 1800.0))]
    errs = np.array([x[0] for x in e])
    orders = np.log2(errs[:-1] / errs[1:])
    # first order in dz and dt together; the steep early front is not yet fully asymptotic
    assert np.all(orders > 0.75) and np.all(orders[-1] > 0.8), (errs, orders)
    assert errs[-1].max() < finest_error, errs
    assert max(x[1] for x in e) < 1e-8  # water budget of every step (direct solves)


def test_homogeneous_column():
    layers = ((1e-6, 0.34), None)
    exact = LayeredInfiltration(L, ALPHA, (1e-6, 1e-6), (0.34, 0.34), L, Q_A, Q_B)
    check(layers, exact, finest_error=0.012)


def test_two_layer_column():
    # a coarser, more conductive upper metre over the lower metre
    layers = ((1e-6, 0.34), (2.5e-6, 0.30, 1.0))
    exact = LayeredInfiltration(L, ALPHA, (1e-6, 2.5e-6), (0.34, 0.30), 1.0, Q_A, Q_B)
    check(layers, exact, finest_error=0.012)
