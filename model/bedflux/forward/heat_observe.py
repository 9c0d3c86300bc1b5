"""Temperature observations (a logger at x, depth, time) and their sensitivities by the direct method.

A ``temperature`` observation is the model temperature at the point ``depth`` below the ground at
``x``, interpolated like a head (bilinear), and linearly in time between the heat steps around it.

Sensitivities to the zone thermal properties (``ZONE.thermal_conductivity``, ``.heat_capacity``,
``.dispersivity``) and to the flow parameters with an analytic rule in the linear model (zone
``kh``, ``kv``, ``specific_storage``, ``specific_yield``, ``recharge.rate``, a riparian
``max_rate``, a side ``head``, ``stream.leakance``) are carried along the heat steps with the
forward run's factors. Heat is linear in the temperatures ``theta`` for given water flows,
``A theta = b``; the flows enter ``A`` and ``b`` through the face flows ``F`` and the boundary
inflows ``q``, which the head sensitivities ``s = dh/dp`` of the flow run carry:

    dF/dp = C (s_lo - s_hi) + dC/dp (h_lo - h_hi),       dq/dp = -g s + dq/dp|_h

and ``dR/dp = d(b - A theta)/dp`` at fixed temperatures follows exactly from the assembly
(:class:`bedflux.section.heat.ResidualTangent`). With it

    steady:  A sigma = dR/dp
    step:    (C/dt + w A) sigma1 = C/dt sigma0 - (1 - w) A sigma0 - dC/dp (theta1 - theta0) / dt
                                   + w dR1/dp + (1 - w) dR0/dp

for ``sigma = dtheta/dp``: with steady flow (a steady run, or a transient run with constant
forcing) the heat operator and ``s`` are those of the one flow solve; in a run whose flow changes
(a flood) heat follows every flow step (backward Euler with the step's mean flows, ``w = 1``) and
``s`` of both ends of the step come from the flow's own direct method
(:class:`AlongFlow`, driven by :class:`bedflux.forward.sensitivity.Forward`). The active sets of
the flow run (submerged and seeping faces, ET branches) and the upstream side of each boundary
entry are held, so the derivative is that of the branch the run lies on.

Parameters without a rule (a layer depth, the stage) take central differences of whole runs.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bedflux.errors import InputError
from bedflux.forward.derivatives import DerivativeRule, face_conductance_derivative, residual_derivative, \
    term_inflow_derivative
from bedflux.section.discretisation import Section, Term
from bedflux.section.heat import FlowTangent, HeatOperator, ResidualTangent
from bedflux.section.heat_run import HeatModel, StepFactors, flow_is_steady, step_plan
from bedflux.section.steady import SteadySolution

#: Thermal parameter rules (``thermal-`` and the zone property).
THERMAL_RULES = ("thermal-thermal_conductivity", "thermal-heat_capacity", "thermal-dispersivity")


def require_heat(section: Section, has_temperature: bool, source: str) -> None:
    """Raise unless temperature observations can be predicted for this scenario."""
    if has_temperature and section.scenario.heat is None:
        raise InputError("temperature observations need a [heat] table in the scenario", source=source)


def thermal_parts(model: HeatModel, rules: list[DerivativeRule]) -> tuple[FlowTangent, np.ndarray]:
    """The cell-property part of the tangent (conductivity and dispersivity per cell and parameter)
    and ``d(storage)/dp`` (J/K per metre, n x P) of the thermal parameters (zero columns for the
    others). The cell properties are the zone values weighted by the zones' volume fractions, and
    the bulk capacity ``n rho_w c_w + (1 - n) c_s`` (grains' share ``1 - n``)."""
    cells = model.cells
    n, P = model.section.n, len(rules)
    dlam, dalpha, dstore = np.zeros((n, P)), np.zeros((n, P)), np.zeros((n, P))
    for j, rule in enumerate(rules):
        if rule.name == "thermal-thermal_conductivity":
            dlam[:, j] = cells.fractions[rule.zone]
        elif rule.name == "thermal-dispersivity":
            dalpha[:, j] = cells.fractions[rule.zone]
        elif rule.name == "thermal-heat_capacity":
            dstore[:, j] = model.grain_share * cells.fractions[rule.zone] * model.section.cell_volume
    return FlowTangent(conductivity=dlam, dispersivity=dalpha), dstore


def flow_tangent(model: HeatModel, base: FlowTangent, states: list[tuple[float, np.ndarray, list[Term], np.ndarray]],
                 rules: list[DerivativeRule], values: list[float]) -> FlowTangent:
    """The tangent of the heat operator built from the flow ``states`` = ``(weight, u, terms, s)``
    (``s = dh/dp``, n x P), in the order :func:`bedflux.section.heat.heat_operator` takes them."""
    section = model.section
    geo = model.geometry
    P = len(rules)
    dC = np.column_stack([np.concatenate(face_conductance_derivative(section, r, v)) for r, v in zip(rules, values)]
                         ) if P else np.zeros((geo.lo.size, 0))
    dF = np.zeros((geo.lo.size, P))
    term_flows = []
    for w, u, terms, s in states:
        C = geo.water_conductance[:, None]
        dF += w * (C * (s[geo.lo] - s[geo.hi]) + dC * (u[geo.lo] - u[geo.hi])[:, None])
        for term in terms:
            dq = -term.conductance[:, None] * s[term.cells]
            for j, (rule, v) in enumerate(zip(rules, values)):
                explicit = term_inflow_derivative(section, term, u, rule, v)
                if explicit is not None:
                    dq[:, j] += explicit
            term_flows.append(w * dq)
    return FlowTangent(base.conductivity, base.dispersivity, dF, term_flows)


def steady_flow_sensitivity(section: Section, sol: SteadySolution, rules: list[DerivativeRule],
                            values: list[float]) -> np.ndarray:
    """The head sensitivities ``dh/dp`` of the steady flow ``sol`` (n x P; zero for parameters
    without an effect on steady heads: thermal and storage), with its factor."""
    P = len(rules)
    if not P:
        return np.zeros((section.n, 0))
    dR = np.column_stack([residual_derivative(section, sol.terms, sol.u, r, v)[0] for r, v in zip(rules, values)])
    return sol.factor.solve(dR) if np.any(dR) else np.zeros((section.n, P))


class Readings:
    """Temperatures and their derivatives at the loggers, linear in time between the states."""

    def __init__(self, weights: sp.csr_matrix, times: np.ndarray, P: int):
        self.weights, self.times = weights, times
        self.values = np.full(times.size, np.nan)
        self.jacobian = np.zeros((times.size, P))
        self._prev: tuple[np.ndarray, np.ndarray] | None = None

    def record(self, t0: float, t1: float, theta: np.ndarray, sigma: np.ndarray) -> None:
        v1, j1 = self.weights @ theta, self.weights @ sigma
        if self._prev is None:
            at = self.times <= 0.0
            self.values[at], self.jacobian[at] = v1[at], j1[at]
        else:
            inside = (self.times > t0) & (self.times <= t1 + 1e-9 * max(t1, 1.0))
            if inside.any():
                a = (self.times[inside] - t0) / (t1 - t0)
                v0, j0 = self._prev
                self.values[inside] = (1 - a) * v0[inside] + a * v1[inside]
                self.jacobian[inside] = (1 - a)[:, None] * j0[inside] + a[:, None] * j1[inside]
        self._prev = (v1, j1)


def observe_temperatures(section: Section, sol: SteadySolution, weights: sp.csr_matrix, times: np.ndarray,
                         rules: list[DerivativeRule], values: list[float]) -> tuple[np.ndarray, np.ndarray]:
    """Model temperatures at the observations of a run with steady flow ``sol`` (the flow solve at
    t = 0 with its factor; ``weights`` per unknown, ``times`` in s, zeros in a steady run) and their
    derivatives with respect to the parameters ``rules`` at their SI ``values`` (n_obs x P)."""
    sc = section.scenario
    if sc.transient and not flow_is_steady(sc):
        raise ValueError("a run whose flow changes carries its temperatures along the flow (AlongFlow)")
    model = HeatModel(section)
    s = steady_flow_sensitivity(section, sol, rules, values)
    P = len(rules)
    op = model.operator([(1.0, sol.u, sol.terms)], sol.terms, 0.0)
    base, dstore = thermal_parts(model, rules)
    dresidual = ResidualTangent(op, flow_tangent(model, base, [(1.0, sol.u, sol.terms, s)], rules, values), P)

    t_ref = model.t_ref
    if not sc.transient:
        sources = model.sources(0.0, steady=True)
        factor = model.factor(op.A)
        theta = factor.solve(op.rhs(sources))
        sigma = factor.solve(dresidual(theta, sources)) if P else np.zeros((section.n, 0))
        return weights @ theta + t_ref, weights @ sigma
    theta, sigma = _start(model, op, dresidual, P)
    readings = Readings(weights, times, P)
    readings.record(0.0, 0.0, theta, sigma)
    factors = StepFactors(model, op)
    plan, _ = step_plan(sc.time)
    for t0, t1, w in plan:
        dt = t1 - t0
        f = factors(dt, w)
        theta1, _, _ = model.step(op, f, theta, t0, t1, w)
        if P:
            rhs = (model.storage / dt)[:, None] * sigma - (1.0 - w) * (op.A @ sigma)
            rhs -= dstore * ((theta1 - theta) / dt)[:, None]
            rhs += w * dresidual(theta1, model.sources(t1))
            if w != 1.0:
                rhs += (1.0 - w) * dresidual(theta, model.sources(t0))
            sigma = f.solve(rhs)
        theta = theta1
        readings.record(t0, t1, theta, sigma)
    return readings.values + t_ref, readings.jacobian


def _start(model: HeatModel, op: HeatOperator, dresidual, P: int, steady: bool = False
           ) -> tuple[np.ndarray, np.ndarray]:
    """Temperatures and sensitivities at t = 0: ``[heat] initial`` (uniform, no sensitivity) or
    the steady temperature of the t = 0 forcing (of a steady run's forcing when ``steady``)."""
    n = model.section.n
    if model.spec.initial is not None and not steady:
        return np.full(n, model.spec.initial - model.t_ref), np.zeros((n, P))
    sources = model.sources(0.0, steady=steady)
    factor = model.factor(op.A)
    theta = factor.solve(op.rhs(sources))
    return theta, (factor.solve(dresidual(theta, sources)) if P else np.zeros((n, P)))


class HeatCarrier:
    """Temperatures and their sensitivities carried with a flow run whose states change, a
    backward-Euler heat step after each flow step; the readings at the loggers are in
    :attr:`values` (degC) and :attr:`jacobian` (per SI parameter)."""

    def __init__(self, model: HeatModel, weights: sp.csr_matrix, times: np.ndarray, rules: list[DerivativeRule]):
        self.model = model
        self.P = len(rules)
        self.base, self.dstore = thermal_parts(model, rules)
        self.readings = Readings(weights, times, self.P)
        self.theta = self.sigma = None

    @property
    def values(self) -> np.ndarray:
        return self.readings.values + self.model.t_ref

    @property
    def jacobian(self) -> np.ndarray:
        return self.readings.jacobian

    def begin(self, op: HeatOperator, tangent: FlowTangent | None, steady: bool = False) -> None:
        """The start (t = 0) with the operator of the flow there."""
        dresidual = ResidualTangent(op, tangent, self.P) if self.P else None
        self.theta, self.sigma = _start(self.model, op, dresidual, self.P, steady)
        self.readings.record(0.0, 0.0, self.theta, self.sigma)

    def advance(self, op: HeatOperator, t0: float, t1: float, tangent: FlowTangent | None,
                dstore: np.ndarray, correction=None) -> None:
        """One backward-Euler heat step from ``t0`` to ``t1`` with the operator of the step's
        flows, its tangent and ``d(storage)/dp``; ``correction(theta1)`` is subtracted from the
        sensitivity's right-hand side (None: nothing)."""
        model, dt = self.model, t1 - t0
        factor = model.factor(model.step_matrix(op, dt, 1.0))
        theta1, _, _ = model.step(op, factor, self.theta, t0, t1, 1.0)
        if self.P:
            rhs = (model.storage / dt)[:, None] * self.sigma - dstore * ((theta1 - self.theta) / dt)[:, None]
            rhs += ResidualTangent(op, tangent, self.P)(theta1, model.sources(t1))
            if correction is not None:
                rhs -= correction(theta1)
            self.sigma = factor.solve(rhs)
        self.theta = theta1
        self.readings.record(t0, t1, self.theta, self.sigma)


class AlongFlow(HeatCarrier):
    """Temperatures and their sensitivities in a run whose flow changes: heat after every flow
    step, as :func:`bedflux.section.heat_run.heat_along_flow` runs it, carried with the head
    sensitivities of both ends of each step.

    Drive it with :meth:`start` (the flow at t = 0) and :meth:`step` (each flow step).
    """

    def __init__(self, section: Section, weights: sp.csr_matrix, times: np.ndarray,
                 rules: list[DerivativeRule], values: list[float]):
        super().__init__(HeatModel(section), weights, times, rules)
        self.rules, self.param_values = rules, values

    def _tangent(self, states) -> FlowTangent:
        return flow_tangent(self.model, self.base, states, self.rules, self.param_values)

    def start(self, u: np.ndarray, terms: list[Term], s: np.ndarray) -> None:
        op = self.model.operator([(1.0, u, terms)], terms, 0.0)
        self.begin(op, self._tangent([(1.0, u, terms, s)]) if self.P else None)

    def step(self, info, s0: np.ndarray, s1: np.ndarray) -> None:
        """One flow step (:class:`bedflux.section.transient.StepInfo`) with the head sensitivities
        at its start ``s0`` and end ``s1``."""
        states = [(info.theta, info.u1, info.terms1, s1)]
        if info.theta != 1.0:
            states.append((1.0 - info.theta, info.u0, info.terms0, s0))
        op = self.model.operator([st[:3] for st in states], info.terms1, info.t1)
        self.advance(op, info.t0, info.t1, self._tangent(states) if self.P else None, self.dstore)
