"""Exact tracing of many paths at once through a block-centred flow field (Pollock 1988).

Inside a cell the pore velocity is linear in each direction between its face values,
``vx = vx0 + a (x - x0)`` with ``a = (vx1 - vx0) / dx`` (and likewise in z), so a particle moves as
``x(t) = x0 + (vxp exp(a t) - vx0) / a`` from where its velocity is ``vxp``. The time to reach a
face follows in closed form, ``t = ln(v_face / vxp) / a`` (``distance / vxp`` when ``a`` is 0); the
particle leaves through the face it reaches first and enters the neighbouring cell. A path is
thus exact for the discrete flow field and costs a few operations per cell crossed.

All paths advance together, one cell crossing per step of a numpy loop (no loop over paths or
cells): the number of loop steps is the largest number of cells a path crosses.

Ends of a path (:data:`EXIT_KINDS`): the top face of a column under the stream (``bed``), the top
face of a dry column (``seepage face``; ``ground`` where that ground evaporates, a negative
recharge, and is not a seepage face), the left or right side (``side``), the base (``base``), a
cell whose inside takes up the water (``sink``: evapotranspiration in steady flow, root water
uptake), or none (``not out within the horizon``: it has not left when its clock reaches the
horizon or after the most crossings allowed).

Sinks. A path that cannot leave a cell with a sink inside (all its velocities point into the
cell's inside) is taken up there when it enters it (steady flow). Where the uptake of a cell is
known apart from storage changes (root water uptake of a variably saturated run,
evapotranspiration of a steady saturated one: ``CellField.uptake_share``), a path entering the cell is also taken up with the probability of
the uptake's share of the water leaving the cell: the cell is taken as mixed, so each drop
entering it leaves by the roots in that proportion, and the weights of the paths taken up add
up, in expectation, to the uptake of the stream water. A cell whose faces take nothing out has a
share of 1, the first rule again. The draws come from a generator with a fixed seed, so a run
traces the same paths every time.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bedflux.flowpaths.field import CellField

#: Exit kinds, in the order of their codes.
EXIT_KINDS = ("not out within the horizon", "bed", "seepage face", "side", "base", "sink", "ground")
NOT_OUT, BED, SEEPAGE, SIDE, BASE, SINK, GROUND = range(7)
#: Seed of the draws that decide which paths root water uptake takes.
UPTAKE_SEED = 20261203
#: Relative size below which a velocity gradient counts as zero (travel time distance / velocity).
FLAT = 1e-9


@dataclass
class Paths:
    """State of a set of paths (SI): position, cell, clock, and what they have done so far.

    ``t`` is each path's clock (s since the start of the run), ``elapsed`` the time since its
    release, ``length`` the path length (sum of the chords across the cells), ``lowest`` the
    lowest elevation the path has reached, ``exit`` the exit code
    (-1 while moving), ``crossings`` the number of cells crossed, ``fresh`` whether the path has
    just entered its cell (the uptake of the cell has not yet been drawn for it).
    """

    x: np.ndarray
    z: np.ndarray
    col: np.ndarray
    row: np.ndarray
    t: np.ndarray
    elapsed: np.ndarray = None
    length: np.ndarray = None
    lowest: np.ndarray = None
    exit: np.ndarray = None
    crossings: np.ndarray = None
    fresh: np.ndarray = None
    vertices: list = field(default_factory=list)

    def __post_init__(self) -> None:
        n = self.x.size
        self.elapsed = np.zeros(n) if self.elapsed is None else self.elapsed
        self.length = np.zeros(n) if self.length is None else self.length
        self.lowest = self.z.copy() if self.lowest is None else self.lowest
        self.exit = np.full(n, -1, dtype=np.int8) if self.exit is None else self.exit
        self.crossings = np.zeros(n, dtype=np.int64) if self.crossings is None else self.crossings
        self.fresh = np.ones(n, dtype=bool) if self.fresh is None else self.fresh

    @property
    def moving(self) -> np.ndarray:
        return self.exit < 0


def locate(fieldv: CellField, x: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Column and row of the cells holding points ``(x, z)``, and ``z`` moved into the column's
    active cells (a point above the column's top cell is put on its top face)."""
    col = np.clip(np.searchsorted(fieldv.x_edges, x, side="right") - 1, 0, fieldv.nx - 1)
    return (col,) + row_of(fieldv, col, z)


