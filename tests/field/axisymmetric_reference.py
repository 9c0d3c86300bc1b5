"""An independent computation of the slug-test shape factor ln(Re/rw) (test helper).

Bouwer & Rice (1976) define ln(Re/rw) through the Thiem form of the steady inflow to a well
whose level stands y below the static water table: Q = 2 pi K Le y / ln(Re/rw). Their model is
the steady (Laplace) flow in an axisymmetric, homogeneous, isotropic aquifer of thickness H:
the water table is held at the static level (head 0), the base is impermeable, the screen of
length Le at the bottom of a well Lw deep holds head -y, and the casing and the well bottom
are impermeable. They measured Q on an electrical resistance network; here the same boundary
value problem is solved by finite volumes in (r, z), so ln(Re/rw) = 2 pi Le y K / Q follows
without their empirical curves.

Radial conductances use the exact steady radial resistance ln(r2/r1) / (2 pi K dz) between
cell centres on a logarithmic r grid; vertical ones use the annulus area; the grid is refined
geometrically toward both ends of the screen, where the solution is singular.
"""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spl


def _z_edges(height: float, marks: list[float], first: float, growth: float, largest: float) -> np.ndarray:
    points = {0.0, height}
    for m in marks:
        for sign in (1.0, -1.0):
            z, h = m, first
            while 0.0 <= z <= height:
                points.add(z)
                z += sign * h
                h = min(h * growth, largest)
    e = np.array(sorted(points))
    return e[np.concatenate([[True], np.diff(e) > 0.3 * first])]


def shape_factor(well_radius: float, screen_length: float, well_depth: float, thickness: float, *,
                 refine: float = 1.0, outer: float = 5.0, top: str = "head") -> float:
    """ln(Re/rw) of the Bouwer & Rice boundary-value problem, solved numerically.

    Parameters
    ----------
    well_radius, screen_length, well_depth, thickness
        rw, Le, Lw (depth of the well bottom below the water table) and H, m.
    refine
        Grid refinement factor (1 is converged to about 0.5 %).
    outer
        Outer radius in units of max(H, Le); the outer boundary holds head 0.
    top
        ``"head"`` (the water table, head 0) or ``"closed"`` (a confining layer), the latter
        for the Thiem check.
    """
    rw, le, lw, big_h = well_radius, screen_length, well_depth, thickness
    z_bottom = big_h - lw                      # well bottom above the base
    z_top = z_bottom + le                      # top of the screen
    first = 0.1 * rw / refine
    ze = _z_edges(big_h, [z_bottom, z_top], first, 1.0 + 0.15 / refine, max(big_h / (50 * refine), first))
    r_out = outer * max(big_h, le)
    n_log = int(60 * refine * np.log10(r_out / rw))
    re = np.concatenate([np.linspace(0.0, rw, int(6 * refine) + 1),
                         rw * np.logspace(0.0, np.log10(r_out / rw), n_log + 1)[1:]])
    rc, zc, dz = 0.5 * (re[:-1] + re[1:]), 0.5 * (ze[:-1] + ze[1:]), np.diff(ze)
    nr, nz = rc.size, zc.size
    inside_well = (rc[:, None] < rw) & (zc[None, :] > z_bottom)
    index = np.full((nr, nz), -1)
    index[~inside_well] = np.arange(np.count_nonzero(~inside_well))
    n = int(np.count_nonzero(~inside_well))
    rows, cols, vals = [], [], []
    diag, rhs = np.zeros(n), np.zeros(n)

    def couple(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> None:
        ok = (a >= 0) & (b >= 0)
        a, b, c = a[ok], b[ok], c[ok]
        rows.extend([a, b])
        cols.extend([b, a])
        vals.extend([-c, -c])
        np.add.at(diag, a, c)
        np.add.at(diag, b, c)

    # radial faces: resistance ln(r_face / r_i) + ln(r_{i+1} / r_face) over 2 pi dz
    inner_res = np.log(re[1:-1] / rc[:-1])
    outer_res = np.log(rc[1:] / re[1:-1])
    c_r = 2 * np.pi * dz[None, :] / (inner_res + outer_res)[:, None]
    couple(index[:-1].ravel(), index[1:].ravel(), c_r.ravel())
    # vertical faces: annulus area over the distance between centres
    area = np.pi * (re[1:] ** 2 - re[:-1] ** 2)
    c_z = area[:, None] / (0.5 * (dz[:-1] + dz[1:]))[None, :]
    couple(index[:, :-1].ravel(), index[:, 1:].ravel(), c_z.ravel())
    # the screen: head -1 on the face r = rw of the first cells outside the well
    j = int(np.flatnonzero(np.isclose(re, rw))[0])
    screen = (zc > z_bottom) & (zc < z_top)
    c_s = 2 * np.pi * dz[screen] / np.log(rc[j] / rw)
    cells = index[j, screen]
    np.add.at(diag, cells, c_s)
    np.add.at(rhs, cells, -c_s)
    # water table (head 0) and the outer radius (head 0)
    if top == "head":
        np.add.at(diag, index[:, -1], area / (0.5 * dz[-1]))
    np.add.at(diag, index[-1, :], 2 * np.pi * dz / np.log(re[-1] / rc[-1]))
    matrix = sp.csc_matrix((np.concatenate(vals + [diag]),
                            (np.concatenate(rows + [np.arange(n)]), np.concatenate(cols + [np.arange(n)]))),
                           shape=(n, n))
    head = spl.spsolve(matrix, rhs)
    inflow = float(np.sum(c_s * (head[cells] + 1.0)))
    return 2 * np.pi * le / inflow
