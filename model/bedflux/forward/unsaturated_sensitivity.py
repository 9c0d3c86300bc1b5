"""Sensitivities of a variably saturated run (Richards' equation) by the direct method.

The discrete equations of a run are ``F(psi; p) = 0`` at a steady state and
``F_n(psi_n, psi_{n-1}; p) = 0`` for each backward-Euler step (:mod:`bedflux.section.richards`).
Differentiating them at the converged states of the base run gives the sensitivities
``s = dpsi/dp`` (Kelley 1995, sec. 5.4, for the steady Newton system; Hindmarsh & Serban 2002,
the sensitivity equations of an implicit time stepper; both from memory):

    steady:     J s = -dF/dp
    transient:  J_n s_n = -(dF_n/dpsi_{n-1} s_{n-1} + dF_n/dp + dF_n/dt0 dt0/dp + dF_n/dt1 dt1/dp)

with ``J`` and ``J_n`` the Newton Jacobians at the converged states (exact derivatives of ``F``:
upstream Kr with its pressure derivative, Feddes uptake, mixed-form storage). Each state is
factorised once and the factor serves every parameter. The active sets (submerged faces, seepage
faces), the branches of the step control and the number of steps are those of the base run, so the
derivative is that of the branch the solution lies on, as in the linear model
(:mod:`bedflux.forward.sensitivity`). The lengths of the steps are not fixed: the error control
(:func:`bedflux.section.richards_steps.run_steps`) picks each from the water content of the last
steps, so where it, not ``[time] step`` or a stop, sets a step (water content changing fast, as
where a seepage face drains a bank) the step ends move with the parameters.
:class:`StepSensitivities` carries their derivatives ``dt0/dp``, ``dt1/dp`` (the run
differentiates its error estimate at its largest cell) and adds their terms: the storage rate over
the step length, and the forcing's rate in time.

``dF/dp`` of each parameter kind with an analytic rule:

- a zone's ``kh`` / ``kv``: the saturated face conductances ``C`` (harmonic means over the
  volume fractions of the zones, as in the linear model) times the face's upstream ``Kr``:
  ``d(inflow)/dp = dC/dp Kr_up dh``; boundary terms ``Kr (r - g u)`` likewise through ``dg/dp``;
- ``ZONE.retention.alpha`` / ``.n``: through ``Kr`` of the upstream cells of faces and boundary
  terms (the boundary's own pressure head where water flows in) and, in a step, through the
  water content ``theta(psi_n) - theta(psi_{n-1})`` and the elastic storage
  ``V Ss theta(psi_{n-1}) / theta_s`` (:func:`bedflux.section.retention.van_genuchten_parameter_derivatives`);
- a zone's ``specific_storage``: the elastic storage of a step; ``specific_yield`` does not act in a
  variably saturated run (zero);
- ``recharge.rate`` (a flux on the exposed top faces) and ``stream.leakance`` (the bed conductance
  of the submerged faces, times its ``Kr``).

Observations are linear in the heads (``head``, ``vhg``); the bed flux under a seepage meter is
``-Kr (r - g u) / w`` of the stream-top entries, differentiated here in the state (with ``dKr/dpsi``
where the cell's Kr applies) and in the parameter. Other parameters (a layer depth, the stage,
a side head, the riparian rate) have no rule here and :class:`~bedflux.forward.sensitivity.Forward`
takes them by central differences.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from bedflux.forward.observe import Operators, _seepage_weights, predict
from bedflux.forward.derivatives import (
    DerivativeRule,
    face_conductance_derivative,
    term_conductance_derivative,
)
from bedflux.section.discretisation import Section
from bedflux.section.retention import SoilWater
from bedflux.section.richards import Evaluation, RichardsSystem, StepForcing, Storage
from bedflux.section.richards_newton import NEWTON, JacobianSolver
from bedflux.section.richards_run import _start, _stops
from bedflux.section.richards_steps import (
    SectionBoundaries,
    Stepper,
    run_steps,
    soil_water,
)


@dataclass
class Counts:
    """Work of one run: factorizations and solves of the sensitivity systems."""

    factorizations: int = 0
    solves: int = 0


class ResidualDerivatives:
    """``d(inflow)/dp`` and ``d(storage rate)/dp`` of the Richards residual at fixed pressure heads.

    Parameters
    ----------
    system
        The Richards operator of the run.
    rules, values
        The parameters (rules named in
        :data:`bedflux.forward.sensitivity.VARIABLY_SATURATED_RULES`) and their SI values.
    """

    def __init__(self, system: RichardsSystem, rules: list[DerivativeRule], values: list[float]):
        self.system = system
        self.rules = rules
        self.values = values
        section = system.section
        owner = section.materials.zone[section.grid.active]
        self.in_zone = [owner == r.zone for r in rules]
        self.face_dC = [np.concatenate(face_conductance_derivative(section, r, v)) for r, v in zip(rules, values)]

    @property
    def n_params(self) -> int:
        return len(self.rules)

    def _kr_parameter(self, rule: DerivativeRule, d) -> np.ndarray | None:
        if rule.name == "retention-alpha":
            return d.kr_alpha
        if rule.name == "retention-n":
            return d.kr_n
        return None

    def term_flows(self, ev: Evaluation, forcing: StepForcing) -> list[np.ndarray]:
        """Per boundary term, ``d(flow)/dp`` of its entries (entries x parameters) at fixed heads."""
        sys_ = self.system
        section = sys_.section
        u = sys_.head_u(ev.psi)
        cell_d = sys_.soil.parameter_derivatives(ev.psi) if self._has_retention() else None
        out = []
        for term, fpsi, tkr, from_face in zip(forcing.terms, forcing.face_psi, ev.term_kr, ev.term_from_face):
            base = term.r - term.conductance * u[term.cells]
            face_d = None
            D = np.zeros((term.cells.size, self.n_params))
            for j, (rule, value) in enumerate(zip(self.rules, self.values)):
                dg = term_conductance_derivative(section, term, rule, value)
                if dg is not None:
                    # r = g H: d(Kr (r - g u))/dg = Kr (H - u)
                    D[:, j] = tkr * dg * (term.r / np.where(term.conductance > 0, term.conductance, 1.0) - u[term.cells])
                elif rule.name == "recharge" and term.kind == "recharge":
                    D[:, j] = section.grid.dx[term.column_or_row] if term.width is None else term.width
                elif rule.name in ("retention-alpha", "retention-n"):
                    if face_d is None and from_face.any():
                        face_d = self._face_parameter_derivatives(fpsi, term.cells, from_face)
                    own = self._kr_parameter(rule, cell_d)[term.cells]
                    dkr = own if face_d is None else np.where(from_face, self._kr_parameter(rule, face_d), own)
                    dkr = np.where((term.conductance > 0) & self.in_zone[j][term.cells], dkr, 0.0)
                    D[:, j] = dkr * base
            out.append(D)
        return out

    def _has_retention(self) -> bool:
        return any(r.name in ("retention-alpha", "retention-n") for r in self.rules)

    def _face_parameter_derivatives(self, fpsi: np.ndarray, cells: np.ndarray, from_face: np.ndarray):
        """Parameter derivatives of Kr of the cells' soil at the boundary's pressure heads."""
        s = self.system.soil
        sub = SoilWater(s.van_genuchten[cells], s.alpha[cells], s.n[cells], s.theta_r[cells], s.theta_s[cells])
        return sub.parameter_derivatives(np.where(from_face, np.nan_to_num(fpsi), 0.0))

    def face_flows(self, ev: Evaluation) -> np.ndarray:
        """``d(flow)/dp`` of every face (lo to hi; faces x P) at fixed heads."""
        sys_ = self.system
        u = sys_.head_u(ev.psi)
        dh = u[sys_.lo] - u[sys_.hi]
        cell_d = sys_.soil.parameter_derivatives(ev.psi) if self._has_retention() else None
        up = np.where(ev.face_up_is_lo, sys_.lo, sys_.hi)
        out = np.zeros((sys_.lo.size, self.n_params))
        for j, rule in enumerate(self.rules):
            dq = self.face_dC[j] * ev.face_kr * dh
            kr_p = self._kr_parameter(rule, cell_d) if cell_d is not None else None
            if kr_p is not None:
                dq = dq + sys_.conductance * np.where(self.in_zone[j][up], kr_p[up], 0.0) * dh
            out[:, j] = dq
        return out

    def inflow(self, ev: Evaluation, forcing: StepForcing, term_flows: list[np.ndarray]) -> np.ndarray:
        """``d(inflow)/dp`` per unknown and parameter (n x P)."""
        sys_ = self.system
        n, P = sys_.n, self.n_params
        out = np.zeros((n, P))
        faces = self.face_flows(ev)
        for j in range(P):
            out[:, j] = np.bincount(sys_.hi, weights=faces[:, j], minlength=n) - np.bincount(sys_.lo, weights=faces[:, j],
                                                                                          minlength=n)
        for term, D in zip(forcing.terms, term_flows):
            for j in range(P):
                out[:, j] += np.bincount(term.cells, weights=D[:, j], minlength=n)
        return out

    def water_content(self, ev: Evaluation) -> np.ndarray:
        """``d(theta)/dp`` of every cell at fixed pressure heads (n x P)."""
        out = np.zeros((self.system.n, self.n_params))
        if not self._has_retention():
            return out
        d = self.system.soil.parameter_derivatives(ev.psi)
        for j, rule in enumerate(self.rules):
            if rule.name in ("retention-alpha", "retention-n"):
                key = "theta_alpha" if rule.name == "retention-alpha" else "theta_n"
                out[:, j] = np.where(self.in_zone[j], getattr(d, key), 0.0)
        return out

    def storage_rate(self, ev: Evaluation, storage: Storage) -> np.ndarray:
        """``d(storage rate)/dp`` of a backward-Euler step (n x P), mixed form:
        ``(V (theta(psi) - theta(psi0)) + V Ss theta(psi0) / theta_s (psi - psi0)) / dt``."""
        sys_ = self.system
        out = np.zeros((sys_.n, self.n_params))
        change = ev.psi - storage.psi0
        d1 = d0 = None
        if self._has_retention():
            d1 = sys_.soil.parameter_derivatives(ev.psi)
            d0 = sys_.soil.parameter_derivatives(storage.psi0)
        V = sys_.volume
        for j, rule in enumerate(self.rules):
            if rule.name in ("retention-alpha", "retention-n"):
                key = "theta_alpha" if rule.name == "retention-alpha" else "theta_n"
                t1, t0 = getattr(d1, key), getattr(d0, key)
                col = V * (t1 - t0) + V * sys_.ss * t0 / sys_.soil.theta_s * change
                out[:, j] = np.where(self.in_zone[j], col, 0.0) / storage.dt
            elif rule.name == "zone-specific_storage":
                section = sys_.section
                dss = section.materials.derivative("specific_storage", rule.zone)[section.grid.active]
                theta0 = storage.theta0
                out[:, j] = V * dss * theta0 / sys_.soil.theta_s * change / storage.dt
        return out

    def lag(self, ev: Evaluation, storage: Storage) -> np.ndarray:
        """``dF_n/dpsi_{n-1}`` (diagonal, per unknown) of the mixed-form storage."""
        sys_ = self.system
        p0 = sys_.soil.properties(storage.psi0)
        V = sys_.volume
        return (-V * p0.capacity + V * sys_.ss * p0.capacity / sys_.soil.theta_s * (ev.psi - storage.psi0)
                - storage.elastic) / storage.dt


def _solve(solver: JacobianSolver, J: sp.csr_matrix, B: np.ndarray, counts: Counts) -> np.ndarray:
    """``J X = B`` for every column of ``B`` with one factorization of ``J``."""
    solve = solver.factor(J)
    counts.factorizations += 1
    counts.solves += B.shape[1]
    if solver.method == "direct":
        return solve(B)
    return np.column_stack([solve(B[:, j]) for j in range(B.shape[1])])


def flow_derivatives(system: RichardsSystem, derivs: ResidualDerivatives, ev: Evaluation, forcing: StepForcing,
                     s: np.ndarray, term_flows: list[np.ndarray] | None) -> tuple[np.ndarray, list[np.ndarray]]:
    """``d(flow)/dp`` of every face (lo to hi; faces x P) and of every entry of the flow view's
    terms (the uptake last, when there is one) for pressure-head sensitivities ``s``:

        F = C Kr_up (u_lo - u_hi):  dF = C Kr_up (s_lo - s_hi) + C dKr/dpsi_up s_up (u_lo - u_hi) + dF|_psi
        q = Kr (r - g u):           dq = (-Kr g + (r - g u) dKr/dpsi) s + dq|_psi  (dKr where Kr is the cell's)
        uptake q = -a(psi) q_pot:   dq = -q_pot da/dpsi s

    ``term_flows`` are the explicit parts of the terms (:meth:`ResidualDerivatives.term_flows`;
    None: no parameter acts on them)."""
    props = ev.props
    u = system.head_u(ev.psi)
    lo, hi = system.lo, system.hi
    c = system.conductance
    dkr_up = np.where(ev.face_up_is_lo, props.dkr[lo], props.dkr[hi])
    s_up = np.where(ev.face_up_is_lo[:, None], s[lo], s[hi])
    dF = (c * ev.face_kr)[:, None] * (s[lo] - s[hi]) + (c * (u[lo] - u[hi]) * dkr_up)[:, None] * s_up
    if derivs.n_params:
        dF += derivs.face_flows(ev)
    flows = []
    for k, (term, tkr, from_face) in enumerate(zip(forcing.terms, ev.term_kr, ev.term_from_face)):
        base = term.r - term.conductance * u[term.cells]
        own = (term.conductance > 0) & ~from_face
        dflow_du = -tkr * term.conductance + np.where(own, base * props.dkr[term.cells], 0.0)
        dq = dflow_du[:, None] * s[term.cells]
        if term_flows is not None:
            dq = dq + term_flows[k]
        flows.append(dq)
    if forcing.uptake is not None:
        _, da = forcing.uptake.reduction(ev.psi)
        flows.append(-(forcing.uptake.potential * da)[:, None] * s[forcing.uptake.cells])
    return dF, flows


def _vertical_flux_derivative(system: RichardsSystem, dF: np.ndarray, terms: list, flows: list[np.ndarray]
                              ) -> np.ndarray:
    """``d(qz)/dp`` of the cell-centre vertical flux (n x P): half the sum of the vertical faces'
    ``dF / area`` and of the top (``-dq / dx``) and bottom (``+dq / dx``) boundary entries', as
    :func:`bedflux.section.fluxes.derive` forms ``qz``."""
    section = system.section
    g, vf, n = section.grid, section.vfaces, system.n
    dFv = 0.5 * dF[system.n_hfaces:] / vf.area[:, None]
    cells = [vf.lo, vf.hi]
    values = [dFv, dFv]
    for term, dq in zip(terms, flows):
        if term.face in ("top", "bottom"):
            sign = 1.0 if term.face == "bottom" else -1.0
            cells.append(term.cells)
            values.append(sign * 0.5 * dq / g.dx[term.column_or_row][:, None])
    idx = np.concatenate(cells)
    scatter = sp.csr_matrix((np.ones(idx.size), (idx, np.arange(idx.size))), shape=(n, idx.size))
    return np.asarray(scatter @ np.vstack(values))


def observation_jacobian(system: RichardsSystem, derivs: ResidualDerivatives, ops: Operators, ev: Evaluation,
                         forcing: StepForcing, s: np.ndarray, term_flows: list[np.ndarray],
                         source: str) -> np.ndarray:
    """``d(observation)/dp`` (n_obs x P) of a state with sensitivities ``s``."""
    kind = ops.kind
    seep = kind == "seepage"
    scale = np.where(seep, 0.0, 1.0)
    vhg = kind == "vhg"
    scale[vhg] = 1.0 / ops.table["depth"].to_numpy()[vhg]
    out = (sp.diags(scale) @ ops.head_weights) @ s
    thermal = kind == "thermal_flux"
    if thermal.any():
        dF, flows = flow_derivatives(system, derivs, ev, forcing, s, term_flows)
        dqz = _vertical_flux_derivative(system, dF, forcing.terms, flows)
        out[thermal] = (ops.head_weights @ dqz)[thermal]
    if not seep.any():
        return out
    k = next(i for i, t in enumerate(forcing.terms) if t.kind == "stream" and t.face == "top")
    term, tkr, from_face = forcing.terms[k], ev.term_kr[k], ev.term_from_face[k]
    view, terms = system.flow_view(ev, forcing)
    w, _ = _seepage_weights(view, ops, terms, source)
    u = system.head_u(ev.psi)
    base = term.r - term.conductance * u[term.cells]
    own = (term.conductance > 0) & ~from_face
    dflow_du = -tkr * term.conductance + np.where(own, base * ev.props.dkr[term.cells], 0.0)
    dflow = dflow_du[:, None] * s[term.cells] + term_flows[k]
    width = system.section.grid.dx[term.column_or_row] if term.width is None else term.width
    out[seep] = (w @ (-dflow / width[:, None]))[seep]
    return out


class StepSensitivities:
    """The direct method along the steps of :func:`bedflux.section.richards_steps.run_steps`
    (its :class:`~bedflux.section.richards_steps.StepTangent`): per candidate step

        J_n s_n = -(dF_n/dpsi_{n-1} s_{n-1} + dF_n/dp + dF_n/dt0 dt0/dp + dF_n/dt1 dt1/dp)

    where the step's start and end move with the parameters (the error control picks step lengths
    from the water content): ``dF/dt1 = -storage_rate / dt + d(-inflow)/dt1`` and
    ``dF/dt0 = storage_rate / dt + d(-inflow)/dt0``, the forcing's parts by central differences
    in time of the residual at the step's pressure heads and active set."""

    def __init__(self, system: RichardsSystem, boundaries: SectionBoundaries, derivs: ResidualDerivatives,
                 solver: JacobianSolver, counts: Counts, ev: Evaluation, s: np.ndarray, flows):
        self.system, self.boundaries, self.derivs = system, boundaries, derivs
        self.solver, self.counts = solver, counts
        self.s, self.flows = s, flows
        self.theta_derivative = self._theta_derivative(ev, s)
        self.dt0 = self.dt1 = np.zeros(derivs.n_params)
        self._candidate = None

    def _theta_derivative(self, ev: Evaluation, s: np.ndarray) -> np.ndarray:
        return ev.props.capacity[:, None] * s + self.derivs.water_content(ev)

    def _forcing_rate(self, psi: np.ndarray, state, t0: float, t1: float, end: bool) -> np.ndarray:
        """``d(-inflow)/dt`` of the step's end (``end``) or start at fixed pressure heads."""
        delta = 1e-3 * (t1 - t0)
        res = []
        for sign in (1.0, -1.0):
            a, b = (t0, t1 + sign * delta) if end else (t0 + sign * delta, t1)
            res.append(self.system.evaluate(psi, self.boundaries.forcing(a, b, state, steady=False), None).residual)
        return (res[0] - res[1]) / (2.0 * delta)

    def step(self, out, forcing: StepForcing, storage: Storage, state, t0: float, t1: float,
             dt0: np.ndarray, dt1: np.ndarray) -> np.ndarray:
        ev1 = out.evaluation
        derivs = self.derivs
        flows = derivs.term_flows(ev1, forcing)
        rhs = (derivs.inflow(ev1, forcing, flows) - derivs.storage_rate(ev1, storage)
               - derivs.lag(ev1, storage)[:, None] * self.s)
        for dt, end in ((dt1, True), (dt0, False)):
            if np.any(dt != 0.0):
                sign = -1.0 if end else 1.0
                rate = sign * ev1.storage_rate / storage.dt + self._forcing_rate(ev1.psi, state, t0, t1, end)
                rhs -= np.outer(rate, dt)
        s = _solve(self.solver, self.system.jacobian(ev1, forcing, storage, newton=True), rhs, self.counts)
        theta = self._theta_derivative(ev1, s)
        self._candidate = (s, flows, theta, dt0, dt1)
        return theta

    def accept(self) -> None:
        self.s, self.flows, self.theta_derivative, self.dt0, self.dt1 = self._candidate


