"""Derivatives of the discrete flow equations with respect to the free parameters, at fixed heads.

``R`` is the sum of inflows into each cell (the residual of the linear model); ``dR/dp`` at fixed
heads, with the head sensitivities ``dh/dp``, gives every derivative of a flow quantity: the
face flows ``C (h_lo - h_hi)`` through ``dC/dp`` and the boundary inflows ``r - g u`` through
``dg/dp`` and ``dr/dp``. Which derivative applies to a parameter path is its
:class:`DerivativeRule` (``numeric``: none, central differences of whole runs).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from bedflux.forward.observe import Operators
from bedflux.scenario.heat import THERMAL_PROPERTIES
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import Section, Term
from bedflux.section.operator import half_cell_resistance


@dataclass
class DerivativeRule:
    """How one parameter enters the discrete equations, and so which analytic derivative applies."""

    # zone-kh, zone-kv, zone-specific_storage, zone-specific_yield, recharge, riparian, side-head,
    # leakance, retention-alpha, retention-n (variably saturated runs), thermal-thermal_conductivity,
    # thermal-heat_capacity, thermal-dispersivity (temperatures only), numeric (central differences)
    name: str
    zone: int = -1
    side: str = ""


def derivative_rule(scenario: Scenario, path: str) -> DerivativeRule:
    """Which analytic derivative applies to a parameter path (``numeric``: central differences)."""
    parts = path.split(".")
    names = scenario.zone_names()
    if len(parts) == 2 and parts[0] in names and parts[1] in ("kh", "kv", "specific_storage", "specific_yield"):
        return DerivativeRule(f"zone-{parts[1]}", zone=names.index(parts[0]))
    if len(parts) == 3 and parts[0] in names and parts[1] == "retention" and parts[2] in ("alpha", "n"):
        return DerivativeRule(f"retention-{parts[2]}", zone=names.index(parts[0]))
    if len(parts) == 2 and parts[0] in names and parts[1] in THERMAL_PROPERTIES:
        return DerivativeRule(f"thermal-{parts[1]}", zone=names.index(parts[0]))
    if path == "recharge.rate":
        return DerivativeRule("recharge")
    if len(parts) == 3 and parts[0] == "riparian" and parts[2] == "max_rate":
        return DerivativeRule("riparian", zone=int(parts[1]))
    if len(parts) == 3 and parts[0] == "sides" and parts[2] == "head":
        return DerivativeRule("side-head", side=parts[1])
    if path == "stream.leakance":
        return DerivativeRule("leakance")
    return DerivativeRule("numeric")


def _share(section: Section, prop: str, zone: int, value: float) -> np.ndarray:
    """``(dK/dp) (p/K)`` of every cell (flat): 1 inside the zone, 0 outside, and the share the
    zone has in the averaged conductivity of a cell that straddles its boundary."""
    m = section.materials
    return (m.derivative(prop, zone) * value / getattr(m, prop)).ravel()


def _top_position(section: Section, cols: np.ndarray) -> np.ndarray:
    """Flat (row-major) position of the top cell of each column in ``cols``."""
    return section.grid.top_row[cols] * section.grid.nx + cols


def face_conductance_derivative(section: Section, rule: DerivativeRule, value: float
                                ) -> tuple[np.ndarray, np.ndarray]:
    """``d(conductance)/dp`` of the interior faces (horizontal, vertical) for a zone's kh or kv
    (zero for other rules): ``dC/dp = C (r_lo rho_lo + r_hi rho_hi) / (r_lo + r_hi) / p`` with
    ``r`` the half-cell resistances in series and ``rho = (dK/dp)(p/K)`` the zone's share."""
    g = section.grid
    m = section.materials
    out = [np.zeros(section.hfaces.lo.size), np.zeros(section.vfaces.lo.size)]
    if rule.name not in ("zone-kh", "zone-kv"):
        return out[0], out[1]
    horizontal = rule.name == "zone-kh"
    f = section.hfaces if horizontal else section.vfaces
    if horizontal:
        res = half_cell_resistance(np.broadcast_to(g.dx[None, :], g.active.shape), m.kh).ravel()
    else:
        res = half_cell_resistance(g.thickness, m.kv).ravel()
    r_lo, r_hi = res[f.lo_pos], res[f.hi_pos]
    rho = _share(section, "kh" if horizontal else "kv", rule.zone, value)
    out[0 if horizontal else 1] = f.conductance * (r_lo * rho[f.lo_pos] + r_hi * rho[f.hi_pos]) / (r_lo + r_hi) / value
    return out[0], out[1]


def term_conductance_derivative(section: Section, t: Term, rule: DerivativeRule, value: float
                                ) -> np.ndarray | None:
    """``d(conductance)/dp`` of the entries of a head-dependent boundary term for a zone's kh or
    kv or the bed leakance (None where the term does not depend on the parameter)."""
    g = section.grid
    if t.face == "cell" or not np.any(t.conductance > 0):
        return None
    if rule.name == "leakance":
        if t.kind == "stream" and t.face == "top":
            inv = 1.0 / value
            return t.conductance * (inv / (section.top_half_resistance[t.column_or_row] + inv)) / value
        return None
    if rule.name not in ("zone-kh", "zone-kv"):
        return None
    horizontal = rule.name == "zone-kh"
    rho = _share(section, "kh" if horizontal else "kv", rule.zone, value)
    if horizontal and t.face in ("left", "right"):
        col = 0 if t.face == "left" else g.nx - 1
        return t.conductance * rho[t.column_or_row * g.nx + col] / value
    if not horizontal and t.face == "bottom":
        return t.conductance * rho[(g.nz - 1) * g.nx + t.column_or_row] / value
    if not horizontal and t.face == "top":
        half = section.top_half_resistance[t.column_or_row]
        width = g.dx[t.column_or_row] if t.width is None else t.width
        frac = half * t.conductance / width  # half / (half + 1/leakance)
        return t.conductance * frac * rho[_top_position(section, t.column_or_row)] / value
    return None


