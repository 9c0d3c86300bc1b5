"""Darcy fluxes, bed flux and the water budget from a solved head field.

Signs: vertical flux positive upward; bed flux positive for groundwater discharging into the
stream (gaining). Budget lines are flows per metre of section width (m^2/s), split into what
enters and what leaves the aquifer through each boundary.

Budget closure. Every flow of the budget is computed as a difference of two larger numbers:
``r - c u`` on a boundary face (conductance times the imposed head, conductance times the
computed head, both relative to the reference head) and ``S (u1 - u0) / dt`` in storage. Their
round-off is a fraction of the size of those parts, not of the net flow, so the closure is
scaled by the *gross flow*: the sum of the magnitudes of all those parts (m^2/s). It is zero only
when nothing flows and no head differs from the reference head, and the closure of a correct
solve is then round-off (1e-16 to 1e-12) whatever the flows. The closure cannot be judged when
nothing flows, or when the net flows are smaller than the limit a run accepts times the gross
flow (a budget error of that size could not be told from round-off).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bedflux.errors import SolverError
from bedflux.section.discretisation import Section, Term

#: Budget lines in report order.
BUDGET_LINES = ("stream", "recharge", "seepage_face", "evapotranspiration", "left", "right", "bottom", "storage")
#: Largest budget closure (imbalance over the gross flow) a run accepts, by linear solver.
CLOSURE_LIMIT = {"direct": 1e-8, "amg-cg": 1e-6}


@dataclass
class Fluxes:
    """Derived fields of one solved state (all SI).

    ``exchange`` is the net exchange with the stream per metre of channel (m^2/s, positive when
    gaining) at the instant of the state. In transient runs the budget lines are means over the
    step that ended at that instant (so that they close with the storage change of the step).
    """

    head: np.ndarray
    qx: np.ndarray
    qz: np.ndarray
    top_flux: np.ndarray
    bed_flux: np.ndarray
    inflow: dict[str, float]
    outflow: dict[str, float]
    exchange: float
    gross: float = 0.0

    @property
    def closure(self) -> float:
        """Budget imbalance (in - out) over the gross flow; NaN when nothing flows (module doc)."""
        return closure(self.inflow, self.outflow, self.gross)


def inflow_outflow(q: np.ndarray, weight: float = 1.0) -> tuple[float, float]:
    """What enters (the sum of the positive flows of ``q``, positive into the aquifer) and what
    leaves (the sum of the negative ones, as a positive number), both times ``weight``."""
    return weight * float(q[q > 0].sum()), -weight * float(q[q < 0].sum())


def term_budget(terms: list[Term], u: np.ndarray, weight: float = 1.0,
                into: tuple[dict[str, float], dict[str, float]] | None = None
                ) -> tuple[dict[str, float], dict[str, float]]:
    """Inflow and outflow of every budget line through ``terms`` at relative heads ``u``, times
    ``weight``; added to ``into`` when given (a new pair of zero budgets otherwise)."""
    inflow, outflow = into if into is not None else ({k: 0.0 for k in BUDGET_LINES},
                                                           {k: 0.0 for k in BUDGET_LINES})
    for term in terms:
        flow_in, flow_out = inflow_outflow(term.inflow(u), weight)
        inflow[term.kind] += flow_in
        outflow[term.kind] += flow_out
    return inflow, outflow


def closure(inflow: dict[str, float], outflow: dict[str, float], gross: float) -> float:
    """``(sum in - sum out) / gross``; NaN when the gross flow is zero (nothing flows)."""
    net = sum(inflow.values()) - sum(outflow.values())
    return net / gross if gross > 0.0 else float("nan")


def gross_flow(terms: list[Term], u: np.ndarray) -> float:
    """Sum of ``|r| + |conductance u|`` over every entry of the terms (m^2/s): the scale of their
    round-off."""
    return float(sum(np.abs(t.r).sum() + np.abs(t.conductance * u[t.cells]).sum() for t in terms))


def not_judgeable(inflow: float, outflow: float, gross: float, limit: float) -> str:
    """Why the closure of one budget cannot be judged at ``limit`` ("" when it can)."""
    if not gross > 0.0:
        return "nothing flows (no head differs from the reference head and nothing is imposed)"
    flow = max(inflow, outflow)
    if flow <= limit * gross:
        return (f"the net flows ({flow:.3g} m2/s) are below {limit:g} of the gross flow the budget is "
                f"computed from ({gross:.3g} m2/s), so an error in them would not show")
    return ""


def check_closure(inflow: dict[str, float], outflow: dict[str, float], gross: float, limit: float,
                  where: str) -> None:
    """Raise :class:`SolverError` when a budget misses closure by more than ``limit``."""
    c = closure(inflow, outflow, gross)
    if np.isfinite(c) and abs(c) > limit:
        raise SolverError(f"the water budget does not close {where}: in - out = {c:.3g} of the gross flow "
                          f"({gross:.3g} m2/s), above the {limit:g} a correct solve keeps to; "
                          "the heads of this solve are wrong")


def derive(section: Section, u: np.ndarray, terms: list[Term], storage_inflow: np.ndarray | None = None,
           wet: np.ndarray | None = None) -> Fluxes:
    """Heads, cell-centre Darcy fluxes, top and bed flux, and the budget.

    Parameters
    ----------
    section
        The discretised scenario.
    u
        Relative heads (head = u + ``section.h_ref``).
    terms
        The boundary and sink terms the heads were solved with.
    storage_inflow
        Per-cell water released from storage (m^2/s), transient runs only.
    wet
        Submerged columns (the bed-flux mask); default: columns with a stream term on top.
    """
    g = section.grid
    shape = (g.nz, g.nx)
    head = np.full(shape, np.nan)
    head[g.active] = u + section.h_ref

    lower = np.zeros(shape); upper = np.zeros(shape)
    hf, vf = section.hfaces, section.vfaces
    # a side of a cell may have two faces (an extended top cell): flow over their total area
    flow = hf.conductance * (u[hf.lo] - u[hf.hi])
    size = g.nz * g.nx
    with np.errstate(invalid="ignore", divide="ignore"):
        right = (np.bincount(hf.lo_pos, flow, size) / np.bincount(hf.lo_pos, hf.area, size)).reshape(shape)
        left = (np.bincount(hf.hi_pos, flow, size) / np.bincount(hf.hi_pos, hf.area, size)).reshape(shape)
    right = np.nan_to_num(right)
    left = np.nan_to_num(left)
    vz = vf.conductance * (u[vf.lo] - u[vf.hi]) / vf.area
    upper.flat[vf.lo_pos] = vz
    lower.flat[vf.hi_pos] = vz

    top_flow = np.zeros(g.nx)
    stream_flow = np.zeros(g.nx)
    stream_width = np.zeros(g.nx)
    gross = gross_flow(terms, u)
    inflow, outflow = term_budget(terms, u)
    stream_cols = np.zeros(g.nx, dtype=bool)
    exchange = 0.0
    for term in terms:
        q = term.inflow(u)
        if term.kind == "stream":
            exchange -= float(q.sum())
        if term.face == "top":
            # a partly wetted column has a stream term and a dry-part term on one top face
            top_flow += np.bincount(term.column_or_row, -q, g.nx)
            if term.kind == "stream":
                stream_cols[term.column_or_row] = True
                stream_flow += np.bincount(term.column_or_row, -q, g.nx)
                width = g.dx[term.column_or_row] if term.width is None else term.width
                stream_width += np.bincount(term.column_or_row, width, g.nx)
        elif term.face == "bottom":
            lower[g.nz - 1, term.column_or_row] = q / g.dx[term.column_or_row]
        elif term.face == "left":
            left[term.column_or_row, 0] = q / g.thickness[term.column_or_row, 0]
        elif term.face == "right":
            right[term.column_or_row, g.nx - 1] = -q / g.thickness[term.column_or_row, g.nx - 1]
    if storage_inflow is not None:
        inflow["storage"], outflow["storage"] = inflow_outflow(storage_inflow)
        gross += float(np.abs(storage_inflow).sum())
    top_flux = top_flow / g.dx
    upper[g.top_row, np.arange(g.nx)] = top_flux
    qx = np.where(g.active, 0.5 * (left + right), np.nan)
    qz = np.where(g.active, 0.5 * (lower + upper), np.nan)
    # bed flux: over the wetted part of each column's top face (also a partly wetted column)
    mask = stream_cols if wet is None else (wet | stream_cols)
    with np.errstate(invalid="ignore", divide="ignore"):
        bed_flux = np.where(mask & (stream_width > 0), stream_flow / stream_width, np.nan)
    return Fluxes(head, qx, qz, top_flux, bed_flux, inflow, outflow, exchange, gross)


def closure_summary(ds) -> tuple[float | None, str]:
    """The budget closure of a result for its summary: the largest over the outputs where it can be
    judged (None when it can be judged nowhere) and a note saying where and why it cannot."""
    limit = CLOSURE_LIMIT.get(ds.attrs.get("solver", "direct"), CLOSURE_LIMIT["direct"])
    c = np.atleast_1d(ds["budget_closure"].values)
    inflow = np.atleast_2d(ds["inflow"].values).sum(axis=1)
    outflow = np.atleast_2d(ds["outflow"].values).sum(axis=1)
    gross = np.atleast_1d(ds["budget_gross"].values)
    reasons = [not_judgeable(i, o, g, limit) for i, o, g in zip(inflow, outflow, gross)]
    judged = np.array([not r for r in reasons])
    if not judged.any():
        return None, reasons[-1]
    value = float(np.max(np.abs(c[judged])))
    skipped = np.nonzero(~judged)[0]
    if not skipped.size:
        return value, ""
    times = np.atleast_1d(ds["time"].values) if "time" in ds.dims else np.zeros(1)
    return value, (f"not judgeable at {skipped.size} of {judged.size} outputs, the first at "
                   f"t = {times[skipped[0]]:g} s: {reasons[skipped[0]]}")
