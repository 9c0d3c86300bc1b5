"""Temperature observations (a logger at x, depth, time) and their sensitivities to the zone
thermal properties.

A ``temperature`` observation is the model temperature at the point ``depth`` below the ground at
``x``, interpolated like a head (bilinear), and linearly in time between the heat steps around it.
In a run whose flow changes (a flood), heat follows every flow step and the temperatures come
without analytic sensitivities (every Jacobian column by central differences of whole runs).

With steady flow (a steady run, or a transient run with constant forcing), sensitivities to
``ZONE.thermal_conductivity``, ``ZONE.heat_capacity`` and ``ZONE.dispersivity``
(the direct method, carried along the heat steps with the forward run's factors):

    steady:  A s = dR/dp,        R = b - A theta
    step:    (C/dt + w A) s1 = C/dt s0 - (1 - w) A s0 - dC/dp (theta1 - theta0) / dt
                               + w dR1/dp + (1 - w) dR0/dp

``dR/dp`` at fixed temperatures is the central difference of the operator's assembly (no solve)
over a step of 1e-6 of the value (of a dispersivity: the step that changes the effective
conductivity by 1e-6 of the conductivity): the cell properties are linear in the zone values, the
operator smooth in them (the exponential fitting and the harmonic means), so its truncation error
is about 1e-12 and its round-off about 1e-10, relative. ``dC/dp`` is exact. Temperatures do not depend on
the other parameters through this path: a fit with temperature observations takes those columns
by central differences of the whole run.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from bedflux.errors import InputError
from bedflux.scenario.heat import WATER_HEAT_CAPACITY
from bedflux.section.discretisation import Section
from bedflux.section.heat import ThermalCells
from bedflux.section.heat_run import HeatModel, StepFactors, flow_is_steady, heat_along_flow, step_plan
from bedflux.section.steady import solve_steady

#: Relative step of the central difference of the heat operator's assembly.
ASSEMBLY_STEP = 1e-6
#: Scale of a zone thermal property whose value is 0 (dispersivity, m): the step is this times
#: :data:`ASSEMBLY_STEP`.
ZERO_SCALE = {"thermal_conductivity": 1.0, "heat_capacity": 1e6, "dispersivity": 1e-2}


def require_heat(section: Section, has_temperature: bool, source: str) -> None:
    """Raise unless temperature observations can be predicted for this scenario."""
    sc = section.scenario
    if not has_temperature:
        return
    if sc.heat is None:
        raise InputError("temperature observations need a [heat] table in the scenario", source=source)
    if sc.variably_saturated:
        raise InputError("temperature observations need saturated (linear) zones: [heat] does not run with "
                         "retention in this release", source=source)


def perturbed_cells(cells: ThermalCells, prop: str, zone: int, step: float) -> ThermalCells:
    """The cells with zone ``zone``'s ``prop`` changed by ``step`` (the properties are linear in it)."""
    share = cells.fractions[zone] * step
    if prop == "thermal_conductivity":
        return replace(cells, conductivity=cells.conductivity + share)
    if prop == "dispersivity":
        return replace(cells, dispersivity=cells.dispersivity + share)
    return replace(cells, capacity=cells.capacity + (1.0 - cells.porosity) * share)


