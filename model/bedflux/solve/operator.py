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
    lo_pos: np.ndarray
    hi_pos: np.ndarray


def _pairs(active: np.ndarray, offset_rows: int, offset_cols: int) -> tuple[np.ndarray, np.ndarray]:
    """Flat positions (a, b) of active cell pairs with b = a + (offset_rows, offset_cols)."""
    nz, nx = active.shape
    a_mask = active[: nz - offset_rows, : nx - offset_cols] & active[offset_rows:, offset_cols:]
    f = np.flatnonzero(a_mask)
    width = nx - offset_cols
    a = (f // width) * nx + (f % width)
    return a, a + offset_rows * nx + offset_cols


def horizontal_faces(grid: Grid, mat: Materials, periodic: bool) -> Faces:
    """Faces between side-by-side active cells (and the wrap-around faces when periodic)."""
    nx = grid.nx
    a, b = _pairs(grid.active, 0, 1)
    if periodic and nx > 1:
        rows = np.flatnonzero(grid.active[:, -1] & grid.active[:, 0])
        a = np.concatenate([a, rows * nx + nx - 1])
        b = np.concatenate([b, rows * nx])
    idx = grid.index().ravel().astype(np.int32)
    a, b = a.astype(np.int32), b.astype(np.int32)
    kh = mat.kh.ravel()
    dx = np.broadcast_to(grid.dx[None, :], grid.active.shape).ravel()
    bottom = np.broadcast_to(grid.z_edges[1:, None], grid.active.shape).ravel()
    top = bottom + grid.thickness.ravel()
    area = np.minimum(top[a], top[b]) - np.maximum(bottom[a], bottom[b])
    c = area / (dx[a] / (2.0 * kh[a]) + dx[b] / (2.0 * kh[b]))
    return Faces(idx[a], idx[b], c, area, a, b)


def vertical_faces(grid: Grid, mat: Materials) -> Faces:
    """Faces between a cell and the one above it (``lo`` is the lower cell)."""
    upper, lower = _pairs(grid.active, 1, 0)
    upper, lower = upper.astype(np.int32), lower.astype(np.int32)
    idx = grid.index().ravel().astype(np.int32)
    kv = mat.kv.ravel()
    t = grid.thickness.ravel()
    dx = np.broadcast_to(grid.dx[None, :], grid.active.shape).ravel()[lower]
    c = dx / (t[upper] / (2.0 * kv[upper]) + t[lower] / (2.0 * kv[lower]))
    return Faces(idx[lower], idx[upper], c, dx, lower, upper)


def conductance_matrix(n: int, faces: list[Faces]) -> sp.csr_matrix:
    """The symmetric matrix ``L`` (diagonal ``sum C``, off-diagonal ``-C``) of ``n`` unknowns.

    Built directly in CSR form: each cell has at most five slots (up, left, self, right, down),
    filled from the face lists without sorting.
    """
    h, v = faces
    cols = np.full((n, 5), -1, dtype=np.int32)
    vals = np.zeros((n, 5))
    cols[:, 2] = np.arange(n, dtype=np.int32)
    # slot 0: the cell above (vertical face, this cell is lo); slot 4: the cell below
    cols[v.lo, 0], vals[v.lo, 0] = v.hi, -v.conductance
    cols[v.hi, 4], vals[v.hi, 4] = v.lo, -v.conductance
    # slot 1: the cell to the left (this cell is hi); slot 3: the cell to the right
    cols[h.hi, 1], vals[h.hi, 1] = h.lo, -h.conductance
    cols[h.lo, 3], vals[h.lo, 3] = h.hi, -h.conductance
    vals[:, 2] = -vals.sum(axis=1)
    present = cols >= 0
    indptr = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(present.sum(axis=1, dtype=np.int32), out=indptr[1:])
    A = sp.csr_matrix((vals[present], cols[present], indptr), shape=(n, n))
    # without wrap-around faces the slots are in column order already
    wraps = bool(np.any(h.lo > h.hi))
    A.has_sorted_indices = not wraps
    if wraps:
        A.sort_indices()
    return A
