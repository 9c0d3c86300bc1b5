"""The flow field of a variably saturated run: face flows with the relative conductivity, water
moving in the water-filled pores, root water uptake apart from storage.

A solved state of Richards' equation (:mod:`bedflux.section.richards`) is re-evaluated at its
pressure heads: every interior face carries the saturated conductance times the relative
conductivity of its upstream cell times the head difference, and the side and base terms their
own relative conductivity (the flows the solver balanced, to its tolerance). The top faces carry
the result's top flux (stream, seepage face, recharge or evaporation). The root water uptake of
each cell is the Feddes-reduced rate at its pressure head (:class:`bedflux.section.richards.Uptake`).
The stream water entering the bed is taken from the stream terms themselves (the budget's stream
inflow, column by column).

Pollock's interpolation (1988) is applied to the Darcy face flows as they are; the pore velocity
on a face is that flow over the side length and the *water content* of the cell, so the time a
path spends in a cell is the time its water takes to move through the cell's water-filled pores
(``theta`` in place of the porosity of a saturated run). In a transient run the water content of
the output that ends the interval is used over the whole interval, with that output's flows.
"""
from __future__ import annotations

import numpy as np
import xarray as xr

from bedflux.flowpaths.field import CellField, cell_field
from bedflux.section.discretisation import Section
from bedflux.section.richards import RichardsSystem
from bedflux.section.richards_steps import SectionBoundaries, soil_water

#: Pore space choices: the water content of each output (the default) or the saturated water
#: content of each cell's retention curve (what a fixed porosity would give; for comparisons).
PORE_SPACES = ("water content", "saturated")


class UnsaturatedFields:
    """Flow fields of the states of a variably saturated result ``ds`` of ``section``."""

    def __init__(self, section: Section, ds: xr.Dataset, pore_space: str = "water content"):
        if pore_space not in PORE_SPACES:
            raise ValueError(f"pore_space {pore_space!r}: one of {PORE_SPACES}")
        self.section = section
        self.ds = ds
        self.pore_space = pore_space
        self.system = RichardsSystem(section, soil_water(section.scenario, section))
        self.boundaries = SectionBoundaries(section)
        g = section.grid
        self.position = np.flatnonzero(g.active.ravel())
        self.saturated = self._grid(self.system.soil.theta_s)

    def _grid(self, values: np.ndarray) -> np.ndarray:
        g = self.section.grid
        a = np.zeros(g.nz * g.nx)
        a[self.position] = values
        return a.reshape(g.nz, g.nx)

    def _state(self, k: int | None, t0: float):
        """Output ``k`` (the whole result when None), its end time, evaluation, forcing, the
        Kr-scaled section view and terms."""
        g = self.section.grid
        ds = self.ds if k is None else self.ds.isel(time=k)
        t1 = 0.0 if k is None else float(ds["time"])
        psi = ds["pressure_head"].values[g.active]
        forcing = self.boundaries.forcing(t0, t1, self.section.initial_active_set(), steady=k is None)
        ev = self.system.evaluate(psi, forcing, None)
        view, terms = self.system.flow_view(ev, forcing)
        return ds, t1, ev, forcing, view, terms

    def stream_inflow(self, k: int | None, t0: float = 0.0) -> np.ndarray:
        """Stream water entering the bed through each column at output ``k`` (m^2/s, >= 0): the
        inflow of the stream terms with their relative conductivity (the budget's stream line)."""
        _, _, ev, _, _, terms = self._state(k, t0)
        u = self.system.head_u(ev.psi)
        nx = self.section.grid.nx
        flow = sum((np.bincount(t.column_or_row, t.inflow(u), nx) for t in terms if t.kind == "stream"), np.zeros(nx))
        return np.maximum(flow, 0.0)

    def at(self, k: int | None, t0: float = 0.0) -> CellField:
        """The field of output ``k`` (None: the steady state), ending the interval from ``t0``."""
        ds, t1, ev, forcing, view, terms = self._state(k, t0)
        sides = [t for t in terms if t.face in ("left", "right", "bottom")]
        uptake = None
        if forcing.uptake is not None:
            uptake = self._grid(np.bincount(forcing.uptake.cells, ev.uptake, self.section.n))
        theta = ds["water_content"].values if self.pore_space == "water content" else self.saturated
        return cell_field(view, ds["head"].values, ds["top_flux"].values, ds["wetted_fraction"].values, t1,
                          terms=sides, pore_space=theta, uptake=uptake)
