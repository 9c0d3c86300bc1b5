"""The discretised section: conductance matrix, boundary faces and their terms at a given time.

Each boundary condition is a *term*: for the cells it touches, an inflow ``r - c u`` (m^2/s per
metre of section width, positive into the aquifer) where ``c`` is the term's conductance and
``u = h - h_ref`` is the head relative to a reference head. The matrix is ``L + diag(sum c)``; the
right-hand side is ``sum r``. A stage change alters only ``r``; a face that changes type (flooded,
seepage face, evapotranspiration below the extinction depth) alters ``c`` and so the
factorization.

Top faces of columns are split at the water's edge: the *wetted fraction* of a column is the
share of its width where the ground profile lies below the local stage (and inside the channel
limits), found exactly where the stage line crosses the piecewise-linear profile, so the wetted
length does not snap to columns. Over the wetted part of a top face:

- head = stage + bedform head, through the half cell and the optional bed leakance in series;

over the dry part:

- recharge, or a seepage face held at the ground elevation of the column (its top face; not
  below the local stage in a partly wetted column) where the head would rise above it (an active
  set chosen by the solver).

Riparian evapotranspiration is a head-dependent sink in the cells of the root zone:
``ET = max_rate * clip(1 - (ground - h) / extinction_depth, 0, 1)`` per unit of ground area, split over
the root depth by cell thickness (each cell uses its own head, so the matrix stays symmetric). It
acts on the ground that lies both inside the riparian x range and out of the water at that time:
none under the stream or a flood.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Mapping

import numpy as np
import scipy.sparse as sp

from bedflux.scenario.bedform import bedform_head
from bedflux.errors import InputError
from bedflux.scenario.forcing import daylight_mean
from bedflux.section.grid import MIN_COLUMNS_PER_BEDFORM, Grid, GroundPieces, build_grid, ground_pieces
from bedflux.section.materials import Materials, materials
from bedflux.scenario.spec import BoundarySpec, Scenario
from bedflux.section.operator import (Faces, conductance_matrix, diagonal_positions, half_cell_resistance, horizontal_faces,
                                      joined, skew_faces, unknown_positions, vertical_faces)

#: Wetted fractions this close to 0 or 1 count as dry or fully submerged (round-off at the edge).
FRACTION_SNAP = 1e-9

#: Branches of the ET rule (:func:`et_branch`): none below the extinction depth, linear in the
#: depth to water between, the full rate with the water table at or above the ground.
ET_NONE, ET_LINEAR, ET_FULL = 0, 1, 2


def et_branch(depth: np.ndarray, extinction_depth: np.ndarray) -> np.ndarray:
    """The branch of ``ET = rate * clip(1 - depth / extinction_depth, 0, 1)`` at each depth to
    water ``depth`` (m, ground minus head): :data:`ET_FULL` at or above the ground,
    :data:`ET_NONE` at or below the extinction depth, :data:`ET_LINEAR` between (int8)."""
    return np.where(depth <= 0.0, ET_FULL, np.where(depth >= extinction_depth, ET_NONE, ET_LINEAR)).astype(np.int8)


@dataclass
class Term:
    """One boundary or sink term: inflow ``r - conductance u[cells]`` into the listed cells.

    ``kind`` is its budget line; ``face`` says which face of the cell it crosses (``top``,
    ``left``, ``right``, ``bottom``; ``cell`` for a volume sink) and ``column_or_row`` the column
    (top, bottom, cell) or row (sides) of each entry. ``conductance`` (m^2/s per m of head per
    metre of width) is what the term adds to the matrix diagonal, ``r`` what it adds to the
    right-hand side. ``width`` is the part of a top face the term acts on (m): the wetted or the
    dry part of the column (None: the whole face).
    """

    kind: str
    face: str
    cells: np.ndarray
    column_or_row: np.ndarray
    conductance: np.ndarray
    r: np.ndarray
    width: np.ndarray | None = None

    def inflow(self, u: np.ndarray) -> np.ndarray:
        """Inflow (m^2/s) through each entry for relative heads ``u``."""
        return self.r - self.conductance * u[self.cells]


@dataclass
class ActiveSet:
    """The face states a steady or transient solve chooses: seepage faces and ET branches."""

    seepage: np.ndarray
    et_mode: np.ndarray

    def copy(self) -> "ActiveSet":
        return ActiveSet(self.seepage.copy(), self.et_mode.copy())

    def same(self, other: "ActiveSet") -> bool:
        return bool(np.array_equal(self.seepage, other.seepage) and np.array_equal(self.et_mode, other.et_mode))


@dataclass
class _SideGeometry:
    cells: np.ndarray
    column_or_row: np.ndarray
    conductance: np.ndarray
    area: np.ndarray


@dataclass
class WetState:
    """Where the stream covers the top faces at one time (per column, SI).

    ``wet`` is the wetted length, ``dry`` the rest of the column, ``et_length`` the dry length
    inside the riparian range of each ET entry.
    """

    fraction: np.ndarray
    wet: np.ndarray
    dry: np.ndarray
    et_length: np.ndarray


@dataclass
class Section:
    """A scenario discretised on its grid. Build with :func:`discretise`.

    The wetted fraction of a column is exact in steady runs (the stage line crossing the ground
    profile). In transient runs each *piece* of a column (between its edges, the channel limits
    and the riparian range ends) is wholly wet or dry as the ground at its midpoint lies below the
    stage or not: the matrix then changes only when the water's edge passes a piece midpoint, so
    factorizations are reused while the edge moves and the face states change in steps, as the
    time stepping assumes. Without limits or ranges inside a column this is its centre.
    """

    scenario: Scenario
    grid: Grid
    materials: Materials
    index: np.ndarray
    hfaces: Faces
    vfaces: Faces
    L: sp.csr_matrix
    h_ref: float
    top_cells: np.ndarray
    top_half_resistance: np.ndarray
    channel: np.ndarray
    bed_head: np.ndarray
    sides: dict[str, _SideGeometry]
    et_cells: np.ndarray
    et_cols: np.ndarray
    et_unit_rate: np.ndarray
    et_ext: np.ndarray
    et_cycle: np.ndarray
    et_zone: np.ndarray
    pieces: GroundPieces = field(repr=False, default=None)
    piece_in_channel: np.ndarray = field(repr=False, default=None)
    piece_in_riparian: np.ndarray = field(repr=False, default=None)
    diagonal: np.ndarray = field(repr=False, default=None)
    et_share: np.ndarray = field(repr=False, default=None)
    _wet_memo: dict = field(repr=False, default_factory=dict)

    @property
    def n(self) -> int:
        return self.grid.n_active

    @cached_property
    def cell_volume(self) -> np.ndarray:
        """Cell area in the section (m^2 per metre of width), per unknown (made when first needed)."""
        return (self.grid.thickness * self.grid.dx[None, :])[self.grid.active]

    # ---------------------------------------------------------------------------- forcing
    def stage(self, t: float) -> float | None:
        """Stream stage (m) at time ``t`` or None without a stream."""
        s = self.scenario.stream
        return None if s is None else float(s.stage(t))

    def submerged(self, t: float) -> np.ndarray:
        """Columns whose centre is under the stream at time ``t`` (inside the channel limits and
        ground below the local stage): their water table is held at the ground, so they have no
        specific-yield storage. The stream acts on the wetted part of every column
        (:meth:`wetted_fraction`), also where the centre is dry."""
        if self.scenario.stream is None:
            return np.zeros(self.grid.nx, dtype=bool)
        return self.channel & (self.grid.ground < self.local_stage(t)) & (self.wetted_fraction(t) > 0.0)

    def wetted_fraction(self, t: float) -> np.ndarray:
        """Share of each column's top face under the stream at time ``t`` (0 to 1)."""
        return self.wet_state(t).fraction

    def wet_state(self, t: float) -> WetState:
        """Wetted and dry lengths of the top faces at time ``t`` (kept for the last few times)."""
        key = float(t)
        if key in self._wet_memo:
            return self._wet_memo[key]
        g = self.grid
        p = self.pieces
        if self.scenario.stream is None:
            phi = np.zeros(p.mid.size)
        else:
            s0 = self.scenario.stream.local_stage(t, p.x0)
            s1 = self.scenario.stream.local_stage(t, p.x1)
            phi = p.below(s0, s1, exact=not self.scenario.transient) * self.piece_in_channel
        wet = p.per_column(p.length * phi, g.nx)
        frac = wet / g.dx
        frac = np.where(frac < FRACTION_SNAP, 0.0, np.where(frac > 1.0 - FRACTION_SNAP, 1.0, frac))
        wet = frac * g.dx
        dry = g.dx - wet
        et_length = np.zeros(self.et_cells.size)
        for iz in range(self.piece_in_riparian.shape[0]):
            in_zone = self.piece_in_riparian[iz]
            overlap = p.per_column(p.length * in_zone, g.nx)
            dry_in = np.where(frac == 0.0, overlap, np.where(frac == 1.0, 0.0,
                              p.per_column(p.length * (1.0 - phi) * in_zone, g.nx)))
            sel = self.et_zone == iz
            et_length[sel] = dry_in[self.et_cols[sel]]
        state = WetState(frac, wet, dry, et_length)
        if len(self._wet_memo) >= 4:
            self._wet_memo.pop(next(iter(self._wet_memo)))
        self._wet_memo[key] = state
        return state

    def seepage_level(self, t: float) -> np.ndarray:
        """Elevation a seepage face on the dry part of each column's top face is held at: the
        ground, but not below the local stage in a partly wetted column (its dry part lies above
        the water)."""
        level = self.grid.ground
        partial = (self.wetted_fraction(t) > 0.0) & (self.wetted_fraction(t) < 1.0)
        if partial.any():
            level = np.where(partial, np.maximum(level, self.local_stage(t)), level)
        return level

    def et_rate_at(self, t: float) -> np.ndarray:
        """Maximum ET of each entry (m^2/s per metre of width) at time ``t``, before the daily cycle:
        the rate times the dry ground of its column inside the riparian range, times the entry's
        share of the root zone."""
        return self.et_unit_rate * self.wet_state(t).et_length

    def local_stage(self, t: float) -> np.ndarray:
        """Stage above each column at time ``t`` (the stage plus the water-surface slope)."""
        return self.scenario.stream.local_stage(t, self.grid.xc)

    def et_factor(self, t0: float, t1: float) -> float:
        """Mean multiplier of the ET rate over ``[t0, t1]`` of a transient run: the daily cycle on
        the run's clock (:func:`bedflux.scenario.forcing.daylight_mean`); its value at ``t0`` when ``t1 == t0``."""
        return daylight_mean(t0, t1, self.scenario.time.clock0)

    # ---------------------------------------------------------------------------- active sets
    def initial_active_set(self) -> ActiveSet:
        """No seepage faces; evapotranspiration on its linear branch."""
        return ActiveSet(np.zeros(self.grid.nx, dtype=bool), np.full(self.et_cells.size, ET_LINEAR, dtype=np.int8))

    def et_branch_at(self, u: np.ndarray) -> np.ndarray:
        """The ET branch (:func:`et_branch`) of each ET entry for the relative heads ``u``."""
        return et_branch(self.grid.ground[self.et_cols] - (u[self.et_cells] + self.h_ref), self.et_ext)

    def terms(self, t: float, state: ActiveSet, steady: bool = True,
              u_lag: np.ndarray | None = None, et_window: tuple[float, float] | None = None) -> list[Term]:
        """The boundary and sink terms at time ``t`` for the given active set.

        With a daily ET cycle in a transient run, ET is taken at the heads ``u_lag`` of the start
        of the step (explicit) with the cycle's mean over ``et_window`` (the step; default the
        instant ``t``); otherwise it is implicit on the branch of the active set.
        """
        g = self.grid
        cols = np.arange(g.nx)
        ws = self.wet_state(t)
        wet = ws.fraction > 0.0
        out: list[Term] = []
        if wet.any():
            sc = self.scenario.stream
            half = self.top_half_resistance[wet]
            if sc.leakance is not None:
                half = half + 1.0 / sc.leakance
            cond = ws.wet[wet] / half
            head = self.local_stage(t)[wet] + self.bed_head[wet]
            out.append(Term("stream", "top", self.top_cells[wet], cols[wet], cond, cond * (head - self.h_ref),
                            ws.wet[wet]))
        dry = ws.fraction < 1.0
        seep = dry & state.seepage
        if seep.any():
            cond = ws.dry[seep] / self.top_half_resistance[seep]
            out.append(Term("seepage_face", "top", self.top_cells[seep], cols[seep], cond,
                            cond * (self.seepage_level(t)[seep] - self.h_ref), ws.dry[seep]))
        rech = dry & ~state.seepage
        if rech.any() and self.scenario.recharge != 0.0:
            out.append(Term("recharge", "top", self.top_cells[rech], cols[rech], np.zeros(rech.sum()),
                            self.scenario.recharge * ws.dry[rech], ws.dry[rech]))
        for side in ("left", "right", "bottom"):
            spec: BoundarySpec = getattr(self.scenario, side)
            geo = self.sides.get(side)
            if geo is None or spec.kind in ("no-flow", "periodic"):
                continue
            if spec.kind == "flux":
                q = float(spec.signal(t))
                out.append(Term(side, side, geo.cells, geo.column_or_row, np.zeros(geo.cells.size), q * geo.area))
            else:
                if spec.kind == "stream":
                    x_side = g.x_edges[0] if side == "left" else g.x_edges[-1]
                    head = float(self.scenario.stream.local_stage(t, x_side))
                else:
                    head = float(spec.signal(t))
                kind = "stream" if spec.kind == "stream" else side
                out.append(Term(kind, side, geo.cells, geo.column_or_row, geo.conductance,
                                geo.conductance * (head - self.h_ref)))
        if self.et_cells.size:
            ground = g.ground[self.et_cols]
            mode = state.et_mode.copy()
            explicit = self.et_cycle & (u_lag is not None) & (not steady)
            f = np.where(explicit, self.et_factor(*(et_window or (t, t))) if explicit.any() else 1.0, 1.0)
            rate = self.et_rate_at(t) * f
            if explicit.any():
                # daily cycle: ET taken at the heads of the start of the step (explicit); its
                # dependence on head is weak (rate / extinction depth), so this is stable
                mode = np.where(explicit, self.et_branch_at(u_lag), mode)
            # ET = f rate (1 - (ground - h)/ext) on the linear branch, f rate when h >= ground
            implicit = (mode == ET_LINEAR) & ~explicit
            et_conductance = np.where(implicit, rate / self.et_ext, 0.0)
            linear_r = -rate * (1.0 - (ground - self.h_ref) / self.et_ext)
            if explicit.any():
                lagged = -rate * (1.0 - (ground - self.h_ref - u_lag[self.et_cells]) / self.et_ext)
                linear_r = np.where(explicit, lagged, linear_r)
            r = np.where(mode == ET_LINEAR, linear_r, np.where(mode == ET_FULL, -rate, 0.0))
            out.append(Term("evapotranspiration", "cell", self.et_cells, self.et_cols, et_conductance, r))
        return out

    def update_active_set(self, u: np.ndarray, terms: list[Term], t: float, state: ActiveSet) -> ActiveSet:
        """The active set implied by the heads ``u``: seepage where the top cell's head rises above
        the ground, release where a seepage face would draw in more than the recharge; ET branch
        from the depth to water of each root-zone cell."""
        new = state.copy()
        ws = self.wet_state(t)
        h_top = u[self.top_cells] + self.h_ref
        # the top cell's head rising above the ground makes a seepage face; with the release rule
        # below this is complementary (no cycling), in steady and in transient steps
        rise = (ws.fraction < 1.0) & ~state.seepage & (h_top > self.seepage_level(t))
        new.seepage[rise] = True
        for term in terms:
            if term.kind == "seepage_face":
                inflow = term.inflow(u) / term.width
                release = inflow > max(self.scenario.recharge, 0.0) + 1e-15
                new.seepage[term.column_or_row[release]] = False
        new.seepage[ws.fraction >= 1.0] = False
        if self.et_cells.size:
            new.et_mode = self.et_branch_at(u)
        return new

    # ---------------------------------------------------------------------------- storage
    def storage(self, wet: np.ndarray) -> np.ndarray:
        """Storage coefficient per unknown (m^2 per m of head per metre of width): specific storage
        times cell area, plus specific yield times the column width at exposed top cells."""
        return self.elastic_storage() + self.water_table_storage(wet)

    def elastic_storage(self) -> np.ndarray:
        """Specific storage times cell area, per unknown."""
        return self._elastic

    @cached_property
    def _elastic(self) -> np.ndarray:
        return self.materials.specific_storage[self.grid.active] * self.cell_volume

    @cached_property
    def ground_u(self) -> np.ndarray:
        """Ground elevation relative to h_ref at each top cell, +inf at every other unknown."""
        out = np.full(self.n, np.inf)
        out[self.top_cells] = self.grid.ground - self.h_ref
        return out

    @cached_property
    def top_specific_yield(self) -> np.ndarray:
        """Specific yield of the top cell of each column."""
        return self.materials.specific_yield[self.grid.top_row, np.arange(self.grid.nx)]

    def water_table_storage(self, wet: np.ndarray) -> np.ndarray:
        """Specific yield times column width at the top cell of each exposed column, per unknown."""
        s = np.zeros(self.n)
        exposed = ~wet
        s[self.top_cells[exposed]] = self.top_specific_yield[exposed] * self.grid.dx[exposed]
        return s

    # ---------------------------------------------------------------------------- assembly
    def matrix(self, terms: list[Term], extra_diag: np.ndarray | float = 0.0) -> sp.csr_matrix:
        """``L + diag(sum conductance + extra_diag)``, sharing ``L``'s index arrays (only the values
        are new)."""
        d = np.zeros(self.n) + extra_diag
        for term in terms:
            _bincount_add(d, term.cells, term.conductance)
        data = self.L.data.copy()
        data[self.diagonal] += d
        A = sp.csr_matrix((data, self.L.indices, self.L.indptr), shape=self.L.shape, copy=False)
        A.has_sorted_indices = self.L.has_sorted_indices
        return A

    def rhs(self, terms: list[Term]) -> np.ndarray:
        """``sum r`` over the terms."""
        b = np.zeros(self.n)
        for term in terms:
            _bincount_add(b, term.cells, term.r)
        return b


