"""The rectilinear x-z grid of the section and its active cells below the ground.

Rows run from the top of the grid (``k = 0``, the highest ground) down to the model base.
A cell is active when its centre lies below the ground. The topmost active cell of a column is
cut or extended so that its top face is exactly where the ground cuts the column: its thickness
is ``ground - z_bottom_of_cell`` (between half and one and a half regular spacings).

The ground profile itself (piecewise linear) is kept as :class:`GroundPieces`, straight pieces
inside columns, to find how much of each column's top face lies below a water line (the wetted
fraction) and where. :func:`resolution_warnings` says in plain words where a grid is too coarse
for what the scenario asks.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from bedflux.errors import InputError
from bedflux.scenario.spec import GridSpec, Scenario


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

    @cached_property
    def xc(self) -> np.ndarray:
        return _read_only(0.5 * (self.x_edges[1:] + self.x_edges[:-1]))

    @property
    def zc(self) -> np.ndarray:
        return 0.5 * (self.z_edges[1:] + self.z_edges[:-1])

    @cached_property
    def dx(self) -> np.ndarray:
        return _read_only(np.diff(self.x_edges))

    @property
    def cell_bottom(self) -> np.ndarray:
        return np.broadcast_to(self.z_edges[1:, None], (self.nz, self.nx))

    @property
    def cell_top(self) -> np.ndarray:
        return np.where(self.active, self.cell_bottom + self.thickness, np.nan)

    @property
    def z_centre(self) -> np.ndarray:
        return np.where(self.active, self.cell_bottom + 0.5 * self.thickness, np.nan)

    @cached_property
    def n_active(self) -> int:
        return int(self.active.sum())

    def index(self) -> np.ndarray:
        """``(nz, nx)`` unknown number of each active cell (row-major), -1 where inactive."""
        idx = np.full(self.active.shape, -1, dtype=np.int32)
        idx[self.active] = np.arange(self.n_active, dtype=np.int32)
        return idx


def _read_only(a: np.ndarray) -> np.ndarray:
    """``a``, write-protected (it is kept and handed out again)."""
    a.setflags(write=False)
    return a


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


@dataclass(frozen=True)
class GroundPieces:
    """The ground profile cut into pieces at column edges and given x (straight pieces when it is
    also cut at the profile vertices).

    ``column`` is the column of each piece, ``x0, x1`` its ends, ``g0, g1`` the ground there and
    ``gm`` the ground at its midpoint.
    """

    column: np.ndarray
    x0: np.ndarray
    x1: np.ndarray
    g0: np.ndarray
    g1: np.ndarray
    gm: np.ndarray

    @property
    def length(self) -> np.ndarray:
        return self.x1 - self.x0

    @property
    def mid(self) -> np.ndarray:
        return 0.5 * (self.x0 + self.x1)

    def below(self, level0: np.ndarray, level1: np.ndarray, exact: bool = True) -> np.ndarray:
        """Fraction of each piece whose ground lies below a straight water line of elevation
        ``level0`` at ``x0`` and ``level1`` at ``x1``: exact (both are linear along the piece), or
        1 or 0 as the ground at the piece's midpoint lies below the line or not (the piece need
        not be straight then)."""
        if not exact:
            return (0.5 * (level0 + level1) > self.gm).astype(float)
        d0, d1 = level0 - self.g0, level1 - self.g1
        hi, lo = np.maximum(d0, d1), np.minimum(d0, d1)
        with np.errstate(invalid="ignore", divide="ignore"):
            part = hi / (hi - lo)
        return np.where(lo > 0.0, 1.0, np.where(hi <= 0.0, 0.0, part))

    def per_column(self, values: np.ndarray, nx: int) -> np.ndarray:
        """Sum of per-piece ``values`` over each column."""
        return np.bincount(self.column, weights=values, minlength=nx)


def ground_pieces(grid: Grid, profile: np.ndarray, cuts: list[float] | tuple[float, ...] = (),
                  at_vertices: bool = True) -> GroundPieces:
    """Cut the profile ``[[x, elevation], ...]`` at the column edges, at ``cuts`` and (unless
    ``at_vertices`` is False) at its own vertices; the ends of each piece lie on the profile."""
    prof = np.asarray(profile, dtype=float)
    x0, x1 = grid.x_edges[0], grid.x_edges[-1]
    extra = np.concatenate([prof[:, 0] if at_vertices else [], np.asarray(cuts, dtype=float)])
    xs = np.unique(np.concatenate([grid.x_edges, extra[(extra > x0) & (extra < x1)]]))
    g = np.interp(xs, prof[:, 0], prof[:, 1])
    mid = 0.5 * (xs[1:] + xs[:-1])
    col = np.clip(np.searchsorted(grid.x_edges, mid, side="right") - 1, 0, grid.nx - 1)
    return GroundPieces(col, xs[:-1], xs[1:], g[:-1], g[1:], np.interp(mid, prof[:, 0], prof[:, 1]))


#: A bed layer should span at least this many cells (common practice for a resolved gradient).
MIN_CELLS_ACROSS_LAYER = 3
#: The submerged width should span at least this many columns (common practice).
MIN_WETTED_COLUMNS = 10
#: A bedform wavelength should span at least this many columns; fewer than half as many is refused.
MIN_COLUMNS_PER_BEDFORM = 8


def resolution_warnings(scenario: Scenario, grid: Grid) -> list[str]:
    """Plain-language warnings where the grid is coarse for what the scenario asks (cheap: no solve).

    Checks a layer zone thinner than :data:`MIN_CELLS_ACROSS_LAYER` cells, a submerged width
    (at the lowest and highest stage of the run) of fewer than :data:`MIN_WETTED_COLUMNS` columns,
    and a bedform wavelength of fewer than :data:`MIN_COLUMNS_PER_BEDFORM` columns or rows.
    """
    out: list[str] = []
    dz_rows = -np.diff(grid.z_edges)
    for zone in scenario.zones[1:]:
        if zone.depth is None:
            continue
        cols = np.ones(grid.nx, dtype=bool) if zone.x is None else (
            (grid.x_edges[1:] > zone.x[0]) & (grid.x_edges[:-1] < zone.x[1]))
        if not cols.any():
            continue
        base = grid.ground[cols] - zone.depth
        rows = np.clip(np.searchsorted(-grid.z_edges, -base) - 1, 0, grid.nz - 1)
        spacing = float(dz_rows[rows].max())
        cells = zone.depth / spacing
        if cells < MIN_CELLS_ACROSS_LAYER:
            out.append(f"zone '{zone.name}' is {zone.depth:.3g} m thick but spans only {cells:.2g} cells "
                       f"(row spacing {spacing:.3g} m at its base): heads and gradients inside it are "
                       f"coarse; use dz of {zone.depth / MIN_CELLS_ACROSS_LAYER:.2g} m or less there")
    stream = scenario.stream
    if stream is not None:
        end = scenario.time.end if scenario.time is not None else 0.0
        low, high = stream.stage.bounds(end)
        pieces = ground_pieces(grid, scenario.ground, stream.channel or ())
        inside = np.ones(pieces.mid.size, dtype=bool) if stream.channel is None else (
            (pieces.mid >= stream.channel[0]) & (pieces.mid <= stream.channel[1]))
        for level in sorted({low, high}):
            s0 = level + stream.slope * pieces.x0
            s1 = level + stream.slope * pieces.x1
            width = float(np.sum(pieces.length * pieces.below(s0, s1) * inside))
            ncols = width / float(grid.dx.max())
            if 0.0 < ncols < MIN_WETTED_COLUMNS:
                out.append(f"at stage {level:.4g} m the submerged bed is {width:.3g} m wide, only {ncols:.2g} "
                           f"columns of {grid.dx.max():.3g} m: the water's edges carry much of the exchange; "
                           f"use dx of {width / MIN_WETTED_COLUMNS:.2g} m or less")
        bf = stream.bedform
        if bf is not None:
            per_col = bf.wavelength / float(grid.dx.max())
            if per_col < MIN_COLUMNS_PER_BEDFORM:
                out.append(f"the bedform wavelength {bf.wavelength:.3g} m spans only {per_col:.2g} columns: "
                           f"the dynamic head is under-resolved; use dx of "
                           f"{bf.wavelength / MIN_COLUMNS_PER_BEDFORM:.2g} m or less")
            per_row = bf.wavelength / float(dz_rows[grid.top_row].max())
            if per_row < MIN_COLUMNS_PER_BEDFORM:
                out.append(f"the bedform wavelength {bf.wavelength:.3g} m spans only {per_row:.2g} rows at the bed: "
                           f"the pumped flow below it is under-resolved; use dz of "
                           f"{bf.wavelength / MIN_COLUMNS_PER_BEDFORM:.2g} m or less near the bed")
    return out
