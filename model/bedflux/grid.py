"""The rectilinear x-z grid of the section and its active cells below the ground.

Rows run from the top of the grid (``k = 0``, the highest ground) down to the model base.
A cell is active when its centre lies below the ground. The topmost active cell of a column is
cut or extended so that its top face is exactly where the ground cuts the column: its thickness
is ``ground - z_bottom_of_cell`` (between half and one and a half regular spacings).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .scenario import GridSpec, Scenario


@dataclass(frozen=True)
class Grid:
    """Geometry of the section (all SI).

    Attributes
    ----------
    x_edges, z_edges
        Column edges (increasing) and row edges (decreasing from the top down).
    xc, zc
        Column and row centres of the regular grid.
    ground
        Ground elevation at each column centre.
    active
        ``(nz, nx)`` mask of cells below the ground.
    top_row
        Row index of the topmost active cell of each column.
    thickness
        ``(nz, nx)`` cell thickness (the top cell cut at the ground); 0 where inactive.
    cell_bottom, cell_top
        ``(nz, nx)`` elevations of the bottom and top face of each cell.
    z_centre
        ``(nz, nx)`` elevation of each active cell's centre (of the cut cell at the top).
    """

    x_edges: np.ndarray
    z_edges: np.ndarray
    ground: np.ndarray
    active: np.ndarray
    top_row: np.ndarray
    thickness: np.ndarray

    @property
    def nx(self) -> int:
        return self.x_edges.size - 1

    @property
    def nz(self) -> int:
        return self.z_edges.size - 1

    @property
    def xc(self) -> np.ndarray:
        return 0.5 * (self.x_edges[1:] + self.x_edges[:-1])

    @property
    def zc(self) -> np.ndarray:
        return 0.5 * (self.z_edges[1:] + self.z_edges[:-1])

    @property
    def dx(self) -> np.ndarray:
        return np.diff(self.x_edges)

    @property
    def cell_bottom(self) -> np.ndarray:
        return np.broadcast_to(self.z_edges[1:, None], (self.nz, self.nx))

    @property
    def cell_top(self) -> np.ndarray:
        return np.where(self.active, self.cell_bottom + self.thickness, np.nan)

    @property
    def z_centre(self) -> np.ndarray:
        return np.where(self.active, self.cell_bottom + 0.5 * self.thickness, np.nan)

    @property
    def n_active(self) -> int:
        return int(self.active.sum())

    def index(self) -> np.ndarray:
        """``(nz, nx)`` unknown number of each active cell (row-major), -1 where inactive."""
        idx = np.full(self.active.shape, -1, dtype=np.int32)
        idx[self.active] = np.arange(self.n_active, dtype=np.int32)
        return idx


def _z_edges(top: float, spec: GridSpec) -> np.ndarray:
    """Row edges from ``top`` down to ``spec.bottom``: spacing ``dz`` at the top, growing by
    ``growth`` per row downward up to ``dz_max``. A sliver left at the base joins the row above."""
    depth = top - spec.bottom
    sizes: list[float] = []
    total, size = 0.0, spec.dz
    while total < depth * (1.0 - 1e-12):
        sizes.append(size)
        total += size
        size = min(size * spec.growth, spec.dz_max)
        if len(sizes) > 200000:
            raise InputError("more than 200000 rows; use a larger dz or a growth factor", where="[grid]")
    edges = np.concatenate([[top], top - np.cumsum(sizes)])
    edges[-1] = spec.bottom
    if len(sizes) > 1 and edges[-2] - edges[-1] < 0.5 * sizes[-2]:
        edges = np.delete(edges, -2)
    return edges


def build_grid(scenario: Scenario) -> Grid:
    """The grid of a scenario.

    Raises
    ------
    InputError
        If the grid has more than 2e7 cells or a column has no active cell.
    """
    spec = scenario.grid
    width = spec.x1 - spec.x0
    if width / spec.dx > 2e7:  # checked before any array is allocated (every column has a row)
        raise InputError(f"dx = {spec.dx:g} m over {width:g} m gives {width / spec.dx:.3g} columns, more than "
                         "2e7 cells; use a coarser dx", source=scenario.source, where="[grid]")
    nx = max(1, int(round(width / spec.dx)))
    if nx * spec.dx < width * (1 - 1e-9) - 1e-12 or nx * spec.dx > width * (1 + 1e-9) + 1e-12:
        nx = int(np.ceil(width / spec.dx))
    x_edges = np.linspace(spec.x0, spec.x1, nx + 1)
    xc = 0.5 * (x_edges[1:] + x_edges[:-1])
    prof = np.asarray(scenario.ground)
    ground = np.interp(xc, prof[:, 0], prof[:, 1])
    top = float(ground.max())
    z_edges = _z_edges(top, spec)
    nz = z_edges.size - 1
    if nz * nx > 2e7:
        raise InputError(f"the grid has {nx} x {nz} = {nx * nz:.3g} cells, more than 2e7; use a coarser "
                         "dx or dz, or a growth factor", source=scenario.source, where="[grid]")
    zc = 0.5 * (z_edges[1:] + z_edges[:-1])
    active = zc[:, None] < ground[None, :]
    if not active[-1].all():
        raise InputError("the ground lies less than half a cell above the base somewhere; lower bottom",
                         source=scenario.source, where="[grid]")
    top_row = np.argmax(active, axis=0)
    bottom_of_cell = np.broadcast_to(z_edges[1:, None], (nz, nx))
    top_of_cell = np.broadcast_to(z_edges[:-1, None], (nz, nx)).copy()
    cols = np.arange(nx)
    top_of_cell[top_row, cols] = ground
    thickness = np.where(active, top_of_cell - bottom_of_cell, 0.0)
    return Grid(x_edges, z_edges, ground, active, top_row, thickness)