def _bincount_add(target: np.ndarray, cells: np.ndarray, values: np.ndarray) -> None:
    target += np.bincount(cells, weights=values, minlength=target.size)


def _side_geometry(grid: Grid, mat: Materials, idx: np.ndarray, side: str) -> _SideGeometry:
    if side in ("left", "right"):
        col = 0 if side == "left" else grid.nx - 1
        rows = np.nonzero(grid.active[:, col])[0]
        area = grid.thickness[rows, col]
        cond = area / half_cell_resistance(grid.dx[col], mat.kh[rows, col])
        return _SideGeometry(idx[rows, col], rows, cond, area)
    row = grid.nz - 1
    cols = np.arange(grid.nx)
    area = grid.dx
    cond = area / half_cell_resistance(grid.thickness[row], mat.kv[row])
    return _SideGeometry(idx[row], cols, cond, area)


def side_geometries(grid: Grid, mat: Materials, idx: np.ndarray) -> dict[str, _SideGeometry]:
    """Cells, conductance (half a cell to the boundary) and area of the left, right and bottom faces."""
    return {s: _side_geometry(grid, mat, idx, s) for s in ("left", "right", "bottom")}


def reference_head(scenario: Scenario, grid: Grid) -> float:
    """The head the unknowns are counted from: the stage at t = 0, else the first side head at t = 0,
    else the mean ground."""
    if scenario.stream is not None:
        return float(scenario.stream.stage(0.0))
    for spec in (scenario.left, scenario.right, scenario.bottom):
        if spec.kind == "head":
            return float(spec.signal(0.0))
    return float(grid.ground.mean())