def residual_derivative(section: Section, terms: list[Term], u: np.ndarray, rule: DerivativeRule, value: float
                        ) -> tuple[np.ndarray, np.ndarray | None]:
    """``dR/dp`` at fixed heads (per unknown) and ``d(conductance)/dp`` of the stream-top entries
    (or None).

    ``R`` is the sum of inflows into each cell; ``value`` is the parameter's current SI value.
    """
    n = section.n
    dR = np.zeros(n)
    dconductance_top = None
    if rule.name in ("zone-kh", "zone-kv", "leakance"):
        for f, dC in zip((section.hfaces, section.vfaces), face_conductance_derivative(section, rule, value)):
            dF = dC * (u[f.lo] - u[f.hi])
            dR -= np.bincount(f.lo, weights=dF, minlength=n)
            dR += np.bincount(f.hi, weights=dF, minlength=n)
    # storage parameters do not enter the steady residual: no term depends on them
    for t in terms:
        dinflow = term_inflow_derivative(section, t, u, rule, value)
        if dinflow is None:
            continue
        dR += np.bincount(t.cells, weights=dinflow, minlength=n)
        if t.kind == "stream" and t.face == "top" and rule.name in ("zone-kh", "zone-kv", "leakance"):
            dconductance_top = term_conductance_derivative(section, t, rule, value)
    return dR, dconductance_top


def term_inflow_derivative(section: Section, t: Term, u: np.ndarray, rule: DerivativeRule, value: float
                           ) -> np.ndarray | None:
    """``d(inflow)/dp`` of the entries of a boundary or sink term at fixed heads (None where the
    term does not depend on the parameter); the per-term parts of :func:`residual_derivative`."""
    g = section.grid
    if rule.name == "riparian":
        if t.kind != "evapotranspiration" or value <= 0:
            return None
        return np.where(section.et_zone == rule.zone, t.inflow(u) / value, 0.0)
    if rule.name in ("zone-kh", "zone-kv", "leakance"):
        dconductance = term_conductance_derivative(section, t, rule, value)
        return None if dconductance is None else dconductance * (t.r / t.conductance - u[t.cells])
    if rule.name == "recharge" and t.kind == "recharge":
        return g.dx[t.column_or_row] if t.width is None else t.width
    if rule.name == "side-head" and t.face == rule.side and t.kind == rule.side:
        return t.conductance
    return None


def thermal_flux_parts(section: Section, ops: Operators, u: np.ndarray, terms: list[Term],
                       rules: list[DerivativeRule], values: list[float]) -> tuple[sp.csr_matrix, np.ndarray]:
    """``d(value)/d(h)`` of the ``thermal_flux`` rows (sparse, zero rows for the other kinds) and
    their explicit derivatives at fixed heads (n_obs x len(rules)).

    The value is ``W qz`` with ``W`` the head weights and ``qz`` the cell-centre vertical flux
    (:func:`bedflux.section.fluxes.derive`): half the sum of the interior faces' ``C (h_lo - h_hi)
    / area`` below and above the cell, of the top terms' ``-inflow / dx`` and of the bottom term's
    ``inflow / dx``. The explicit part carries ``dC/dp`` of the faces and ``d(inflow)/dp`` of the
    boundary terms.
    """
    thermal = ops.kind == "thermal_flux"
    n = section.n
    Wt = sp.diags(thermal.astype(float)) @ ops.head_weights
    vf = section.vfaces
    g = section.grid
    a = 0.5 * vf.conductance / vf.area
    rows = np.concatenate([vf.lo, vf.lo, vf.hi, vf.hi])
    cols = np.concatenate([vf.lo, vf.hi, vf.lo, vf.hi])
    vals = np.concatenate([a, -a, a, -a])
    boundary = [(t, 1.0 if t.face == "bottom" else -1.0) for t in terms if t.face in ("top", "bottom")]
    for t, sign in boundary:
        # qz gains sign * inflow / (2 dx) in the term's cell; d(inflow)/du = -c
        rows = np.concatenate([rows, t.cells]); cols = np.concatenate([cols, t.cells])
        vals = np.concatenate([vals, -sign * 0.5 * t.conductance / g.dx[t.column_or_row]])
    M = sp.csr_matrix((vals, (rows, cols)), shape=(n, n))
    E = np.zeros((ops.n, len(rules)))
    for j, (rule, v) in enumerate(zip(rules, values)):
        dqz = np.zeros(n)
        dC = face_conductance_derivative(section, rule, v)[1]
        if np.any(dC):
            dF = 0.5 * dC * (u[vf.lo] - u[vf.hi]) / vf.area
            dqz += np.bincount(vf.lo, weights=dF, minlength=n) + np.bincount(vf.hi, weights=dF, minlength=n)
        for t, sign in boundary:
            dinflow = term_inflow_derivative(section, t, u, rule, v)
            if dinflow is not None:
                dqz += np.bincount(t.cells, weights=sign * 0.5 * dinflow / g.dx[t.column_or_row], minlength=n)
        E[:, j] = Wt @ dqz
    return (Wt @ M).tocsr(), E