def row_of(fieldv: CellField, col: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Row of the cell of column ``col`` holding elevation ``z`` (the top cell for a point above
    the regular rows of the top cell), and ``z`` clipped to the column's top."""
    z = np.minimum(z, fieldv.ground[col])
    # z_edges decrease downward: row r spans z_edges[r + 1] .. z_edges[r]
    row = np.searchsorted(-fieldv.z_edges, -z, side="right") - 1
    row = np.clip(row, fieldv.top_row[col], fieldv.nz - 1)
    return row, z


def _exit_time(v: np.ndarray, a: np.ndarray, v_face: np.ndarray, distance: np.ndarray) -> np.ndarray:
    """Time to reach a face ``distance`` away (signed along the motion) where the velocity is
    ``v_face``, from velocity ``v`` with gradient ``a``; inf when the face is not reached."""
    reach = (v * v_face > 0.0) & (v != 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        small = np.abs(a * distance) <= FLAT * np.abs(v)
        t = np.where(small, distance / v, np.log(v_face / v) / a)
    return np.where(reach & (t >= 0.0), t, np.inf)


def _move(p: np.ndarray, v: np.ndarray, a: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """Position after ``dt`` from ``p`` with velocity ``v`` and gradient ``a``: ``p + v expm1(a dt) / a``."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ad = a * dt
        step = np.where(np.abs(ad) <= 1e-12, v * dt, v * np.expm1(ad) / a)
    return p + np.where(np.isfinite(step), step, 0.0)


def advance(fieldv: CellField, paths: Paths, until: float | np.ndarray, max_crossings: int,
            sinks_end: bool = True, keep_vertices: bool = False,
            rng: np.random.Generator | None = None) -> None:
    """Move the paths that are still moving through ``fieldv`` until they leave the section or
    their clock reaches ``until`` (s; a scalar or one per path), in place.

    Paths whose clock reaches ``until`` stay moving (the caller carries them on in the next
    field or ends them as not out); a path that has crossed ``max_crossings`` cells ends as not out.
    With ``sinks_end`` (steady flow) a path that cannot leave a cell with a sink inside ends there
    (``sink``) at the time it entered the cell; in transient flow the sink may turn into a source
    and the path waits. Where ``fieldv.uptake_share`` is given, a path entering a cell is taken up
    (``sink``) with that share as its probability, drawn from ``rng`` (default: a generator
    seeded with :data:`UPTAKE_SEED`).
    """
    if fieldv.uptake_share is not None and rng is None:
        rng = np.random.default_rng(UPTAKE_SEED)
    until = np.broadcast_to(np.asarray(until, dtype=float), paths.x.shape)
    xe = fieldv.x_edges
    width = xe[-1] - xe[0]
    idx = np.flatnonzero(paths.moving & (paths.t < until))
    while idx.size:
        col, row = paths.col[idx], paths.row[idx]
        cell = row * fieldv.nx + col
        x0, x1 = xe[col], xe[col + 1]
        z0, z1 = fieldv.z0[cell], fieldv.z1[cell]
        x = np.clip(paths.x[idx], x0, x1)
        z = np.clip(paths.z[idx], z0, z1)
        vx0, vx1, vz0, vz1 = fieldv.vx0[cell], fieldv.vx1[cell], fieldv.vz0[cell], fieldv.vz1[cell]
        ax = (vx1 - vx0) / (x1 - x0)
        az = (vz1 - vz0) / (z1 - z0)
        vx = vx0 + ax * (x - x0)
        vz = vz0 + az * (z - z0)
        tx = np.where(vx > 0.0, _exit_time(vx, ax, vx1, x1 - x), _exit_time(vx, ax, vx0, x0 - x))
        tz = np.where(vz > 0.0, _exit_time(vz, az, vz1, z1 - z), _exit_time(vz, az, vz0, z0 - z))
        left_in_step = until[idx] - paths.t[idx]
        # a path that cannot leave a cell with a sink inside is taken up there when it enters it
        # (steady flow: it would only creep towards the sink for ever)
        taken_up = (~np.isfinite(tx) & ~np.isfinite(tz) & fieldv.sink[cell]) if sinks_end else np.zeros(idx.size, bool)
        if fieldv.uptake_share is not None:
            fresh = paths.fresh[idx]
            share = fieldv.uptake_share[cell]
            drawn = fresh & (share > 0.0)
            roots = np.zeros(idx.size, bool)
            roots[drawn] = rng.random(int(drawn.sum())) < share[drawn]
            taken_up |= roots
            paths.fresh[idx] = False
        left_in_step = np.where(taken_up, 0.0, left_in_step)
        dt = np.minimum(np.minimum(tx, tz), left_in_step)
        by_x = (tx <= tz) & (tx <= left_in_step) & np.isfinite(tx) & ~taken_up
        by_z = ~by_x & (tz <= left_in_step) & np.isfinite(tz) & ~taken_up
        xn = np.where(by_x, np.where(vx > 0.0, x1, x0), np.clip(_move(x, vx, ax, dt), x0, x1))
        zn = np.where(by_z, np.where(vz > 0.0, z1, z0), np.clip(_move(z, vz, az, dt), z0, z1))
        paths.t[idx] += dt
        paths.elapsed[idx] += dt
        paths.length[idx] += np.hypot(xn - x, zn - z)
        paths.lowest[idx] = np.minimum(paths.lowest[idx], zn)
        paths.crossings[idx] += by_x | by_z
        if keep_vertices:
            paths.vertices.append((idx.copy(), xn.copy(), zn.copy(), paths.t[idx].copy()))
        # where each path goes next
        exit_code = np.full(idx.size, -1, dtype=np.int8)
        new_col, new_row, new_x, new_z = col.copy(), row.copy(), xn, zn
        # through a side face
        step = np.where(vx > 0.0, 1, -1)
        cx = col + step
        outside = by_x & ((cx < 0) | (cx >= fieldv.nx))
        if fieldv.periodic:
            new_x = np.where(outside, xn - step * width, xn)
            cx = np.mod(cx, fieldv.nx)
        else:
            exit_code[outside] = SIDE
        go_x = by_x if fieldv.periodic else by_x & ~outside
        if go_x.any():
            r, zz = row_of(fieldv, cx[go_x], zn[go_x])
            new_col[go_x], new_row[go_x] = cx[go_x], r
            new_z = new_z.copy()
            new_z[go_x] = zz
        # through the top or bottom face
        up = by_z & (vz > 0.0)
        down = by_z & (vz <= 0.0)
        top_cell = row == fieldv.top_row[col]
        dry_exit = SEEPAGE if fieldv.ground_exit is None else np.where(fieldv.ground_exit[col[up & top_cell]], GROUND, SEEPAGE)
        exit_code[up & top_cell] = np.where(fieldv.wet[col[up & top_cell]], BED, dry_exit)
        new_row = np.where(up & ~top_cell, row - 1, new_row)
        base = down & (row == fieldv.nz - 1)
        exit_code[base] = BASE
        new_row = np.where(down & ~base, row + 1, new_row)
        # a path that cannot leave a cell that takes up water inside ends there
        exit_code[taken_up] = SINK
        too_many = paths.crossings[idx] >= max_crossings
        exit_code[(exit_code < 0) & too_many] = NOT_OUT
        paths.x[idx], paths.z[idx] = new_x, new_z
        paths.col[idx], paths.row[idx] = new_col, new_row
        paths.exit[idx] = exit_code
        paths.fresh[idx] |= by_x | by_z
        keep = (exit_code < 0) & (paths.t[idx] < until[idx])
        idx = idx[keep]