def et_unit_rate(scenario: Scenario, et_zone: np.ndarray, et_share: np.ndarray) -> np.ndarray:
    """Rate per metre of dry ground of each ET entry: its riparian zone's rate times the entry's
    share of the root zone."""
    max_rate = np.array([r.max_rate for r in scenario.riparian], dtype=float)
    return max_rate[et_zone] * et_share if et_zone.size else np.zeros(0)


def _evapotranspiration(scenario: Scenario, grid: Grid, idx: np.ndarray):
    """ET entries of every column that overlaps a riparian range: cells, columns, share of the
    root zone, extinction depth, daily cycle flag and zone number."""
    cells, cols, share, ext, cyc, zone = [], [], [], [], [], []
    zc = grid.z_centre
    for iz, r in enumerate(scenario.riparian):
        overlap = np.minimum(grid.x_edges[1:], r.x[1]) - np.maximum(grid.x_edges[:-1], r.x[0])
        for_cols = np.nonzero(overlap > 0.0)[0]
        if for_cols.size == 0:
            raise InputError(f"x = [{r.x[0]:g}, {r.x[1]:g}] overlaps no column: it holds no column centre and "
                             f"no part of the grid ([{grid.x_edges[0]:g}, {grid.x_edges[-1]:g}] m)",
                             source=scenario.source,
                             where=f"riparian {iz}")
        if r.root_depth <= 0.0:
            rows = grid.top_row[for_cols]
            cells.append(idx[rows, for_cols]); cols.append(for_cols)
            share.append(np.ones(for_cols.size))
        else:
            depth = grid.ground[None, for_cols] - zc[:, for_cols]
            within = grid.active[:, for_cols] & (depth <= r.root_depth)
            within[grid.top_row[for_cols], np.arange(for_cols.size)] = True
            w = np.where(within, grid.thickness[:, for_cols], 0.0)
            w = w / w.sum(axis=0, keepdims=True)
            rr, cc = np.nonzero(within)
            cells.append(idx[rr, for_cols[cc]]); cols.append(for_cols[cc])
            share.append(w[rr, cc])
        n = cells[-1].size
        ext.append(np.full(n, r.extinction_depth)); cyc.append(np.full(n, r.daily_cycle))
        zone.append(np.full(n, iz))
    if not cells:
        e = np.zeros(0)
        i = np.zeros(0, dtype=np.int64)
        return i, i, e, e, np.zeros(0, dtype=bool), i
    return (np.concatenate(cells), np.concatenate(cols), np.concatenate(share), np.concatenate(ext),
            np.concatenate(cyc), np.concatenate(zone))


