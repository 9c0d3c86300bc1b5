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
    vertical faces; the flow ``C (h_lo - h_hi)`` is then in +x or +z.
    """

    lo: np.ndarray
    hi: np.ndarray
    conductance: np.ndarray
    area: np.ndarray
    lo_rc: tuple[np.ndarray, np.ndarray]
    hi_rc: tuple[np.ndarray, np.ndarray]


def horizontal_faces(grid: Grid, mat: Materials, periodic: bool) -> Faces:
    """Faces between side-by-side active cells (and the wrap-around faces when periodic)."""
    idx = grid.index()
    dx = grid.dx[None, :]
    half = np.where(grid.active, dx / (2.0 * mat.kh), np.inf)
    top = np.nan_to_num(grid.cell_top, nan=-np.inf)
    bot = np.broadcast_to(grid.cell_bottom, idx.shape)
    left = slice(None, -1)
    right = slice(1, None)
    pairs = [(np.s_[:, left], np.s_[:, right])]
    if periodic and grid.nx > 1:
        pairs.append((np.s_[:, -1:], np.s_[:, :1]))
    lo, hi, cond, area, lrc, hrc = [], [], [], [], [], []
    rows, cols = np.indices(idx.shape)
    for a, b in pairs:
        both = grid.active[a] & grid.active[b]
        with np.errstate(invalid="ignore", divide="ignore"):
            ar = np.minimum(top[a], top[b]) - np.maximum(bot[a], bot[b])
            c = ar / (half[a] + half[b])
        lo.append(idx[a][both]); hi.append(idx[b][both])
        cond.append(c[both]); area.append(ar[both])
        lrc.append((rows[a][both], cols[a][both])); hrc.append((rows[b][both], cols[b][both]))
    return Faces(np.concatenate(lo), np.concatenate(hi), np.concatenate(cond), np.concatenate(area),
                 (np.concatenate([p[0] for p in lrc]), np.concatenate([p[1] for p in lrc])),
                 (np.concatenate([p[0] for p in hrc]), np.concatenate([p[1] for p in hrc])))


def vertical_faces(grid: Grid, mat: Materials) -> Faces:
    """Faces between a cell and the one above it (``lo`` is the lower cell)."""
    idx = grid.index()
    half = np.where(grid.active, grid.thickness / (2.0 * mat.kv), np.inf)
    upper = np.s_[:-1, :]
    lower = np.s_[1:, :]
    both = grid.active[upper] & grid.active[lower]
    dx = np.broadcast_to(grid.dx[None, :], idx.shape)[lower]
    with np.errstate(invalid="ignore", divide="ignore"):
        c = dx / (half[upper] + half[lower])
    rows, cols = np.indices(idx.shape)
    return Faces(idx[lower][both], idx[upper][both], c[both], dx[both],
                 (rows[lower][both], cols[lower][both]), (rows[upper][both], cols[upper][both]))


def conductance_matrix(n: int, faces: list[Faces]) -> sp.csr_matrix:
    """The symmetric matrix ``L`` (diagonal ``sum C``, off-diagonal ``-C``) of ``n`` unknowns."""
    lo = np.concatenate([f.lo for f in faces])
    hi = np.concatenate([f.hi for f in faces])
    c = np.concatenate([f.conductance for f in faces])
    diag = np.bincount(lo, weights=c, minlength=n) + np.bincount(hi, weights=c, minlength=n)
    rows = np.concatenate([lo, hi, np.arange(n)])
    cols = np.concatenate([hi, lo, np.arange(n)])
    vals = np.concatenate([-c, -c, diag])
    return sp.csr_matrix((vals, (rows, cols)), shape=(n, n))
