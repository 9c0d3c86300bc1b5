"""The flow field a path is traced through: the water flow across the four faces of every cell.

A cell of the block-centred grid is a rectangle ``[x0, x1] x [z0, z1]`` (the top cell of a column
cut or extended to the ground at the column centre). Its four face flows (m^2/s per metre of
section width, positive in +x or +z) are those of the solved heads:

- interior faces: the conductance of the face times the head difference (a side of an extended
  top cell may touch two cells of the neighbouring column: the flow over both);
- the left, right and bottom boundary faces: the inflow of their boundary term;
- the top face of a column's top cell: the top flux of the result (stream, seepage face and
  recharge together) times the column width.

Sinks inside a cell (evapotranspiration, storage in transient runs) appear as the imbalance of
its face flows. The pore velocity on each face is the face flow over the cell's side length and
its pore space (Pollock 1988), so that the velocity is linear in each direction inside the cell and
conserves the cell's water exactly. The pore space is the porosity in a saturated run and the
cell's water content in a variably saturated one (:mod:`bedflux.flowpaths.unsaturated`).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bedflux.errors import InputError
from bedflux.section.discretisation import Section, Term


@dataclass(frozen=True)
class CellField:
    """Geometry and face pore velocities of every cell, flat over the ``(nz, nx)`` grid (m, m/s).

    ``vx0``/``vx1`` are the pore velocities on the left/right faces, ``vz0``/``vz1`` on the
    bottom/top faces (positive in +x and +z); zero for inactive cells. ``top_out`` is the kind of
    exit through each column's top face (``bed`` where the column is (partly) under the stream,
    ``seepage face`` elsewhere) and ``sink`` marks cells with a net loss of water inside (their
    face flows bring more than they take away: evapotranspiration, or water going into storage).
    ``uptake_share`` (runs whose uptake is known apart from storage: root water uptake of variably
    saturated runs, evapotranspiration of steady saturated ones; else None) is, per cell, the
    share of the water leaving the cell that the roots take (uptake over uptake plus the outflow
    through its faces). ``ground_exit`` marks the columns whose top face, when exposed, lets water
    out to the ground surface by evaporation (negative recharge) rather than as a seepage face.
    """

    x_edges: np.ndarray
    z_edges: np.ndarray
    top_row: np.ndarray
    ground: np.ndarray
    z0: np.ndarray
    z1: np.ndarray
    vx0: np.ndarray
    vx1: np.ndarray
    vz0: np.ndarray
    vz1: np.ndarray
    wet: np.ndarray
    sink: np.ndarray
    periodic: bool
    uptake_share: np.ndarray | None = None
    ground_exit: np.ndarray | None = None

    @property
    def nx(self) -> int:
        return self.x_edges.size - 1

    @property
    def nz(self) -> int:
        return self.z_edges.size - 1


def face_flows(section: Section, head: np.ndarray, top_flux: np.ndarray, t: float,
               terms: list[Term] | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Flows (m^2/s) through the left, right, bottom and top face of every cell, ``(nz, nx)`` each,
    positive in +x and +z, for the heads ``head`` (``(nz, nx)``, NaN outside) at time ``t``; the
    boundary terms of the sides and the base are ``terms`` when given (those the heads were
    solved with), else the section's own at ``t``."""
    g = section.grid
    shape = (g.nz, g.nx)
    size = g.nz * g.nx
    u = head[g.active] - section.h_ref
    hf, vf = section.hfaces, section.vfaces
    flow = hf.conductance * (u[hf.lo] - u[hf.hi])
    right = np.bincount(hf.lo_pos, flow, size).reshape(shape)
    left = np.bincount(hf.hi_pos, flow, size).reshape(shape)
    flow = vf.conductance * (u[vf.lo] - u[vf.hi])
    top = np.bincount(vf.lo_pos, flow, size).reshape(shape)
    bottom = np.bincount(vf.hi_pos, flow, size).reshape(shape)
    for term in (section.terms(t, section.initial_active_set()) if terms is None else terms):
        if term.face not in ("left", "right", "bottom"):
            continue
        q = term.inflow(u)
        if term.face == "left":
            left[term.column_or_row, 0] += q
        elif term.face == "right":
            right[term.column_or_row, g.nx - 1] -= q
        else:
            bottom[g.nz - 1, term.column_or_row] += q
    cols = np.arange(g.nx)
    top[g.top_row, cols] = top_flux * g.dx
    return left, right, bottom, top


def cell_field(section: Section, head: np.ndarray, top_flux: np.ndarray, wetted_fraction: np.ndarray,
               t: float = 0.0, terms: list[Term] | None = None, pore_space: np.ndarray | None = None,
               uptake: np.ndarray | None = None) -> CellField:
    """The :class:`CellField` of one solved state of ``section``.

    Parameters
    ----------
    section
        The discretised scenario the heads were solved on.
    head
        ``(nz, nx)`` heads (m), NaN outside the domain.
    top_flux
        Flux through each column's top face (m/s, positive upward), as in the result.
    wetted_fraction
        Share of each column's top face under the stream.
    t
        Time of the state (s): the boundary terms of the sides and the base are taken then.
    terms
        The boundary terms the heads were solved with (default: the section's at ``t``).
    pore_space
        ``(nz, nx)`` volume fraction the water moves in (default: the porosity of each cell).
    uptake
        ``(nz, nx)`` root water uptake of each cell (m^2/s, >= 0), when it is known apart from
        storage changes (variably saturated runs).
    """
    g = section.grid
    if head.shape != (g.nz, g.nx):
        raise InputError(f"the result's heads have shape {head.shape}, the scenario's grid {(g.nz, g.nx)}: "
                         "pass the result of this scenario", where="ds")
    left, right, bottom, top = face_flows(section, head, top_flux, t, terms)
    por = np.where(g.active, section.materials.porosity if pore_space is None else pore_space, 1.0)
    thick = np.where(g.active, g.thickness, 1.0)
    side = thick * por
    across = g.dx[None, :] * por
    net_in = left - right + bottom - top
    scale = np.abs(left) + np.abs(right) + np.abs(bottom) + np.abs(top)
    sink = g.active & (net_in > 1e-9 * scale)

    def flat(a: np.ndarray) -> np.ndarray:
        return np.where(g.active, a, 0.0).ravel()

    share = None
    if uptake is not None:
        taken = np.where(g.active, uptake, 0.0)
        out = (np.maximum(-left, 0.0) + np.maximum(right, 0.0) + np.maximum(-bottom, 0.0)
               + np.maximum(top, 0.0) + taken)
        share = flat(np.divide(taken, out, out=np.zeros_like(taken), where=out > 0.0))
    recharge = section.scenario.recharge
    # exposed ground that evaporates: water leaves through it at the evaporation rate unless the
    # column is a seepage face (which lets out more)
    evaporating = (np.asarray(top_flux) <= -recharge * (1.0 + 1e-9)) if recharge < 0.0 else np.zeros(g.nx, bool)

    return CellField(x_edges=g.x_edges, z_edges=g.z_edges, top_row=g.top_row, ground=g.ground,
                     z0=np.broadcast_to(g.z_edges[1:, None], (g.nz, g.nx)).ravel().copy(),
                     z1=(g.z_edges[1:, None] + g.thickness).ravel(),
                     vx0=flat(left / side), vx1=flat(right / side), vz0=flat(bottom / across),
                     vz1=flat(top / across), wet=np.asarray(wetted_fraction) > 0.0, sink=sink.ravel(),
                     periodic=section.scenario.left.kind == "periodic", uptake_share=share,
                     ground_exit=evaporating)