def _require_resolved_bedform(scenario: Scenario, grid: Grid) -> None:
    """Refuse a bedform shorter than half the resolution check's minimum of columns (it would
    alias to a nearly uniform head)."""
    stream = scenario.stream
    if stream is None or stream.bedform is None:
        return
    per_col = stream.bedform.wavelength / float(grid.dx.max())
    if per_col < MIN_COLUMNS_PER_BEDFORM / 2:
        raise InputError(f"wavelength = {stream.bedform.wavelength:g} m spans only {per_col:.2g} columns of "
                         f"dx = {grid.dx.max():g} m; the dynamic head would alias to a nearly uniform head. "
                         f"Use [grid] dx of {stream.bedform.wavelength / MIN_COLUMNS_PER_BEDFORM:.2g} m or less "
                         f"(at least {MIN_COLUMNS_PER_BEDFORM // 2} columns per wavelength are required, "
                         f"{MIN_COLUMNS_PER_BEDFORM} advised)", source=scenario.source, where="[stream.bedform]")


def discretise(scenario: Scenario, fields: Mapping[str, np.ndarray] | None = None) -> Section:
    """Build the grid, the materials, the conductance matrix and the boundary geometry.

    Raises
    ------
    InputError
        If no head is fixed anywhere (the steady problem would have no unique solution), or a
        bedform wavelength spans fewer than 4 columns.
    """
    grid = build_grid(scenario)
    _require_resolved_bedform(scenario, grid)
    mat = materials(scenario, grid, fields)
    idx = grid.index()
    periodic = scenario.left.kind == "periodic"
    positions = unknown_positions(grid)
    hf = horizontal_faces(grid, mat, periodic, positions)
    sk = skew_faces(grid, mat, periodic, positions)
    vf = vertical_faces(grid, mat, positions)
    L = conductance_matrix(grid.n_active, [hf, vf, sk])
    cols = np.arange(grid.nx)
    top_cells = idx[grid.top_row, cols]
    top_half_resistance = half_cell_resistance(grid.thickness[grid.top_row, cols], mat.kv[grid.top_row, cols])
    stream = scenario.stream
    limits = stream.channel if stream is not None and stream.channel is not None else None
    cuts = list(limits or ()) + [v for r in scenario.riparian for v in r.x]
    pieces = ground_pieces(grid, scenario.ground, cuts, at_vertices=not scenario.transient)
    if limits is not None:
        in_channel = (pieces.mid >= limits[0]) & (pieces.mid <= limits[1])
        channel = (grid.xc >= limits[0]) & (grid.xc <= limits[1])
    else:
        in_channel = np.ones(pieces.mid.size, dtype=bool)
        channel = np.ones(grid.nx, dtype=bool)
    in_riparian = np.array([(pieces.mid >= r.x[0]) & (pieces.mid <= r.x[1]) for r in scenario.riparian],
                           dtype=bool).reshape(len(scenario.riparian), pieces.mid.size)
    bed_head = np.zeros(grid.nx)
    if stream is not None and stream.bedform is not None:
        bf = stream.bedform
        bed_head = bedform_head(grid.xc, bf.amplitude, bf.wavelength, bf.phase)
    sides = side_geometries(grid, mat, idx)
    et_cells, et_cols, et_share, et_ext, et_cycle, et_zone = _evapotranspiration(scenario, grid, idx)
    section = Section(scenario, grid, mat, idx, joined(hf, sk), vf, L, reference_head(scenario, grid), top_cells,
                      top_half_resistance, channel, bed_head, sides, et_cells, et_cols,
                      et_unit_rate(scenario, et_zone, et_share), et_ext, et_cycle, et_zone, pieces=pieces,
                      piece_in_channel=in_channel, piece_in_riparian=in_riparian, diagonal=diagonal_positions(L),
                      et_share=et_share)
    require_fixed_head(section)
    return section


def require_fixed_head(section: Section) -> None:
    """Raise if no head is fixed anywhere (the steady problem would have no unique solution)."""
    s = section.scenario
    fixed_side = any(b.kind in ("head", "stream") for b in (s.left, s.right, s.bottom))
    can_flood = s.stream is not None and section.channel.any()
    if not (fixed_side or can_flood or s.recharge > 0.0):
        raise InputError("no head is fixed anywhere: add a [stream] stage over the section, a side "
                         "{head = V} or side = \"stream\"", source=s.source, where="[sides]")