def observe_temperatures(section: Section, weights: sp.csr_matrix, times: np.ndarray,
                         params: list[tuple[str, int, float]]) -> tuple[np.ndarray, np.ndarray]:
    """Model temperatures at the observations (``weights`` per unknown, ``times`` in s; NaN times
    in a steady run) and their derivatives with respect to ``params`` = ``(property, zone, value)``.
    """
    sc = section.scenario
    model = HeatModel(section)
    if sc.transient and not flow_is_steady(sc):
        if params:
            raise ValueError("analytic thermal sensitivities need a steady flow")
        return _along_flow(section, model, weights, times), np.zeros((times.size, 0))
    sol = solve_steady(section, 0.0, method="direct")
    flows = [(1.0, sol.u, sol.terms)]
    op = model.operator(flows, sol.terms, 0.0)
    P = len(params)
    pairs = []
    q_max = float(np.abs(model.geometry.face_flow(sol.u) / model.geometry.area).max(initial=0.0))
    for prop, zone, value in params:
        h = ASSEMBLY_STEP * (abs(value) if value != 0 else ZERO_SCALE[prop])
        if prop == "dispersivity" and q_max > 0:
            # the step that changes the effective conductivity lambda + rho_w c_w alpha |q| by about
            # ASSEMBLY_STEP of lambda (a step in alpha itself would change it by far less)
            h = ASSEMBLY_STEP * float(np.median(model.cells.conductivity)) / (WATER_HEAT_CAPACITY * q_max)
        up = HeatModel(section, perturbed_cells(model.cells, prop, zone, h))
        down = HeatModel(section, perturbed_cells(model.cells, prop, zone, -h))
        pairs.append((up.operator(flows, sol.terms, 0.0), down.operator(flows, sol.terms, 0.0),
                      (up.storage - down.storage) / (2 * h), 2 * h))

    def dresidual(theta: np.ndarray, sources: dict) -> np.ndarray:
        out = np.zeros((section.n, P))
        for j, (opp, opm, _, width) in enumerate(pairs):
            out[:, j] = ((opp.rhs(sources) - opp.A @ theta) - (opm.rhs(sources) - opm.A @ theta)) / width
        return out

    t_ref = model.t_ref
    if not sc.transient:
        sources = model.sources(0.0, steady=True)
        factor = model.factor(op.A)
        theta = factor.solve(op.rhs(sources))
        s = factor.solve(dresidual(theta, sources)) if P else np.zeros((section.n, 0))
        return weights @ theta + t_ref, weights @ s
    ts = sc.time
    s0_sources = model.sources(0.0)
    if model.spec.initial is None:
        factor = model.factor(op.A)
        theta = factor.solve(op.rhs(s0_sources))
        s = factor.solve(dresidual(theta, s0_sources)) if P else np.zeros((section.n, 0))
    else:
        theta = np.full(section.n, model.spec.initial - t_ref)
        s = np.zeros((section.n, P))
    values = np.full(times.size, np.nan)
    jac = np.zeros((times.size, P))
    at0 = times <= 0.0
    v_prev, j_prev = weights @ theta, weights @ s
    values[at0], jac[at0] = v_prev[at0], j_prev[at0]
    factors = StepFactors(model, op)
    plan, _ = step_plan(ts)
    for t0, t1, w in plan:
        dt = t1 - t0
        f = factors(dt, w)
        theta1, _, _ = model.step(op, f, theta, t0, t1, w)
        if P:
            rhs = (model.storage / dt)[:, None] * s - (1.0 - w) * (op.A @ s)
            rhs -= np.column_stack([c for _, _, c, _ in pairs]) * ((theta1 - theta) / dt)[:, None]
            rhs += w * dresidual(theta1, model.sources(t1))
            if w != 1.0:
                rhs += (1.0 - w) * dresidual(theta, model.sources(t0))
            s = f.solve(rhs)
        theta = theta1
        v1, j1 = weights @ theta, weights @ s
        inside = (times > t0) & (times <= t1 + 1e-9 * max(t1, 1.0))
        if inside.any():
            a = (times[inside] - t0) / dt
            values[inside] = (1 - a) * v_prev[inside] + a * v1[inside]
            jac[inside] = (1 - a)[:, None] * j_prev[inside] + a[:, None] * j1[inside]
        v_prev, j_prev = v1, j1
    return values + t_ref, jac


def _along_flow(section: Section, model: HeatModel, weights: sp.csr_matrix, times: np.ndarray) -> np.ndarray:
    """Temperatures at the observations of a run whose flow changes (heat after every flow step),
    linear in time between the steps around each observation."""
    values = np.full(times.size, np.nan)
    prev: dict[str, np.ndarray] = {}

    def on_heat(t0, t1, theta, _budget, _gross) -> None:
        v1 = weights @ theta
        if t1 == 0.0:
            at0 = times <= 0.0
            values[at0] = v1[at0]
        else:
            inside = (times > t0) & (times <= t1 + 1e-9 * max(t1, 1.0))
            if inside.any():
                a = (times[inside] - t0) / (t1 - t0)
                values[inside] = (1 - a) * prev["v"][inside] + a * v1[inside]
        prev["v"] = v1

    heat_along_flow(section, model, on_heat)
    return values + model.t_ref
