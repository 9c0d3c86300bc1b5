"""Darcy fluxes, bed flux and the water budget from a solved head field.

Signs: vertical flux positive upward; bed flux positive for groundwater discharging into the
stream (gaining). Budget lines are flows per metre of section width (m^2/s), split into what
enters and what leaves the aquifer through each boundary.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .solve.section import Section, Term

#: Budget lines in report order.
BUDGET_LINES = ("stream", "recharge", "seepage_face", "evapotranspiration", "left", "right", "bottom", "storage")


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
    budget_in: dict[str, float]
    budget_out: dict[str, float]
    exchange: float

    @property
    def closure(self) -> float:
        """Budget imbalance relative to the total inflow (0 when the budget closes)."""
        total_in = sum(self.budget_in.values())
        net = total_in - sum(self.budget_out.values())
        scale = max(total_in, sum(self.budget_out.values()))
        return 0.0 if scale == 0.0 else net / scale


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
    budget_in = {k: 0.0 for k in BUDGET_LINES}
    budget_out = {k: 0.0 for k in BUDGET_LINES}
    stream_cols = np.zeros(g.nx, dtype=bool)
    exchange = 0.0
    for term in terms:
        q = term.inflow(u)
        if term.kind == "stream":
            exchange -= float(q.sum())
        budget_in[term.kind] += float(q[q > 0].sum())
        budget_out[term.kind] -= float(q[q < 0].sum())
        if term.face == "top":
            # a partly wetted column has a stream term and a dry-part term on one top face
            top_flow += np.bincount(term.place, -q, g.nx)
            if term.kind == "stream":
                stream_cols[term.place] = True
                stream_flow += np.bincount(term.place, -q, g.nx)
                width = g.dx[term.place] if term.width is None else term.width
                stream_width += np.bincount(term.place, width, g.nx)
        elif term.face == "bottom":
            lower[g.nz - 1, term.place] = q / g.dx[term.place]
        elif term.face == "left":
            left[term.place, 0] = q / g.thickness[term.place, 0]
        elif term.face == "right":
            right[term.place, g.nx - 1] = -q / g.thickness[term.place, g.nx - 1]
    if storage_inflow is not None:
        budget_in["storage"] = float(storage_inflow[storage_inflow > 0].sum())
        budget_out["storage"] = -float(storage_inflow[storage_inflow < 0].sum())
    top_flux = top_flow / g.dx
    upper[g.top_row, np.arange(g.nx)] = top_flux
    qx = np.where(g.active, 0.5 * (left + right), np.nan)
    qz = np.where(g.active, 0.5 * (lower + upper), np.nan)
    # bed flux: over the wetted part of each column's top face (also a partly wetted column)
    mask = stream_cols if wet is None else (wet | stream_cols)
    with np.errstate(invalid="ignore", divide="ignore"):
        bed_flux = np.where(mask & (stream_width > 0), stream_flow / stream_width, np.nan)
    return Fluxes(head, qx, qz, top_flux, bed_flux, budget_in, budget_out, exchange)
