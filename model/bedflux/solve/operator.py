"""The conductance matrix of the section: harmonic-mean face conductances between active cells.

Flow between two cells a and b per unit width of section is ``C (h_a - h_b)`` with

    horizontal: C = A / (dx_a / (2 kh_a) + dx_b / (2 kh_b)),   A = overlapping cell height
    vertical:   C = dx / (dz_a / (2 kv_a) + dz_b / (2 kv_b))

(harmonic mean of the half-cell conductances). The matrix ``L`` has ``sum C`` on the diagonal and
``-C`` off it: symmetric, with zero row sums; boundary terms make it positive definite.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from ..grid import Grid
from ..materials import Materials


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
    c = area / (grid.dx[ca] / (2.0 * kh[a]) + grid.dx[cb] / (2.0 * kh[b]))
    return Faces(idx[a], idx[b], c, area, positions)


def vertical_faces(grid: Grid, mat: Materials, positions: np.ndarray) -> Faces:
    """Faces between a cell and the one above it (``lo`` is the lower cell)."""
    upper, lower = _pairs(grid.active, 1, 0)
    idx = grid.index().ravel()
    kv = mat.kv.ravel()
    t = grid.thickness.ravel()
    dx = grid.dx[lower % grid.nx]
    c = dx / (t[upper] / (2.0 * kv[upper]) + t[lower] / (2.0 * kv[lower]))
    return Faces(idx[lower], idx[upper], c, dx, positions)


def conductance_matrix(n: int, faces: list[Faces]) -> sp.csr_matrix:
    """The symmetric matrix ``L`` (diagonal ``sum C``, off-diagonal ``-C``) of ``n`` unknowns.

    Built directly in CSR form without sorting: each row holds, in this order, the cell above,
    the cell to the left, itself, the cell to the right and the cell below (column order, since
    unknowns are numbered row by row from the top); wrap-around faces of periodic sides break the
    order and are sorted afterwards.
    """
    h, v = faces
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
    return A


def diagonal_positions(A: sp.csr_matrix) -> np.ndarray:
    """Index into ``A.data`` of each row's diagonal entry (every row has one)."""
    n = A.shape[0]
    rows = np.repeat(np.arange(n, dtype=A.indices.dtype), np.diff(A.indptr))
    pos = np.flatnonzero(A.indices == rows)
    if pos.size != n:
        raise ValueError("every row needs a stored diagonal entry")
    return pos
