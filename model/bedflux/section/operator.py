"""The conductance matrix of the section: harmonic-mean face conductances between active cells.

Flow between two cells a and b per unit width of section is ``C (h_a - h_b)`` with

    horizontal: C = A / (dx_a / (2 kh_a) + dx_b / (2 kh_b)),   A = overlapping cell height
    vertical:   C = dx / (dz_a / (2 kv_a) + dz_b / (2 kv_b))

(harmonic mean of the half-cell conductances). Horizontal faces join cells whose heights
overlap: side-by-side cells of one row, and a top cell that reaches above its row (extended up to
the ground) with the neighbour's cell in the row above over the height they share. The matrix
``L`` has ``sum C`` on the diagonal and ``-C`` off it: symmetric, with zero row sums; boundary
terms make it positive definite.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from bedflux.section.grid import Grid
from bedflux.section.materials import Materials


@dataclass(frozen=True)
class Faces:
    """Interior faces: unknown numbers of the two cells, conductance and face area.

    ``lo``/``hi`` are the left/right cells for horizontal faces and the lower/upper cells for
    vertical faces; the flow ``C (h_lo - h_hi)`` is then in +x or +z. ``lo_pos``/``hi_pos`` are
    the cells' flat positions in the ``(nz, nx)`` grid.
    """

    lo: np.ndarray
    hi: np.ndarray
    conductance: np.ndarray
    area: np.ndarray
    positions: np.ndarray  # flat grid position of each unknown (shared, not per face)

    @property
    def lo_pos(self) -> np.ndarray:
        """Flat grid positions of the ``lo`` cells."""
        return self.positions[self.lo]

    @property
    def hi_pos(self) -> np.ndarray:
        """Flat grid positions of the ``hi`` cells."""
        return self.positions[self.hi]


def half_cell_resistance(length: np.ndarray, conductivity: np.ndarray) -> np.ndarray:
    """Resistance of half a cell to flow across ``length`` (its width or thickness, m) per unit
    face area: ``length / (2 K)`` (s). A face between two cells, or between a cell and a boundary
    held at a head, conducts its area over the sum of the half cells (and any leakance) in series.
    """
    return length / (2.0 * conductivity)


def _pairs(active: np.ndarray, offset_rows: int, offset_cols: int) -> tuple[np.ndarray, np.ndarray]:
    """Flat positions (a, b) of active cell pairs with b = a + (offset_rows, offset_cols), int32."""
    nz, nx = active.shape
    a_mask = active[: nz - offset_rows, : nx - offset_cols] & active[offset_rows:, offset_cols:]
    f = np.flatnonzero(a_mask).astype(np.int32)
    width = nx - offset_cols
    if offset_cols:
        f += f // width  # skip the last column of each row
    return f, f + np.int32(offset_rows * nx + offset_cols)


def unknown_positions(grid: Grid) -> np.ndarray:
    """Flat grid position of each unknown (int32)."""
    return np.flatnonzero(grid.active.ravel()).astype(np.int32)


def horizontal_faces(grid: Grid, mat: Materials, periodic: bool, positions: np.ndarray) -> Faces:
    """Faces between side-by-side active cells (and the wrap-around faces when periodic)."""
    nx = grid.nx
    a, b = _pairs(grid.active, 0, 1)
    if periodic and nx > 1:
        rows = np.flatnonzero(grid.active[:, -1] & grid.active[:, 0]).astype(np.int32)
        a = np.concatenate([a, rows * nx + nx - 1])
        b = np.concatenate([b, rows * nx])
    idx = grid.index().ravel()
    kh = mat.kh.ravel()
    t = grid.thickness.ravel()
    bottom = grid.z_edges[1:]
    ra, rb = a // nx, b // nx
    ca, cb = a - ra * nx, b - rb * nx
    # overlap of the two cells' vertical extents (the top cells are cut at the ground)
    area = np.minimum(bottom[ra] + t[a], bottom[rb] + t[b]) - np.maximum(bottom[ra], bottom[rb])
    c = area / (half_cell_resistance(grid.dx[ca], kh[a]) + half_cell_resistance(grid.dx[cb], kh[b]))
    return Faces(idx[a], idx[b], c, area, positions)


def skew_faces(grid: Grid, mat: Materials, periodic: bool, positions: np.ndarray) -> Faces:
    """Horizontal faces between a top cell extended above its row and the neighbouring column's
    cell in the row above, over the height they share (``lo`` is the left cell)."""
    nx = grid.nx
    left = np.arange(nx - 1)
    if periodic and nx > 1:
        left = np.append(left, nx - 1)
    right = (left + 1) % nx
    t = grid.top_row
    ze = grid.z_edges
    idx = grid.index()
    lo_cells, hi_cells, areas, cols = [], [], [], []
    # the extended top cell in column a, the cell of the row above it in column b (b's top is higher)
    for a, b, a_is_left in ((left, right, True), (right, left, False)):
        ta, tb = t[a], t[b]
        sel = (ta > tb) & (grid.ground[a] > ze[ta])
        a, b, ta, tb = a[sel], b[sel], ta[sel], tb[sel]
        row = ta - 1
        top_b = np.where(row == tb, grid.ground[b], ze[row])
        area = np.minimum(grid.ground[a], top_b) - ze[ta]
        keep = area > 0
        a, b, ta, row, area = a[keep], b[keep], ta[keep], row[keep], area[keep]
        ca, cb = idx[ta, a], idx[row, b]
        lo_cells.append(ca if a_is_left else cb)
        hi_cells.append(cb if a_is_left else ca)
        areas.append(area)
        cols.append(np.stack([a, b, ta, row]))
    lo = np.concatenate(lo_cells).astype(np.int32)
    hi = np.concatenate(hi_cells).astype(np.int32)
    area = np.concatenate(areas)
    a, b, ta, row = np.concatenate(cols, axis=1)
    c = area / (half_cell_resistance(grid.dx[a], mat.kh[ta, a]) + half_cell_resistance(grid.dx[b], mat.kh[row, b]))
    return Faces(lo, hi, c, area, positions)


def joined(first: Faces, second: Faces) -> Faces:
    """One set of faces from two (sharing the unknown positions)."""
    return Faces(np.concatenate([first.lo, second.lo]), np.concatenate([first.hi, second.hi]),
                 np.concatenate([first.conductance, second.conductance]),
                 np.concatenate([first.area, second.area]), first.positions)


def vertical_faces(grid: Grid, mat: Materials, positions: np.ndarray) -> Faces:
    """Faces between a cell and the one above it (``lo`` is the lower cell)."""
    upper, lower = _pairs(grid.active, 1, 0)
    idx = grid.index().ravel()
    kv = mat.kv.ravel()
    t = grid.thickness.ravel()
    dx = grid.dx[lower % grid.nx]
    c = dx / (half_cell_resistance(t[upper], kv[upper]) + half_cell_resistance(t[lower], kv[lower]))
    return Faces(idx[lower], idx[upper], c, dx, positions)


def conductance_matrix(n: int, faces: list[Faces]) -> sp.csr_matrix:
    """The symmetric matrix ``L`` (diagonal ``sum C``, off-diagonal ``-C``) of ``n`` unknowns.

    ``faces`` is ``[horizontal, vertical]`` or ``[horizontal, vertical, skew]``. The first two are
    built directly in CSR form without sorting: each row holds, in this order, the cell above,
    the cell to the left, itself, the cell to the right and the cell below (column order, since
    unknowns are numbered row by row from the top); wrap-around faces of periodic sides break the
    order and are sorted afterwards. Skew faces (:func:`skew_faces`) are added as a second matrix.
    """
    h, v = faces[:2]
    has_up = np.zeros(n, dtype=np.int32)
    has_up[v.lo] = 1
    has_left = np.zeros(n, dtype=np.int32)
    has_left[h.hi] = 1
    has_right = np.zeros(n, dtype=np.int32)
    has_right[h.lo] = 1
    has_down = np.zeros(n, dtype=np.int32)
    has_down[v.hi] = 1
    counts = 1 + has_up + has_left + has_right + has_down
    indptr = np.zeros(n + 1, dtype=np.int64 if counts.sum() > 2**31 - 1 else np.int32)
    np.cumsum(counts, out=indptr[1:])
    del counts
    nnz = int(indptr[-1])
    data = np.empty(nnz)
    indices = np.empty(nnz, dtype=indptr.dtype)
    start = indptr[:-1]
    # slot positions within each row
    p_up = start
    p_left = start + has_up
    p_self = p_left + has_left
    p_right = p_self + 1
    p_down = p_right + has_right
    del has_up, has_left, has_right, has_down
    data[p_up[v.lo]], indices[p_up[v.lo]] = -v.conductance, v.hi
    data[p_left[h.hi]], indices[p_left[h.hi]] = -h.conductance, h.lo
    data[p_right[h.lo]], indices[p_right[h.lo]] = -h.conductance, h.hi
    data[p_down[v.hi]], indices[p_down[v.hi]] = -v.conductance, v.lo
    diag = (np.bincount(h.lo, weights=h.conductance, minlength=n) + np.bincount(h.hi, weights=h.conductance, minlength=n)
            + np.bincount(v.lo, weights=v.conductance, minlength=n) + np.bincount(v.hi, weights=v.conductance, minlength=n))
    data[p_self] = diag
    indices[p_self] = np.arange(n, dtype=indices.dtype)
    A = sp.csr_matrix((data, indices, indptr), shape=(n, n))
    wraps = bool(np.any(h.lo > h.hi))
    A.has_sorted_indices = not wraps
    if wraps:
        A.sort_indices()
    if len(faces) > 2 and faces[2].lo.size:
        k = faces[2]
        rows = np.concatenate([k.lo, k.hi, k.lo, k.hi])
        cols = np.concatenate([k.hi, k.lo, k.lo, k.hi])
        vals = np.concatenate([-k.conductance, -k.conductance, k.conductance, k.conductance])
        A = (A + sp.csr_matrix((vals, (rows, cols)), shape=(n, n))).tocsr()
        A.sort_indices()
    return A


def diagonal_positions(A: sp.csr_matrix) -> np.ndarray:
    """Index into ``A.data`` of each row's diagonal entry (every row has one)."""
    n = A.shape[0]
    rows = np.repeat(np.arange(n, dtype=A.indices.dtype), np.diff(A.indptr))
    pos = np.flatnonzero(A.indices == rows)
    if pos.size != n:
        raise ValueError("every row needs a stored diagonal entry")
    return pos