def run_with_sensitivities(section: Section, ops: Operators, rules: list[DerivativeRule], values: list[float],
                           source: str = "observations") -> tuple[np.ndarray, np.ndarray, Counts]:
    """Predicted observations of a variably saturated run and their derivatives with respect to
    the parameters (SI), the steps landing on the observation times.

    Returns
    -------
    predicted, jacobian, counts
        ``(n_obs,)``, ``(n_obs, P)`` and the work of the sensitivity solves.
    """
    sc = section.scenario
    system = RichardsSystem(section, soil_water(sc, section))
    boundaries = SectionBoundaries(section)
    stepper = Stepper(system, boundaries, NEWTON, JacobianSolver(section.n))
    sens_solver = JacobianSolver(section.n)
    derivs = ResidualDerivatives(system, rules, values)
    P = len(rules)
    counts = Counts()
    times = ops.table["time"].to_numpy() if sc.transient else np.zeros(ops.n)
    d = np.full(ops.n, np.nan)
    J = np.zeros((ops.n, P))
    ev, forcing, state = _start(section, system, stepper, boundaries)
    steady_start = not sc.transient or sc.initial_head is None

    def observe(ev: Evaluation, forcing: StepForcing, s: np.ndarray, t: float, flows=None) -> None:
        at = times == t
        view, terms = system.flow_view(ev, forcing)
        d[at] = predict(view, ops, system.head_u(ev.psi), terms, t, source)[at]
        if P:
            flows = derivs.term_flows(ev, forcing) if flows is None else flows
            J[at] = observation_jacobian(system, derivs, ops, ev, forcing, s, flows, source)[at]

    current = {"s": np.zeros((section.n, P)), "flows": None}
    if P and steady_start:
        flows = derivs.term_flows(ev, forcing)
        current["s"] = _solve(sens_solver, system.jacobian(ev, forcing, None, newton=True),
                              derivs.inflow(ev, forcing, flows), counts)
        current["flows"] = flows
    heat = None
    rows = ops.kind == "temperature"
    if rows.any():
        from bedflux.forward.unsaturated_heat import UnsaturatedHeat

        heat = UnsaturatedHeat(system, ops.head_weights[rows], times[rows], rules, derivs)
        if P and current["flows"] is None:
            current["flows"] = derivs.term_flows(ev, forcing)
        heat.state(0.0, 0.0, ev, forcing, current["s"], current["flows"], steady=not sc.transient)
    observe(ev, forcing, current["s"], 0.0, current["flows"])
    later = np.unique(times[times > 0.0])
    if later.size:
        stops, flooding = _stops(section, later)

        tangent = StepSensitivities(system, boundaries, derivs, sens_solver, counts, ev, current["s"],
                                    current["flows"]) if P else None

        def on_step(out, forcing, storage, t0, t1) -> float:
            if tangent is not None:
                current["s"], current["flows"] = tangent.s, tangent.flows
            if heat is not None:
                moving = None if tangent is None else (tangent.dt0, tangent.dt1)
                heat.state(t0, t1, out.evaluation, forcing, current["s"], current["flows"], steady=False,
                           times=moving)
            return 0.0

        def on_stop(out, forcing, t) -> None:
            i = np.argmin(np.abs(later - t))
            if abs(later[i] - t) <= 1e-9 * max(t, 1.0):
                observe(out.evaluation, forcing, current["s"], float(later[i]), current["flows"])

        run_steps(stepper, ev.psi, state, stops, sc.time.step, on_step, on_stop, restarts=flooding,
                  tangent=tangent)
    if heat is not None:
        d[rows] = heat.values
        J[rows] = heat.jacobian
    return d, J, counts
