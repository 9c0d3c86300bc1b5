"""Temperatures and their sensitivities in a variably saturated run, by the direct method.

Heat follows every accepted step of the Richards run as :mod:`bedflux.section.heat_run` runs it:
the flow view's faces (conductance times upstream ``Kr``) and terms, and the bulk heat capacity
``theta_w rho_w c_w + (1 - theta_s) c_s`` of the step's end. Along the pressure-head
sensitivities ``s = dpsi/dp`` of :mod:`bedflux.forward.unsaturated_sensitivity`:

    face flow:  F = C Kr_up (u_lo - u_hi),
                dF/dp = C Kr_up (s_lo - s_hi) + C dKr/dpsi_up s_up (u_lo - u_hi) + dF/dp|_psi
    boundary:   q = Kr (r - g u),  dq/dp = (-Kr g + (r - g u) dKr/dpsi) s + dq/dp|_psi
    uptake:     q = -a(psi) q_pot,  dq/dp = -q_pot da/dpsi s
    storage:    dC/dp = rho_w c_w V (dtheta/dpsi s + dtheta/dp|_psi) (+ the grains' share of a
                zone heat capacity)

and the step ``(C1/dt + A1) sigma1 = C1/dt sigma0 - dC1/dp (theta1 - theta0)/dt + dR1/dp`` with
``dR/dp`` the exact derivative of the heat operator's assembly
(:class:`bedflux.section.heat.ResidualTangent`).
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bedflux.forward.derivatives import DerivativeRule
from bedflux.forward.heat_observe import HeatCarrier
from bedflux.forward.unsaturated_sensitivity import flow_derivatives
from bedflux.scenario.heat import WATER_HEAT_CAPACITY
from bedflux.section.heat import FlowTangent, HeatGeometry
from bedflux.section.heat_run import HeatModel
from bedflux.section.richards import Evaluation, RichardsSystem, StepForcing


class UnsaturatedHeat(HeatCarrier):
    """Heat after every accepted state of a variably saturated run, with its sensitivities.

    Call :meth:`state` for the state at t = 0 and after every accepted step.
    """

    def __init__(self, system: RichardsSystem, weights: sp.csr_matrix, times: np.ndarray,
                 rules: list[DerivativeRule], derivatives):
        model = HeatModel(system.section)
        model.with_water_content(system.soil.theta_s)  # before the thermal parts: the grains' share
        super().__init__(model, weights, times, rules)
        self.system, self.derivatives = system, derivatives

    def _tangent(self, ev: Evaluation, forcing: StepForcing, s: np.ndarray, term_flows: list[np.ndarray] | None
                 ) -> FlowTangent:
        dF, flows = flow_derivatives(self.system, self.derivatives, ev, forcing, s, term_flows)
        return FlowTangent(self.base.conductivity, self.base.dispersivity, dF, flows)

    def state(self, t0: float, t1: float, ev: Evaluation, forcing: StepForcing, s: np.ndarray,
              term_flows: list[np.ndarray] | None, steady: bool,
              times: tuple[np.ndarray, np.ndarray] | None = None) -> None:
        """Heat at the state ``ev`` reached at ``t1`` (from ``t0``; ``t1 = 0``: the start, ``steady``
        for a steady run), with the pressure-head sensitivities ``s`` and the explicit boundary
        flow derivatives ``term_flows`` (None without parameters). ``times``: the derivatives of
        ``t0`` and ``t1`` where the step's ends move with the parameters (the flow's error control):
        the step ``G = C1 (T1 - T0)/dt + A1 T1 - b(t1)`` then adds ``-dG/dt0 dt0/dp - dG/dt1 dt1/dp``."""
        model, sys_ = self.model, self.system
        view, terms = sys_.flow_view(ev, forcing)
        model.set_water(ev.props.theta)
        model.geometry = HeatGeometry(view, model.cells)
        op = model.operator([(1.0, sys_.head_u(ev.psi), terms)], terms, t1)
        tangent = self._tangent(ev, forcing, s, term_flows) if self.P else None
        if t1 == 0.0:
            self.begin(op, tangent, steady)
            return
        dstore = self.dstore
        if self.P:
            dstore = dstore + WATER_HEAT_CAPACITY * model.section.cell_volume[:, None] * (
                ev.props.capacity[:, None] * s + self.derivatives.water_content(ev))
        correction = None if times is None else (lambda theta1: self._time_derivatives(op, theta1, t0, t1, *times))
        self.advance(op, t0, t1, tangent, dstore, correction)

    def _time_derivatives(self, op, theta1: np.ndarray, t0: float, t1: float, dt0: np.ndarray,
                          dt1: np.ndarray) -> np.ndarray:
        """``dG/dt0 dt0/dp + dG/dt1 dt1/dp`` of a backward-Euler heat step (cells x parameters);
        the sources' rate by central differences in time."""
        dt = t1 - t0
        store = self.model.storage * (theta1 - self.theta) / (dt * dt)
        out = np.outer(store, dt0) - np.outer(store, dt1)
        if np.any(dt1 != 0.0):
            delta = 1e-3 * dt
            db = (op.rhs(self.model.sources(t1 + delta)) - op.rhs(self.model.sources(t1 - delta))) / (2.0 * delta)
            out -= np.outer(db, dt1)
        return out
