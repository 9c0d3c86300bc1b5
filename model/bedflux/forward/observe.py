"""Observation operators: from the simulated state to each measured datum.

An observation table has the columns ``kind, x, depth, time, value, sigma`` (SI):

``head``
    head at the point ``depth`` below the ground at ``x``; bilinear in the section (linear between
    the two nearest columns, and in each column linear between its cell centres).
``vhg``
    vertical hydraulic gradient ``(head at the piezometer opening - stage) / depth``, positive
    upward (the local stage includes the water-surface slope).
``seepage``
    bed flux averaged over the pan footprint ``[x - D/2, x + D/2]`` (submerged columns only,
    weighted by overlap), positive upward (discharge into the stream).
``temperature``
    temperature (degC) of a logger at the point ``depth`` below the ground at ``x``, bilinear like a
    head; predicted by :mod:`bedflux.forward.heat_observe` (scenarios with ``[heat]``).
``thermal_flux``
    vertical Darcy flux (m/s, positive upward) at the point ``depth`` below the ground at ``x``
    (the mid-depth of a temperature-sensor pair): the cell-centre ``qz`` of the results (the mean
    of the flux over a cell's lower and upper face, boundary faces included), interpolated with
    the weights of a head at that point, at the observation time in transient runs.

Each operator is linear in the heads: ``value = W h + c``; for seepage the weights carry the bed
conductances, whose dependence on the parameters the sensitivity code adds explicitly. The
thermal-flux rows carry the face conductances as well: ``head_rows`` and ``linear_parts`` leave
them empty and :func:`bedflux.forward.sensitivity.thermal_flux_parts` gives their derivatives.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import scipy.sparse as sp

from bedflux.errors import InputError
from bedflux.scenario.units import SECONDS_PER_DAY
from bedflux.section.discretisation import Section, Term
from bedflux.section.fluxes import derive

COLUMNS = ("kind", "x", "depth", "time", "value", "sigma")
KINDS = ("head", "vhg", "seepage", "temperature", "thermal_flux")
#: Kinds whose value is not a head at a point (zero rows in ``Operators.head_rows``).
HEAD_FREE_KINDS = ("seepage", "temperature", "thermal_flux")
#: Pan diameter when none is given: the end of a 208 L (55 US gal) drum, about 0.57 m (common practice).
DEFAULT_PAN_DIAMETER = 0.57
#: Scatter of a seepage-meter reading about the true flux, as a fraction (about 30 % for careful
#: repeat measurements with a half-drum meter: common practice).
SEEPAGE_RELATIVE_SD = 0.3
#: Smallest flux a seepage meter tells from zero (0.01 m/d, in m/s; common practice).
SEEPAGE_FLOOR = 0.01 / SECONDS_PER_DAY
#: Head resolution of a manometer reading (0.1 mm, in m; common practice for an inverted U-tube).
HEAD_RESOLUTION = 1e-4
#: Deepest opening of a hand-driven mini-piezometer in sand (m; common practice). Deeper openings
#: need a drive point (a steel pipe driven with a hammer or a slide).
HAND_DRIVEN_MAX_DEPTH = 0.3


def read_observations(path: str | Path, transient: bool | None = None) -> pd.DataFrame:
    """Read and check an observations CSV (see :func:`check_observations`)."""
    path = Path(path)
    if not path.is_file():
        raise InputError("observation table not found", source=str(path))
    try:
        df = pd.read_csv(path)
    except Exception as err:  # pandas raises several parser error types
        raise InputError(f"cannot read as CSV: {err}", source=str(path)) from None
    return check_observations(df, str(path), transient)


def check_observations(df: pd.DataFrame, source: str = "observations", transient: bool | None = None
                       ) -> pd.DataFrame:
    """Validate an observation table; return a clean copy with float columns.

    ``time`` may be empty (NaN) unless ``transient`` is True: a steady run has no clock. With
    ``transient`` None (the run is not known yet) empty times are kept for a later check.

    Raises
    ------
    InputError
        Naming the row (counted as in the file, header = row 1) for a missing column, an unknown
        kind, a non-numeric cell, a missing or non-positive sigma, a negative depth, an empty time
        in a transient run.
    """
    missing = [c for c in COLUMNS if c not in df.columns]
    if missing:
        raise InputError(f"missing column(s) {', '.join(missing)}; the table needs {', '.join(COLUMNS)}",
                         source=source, where="row 1")
    out = df.loc[:, list(COLUMNS)].copy()
    if out.empty:
        raise InputError("the observation table has no rows", source=source)
    bad_kind = ~out["kind"].isin(KINDS)
    if bad_kind.any():
        i = int(np.flatnonzero(bad_kind)[0])
        raise InputError(f"kind {out['kind'].iloc[i]!r} is not one of {', '.join(KINDS)}",
                         source=source, where=f"row {i + 2}")
    for col in ("x", "depth", "time", "value", "sigma"):
        vals = pd.to_numeric(out[col], errors="coerce")
        bad = vals.isna()
        if col == "time" and not transient:
            # a steady run has no clock: an empty time is allowed, text never
            bad &= out[col].notna() & (out[col].astype(str).str.strip() != "")
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            hint = {"sigma": " (every observation needs its uncertainty: fill the sigma column)",
                    "time": (" (a transient run needs the time of every observation, s since the start; "
                             "only a steady run may leave it empty)" if transient else "")}.get(col, "")
            raise InputError(f"column '{col}' is empty or not a number{hint}", source=source,
                             where=f"row {i + 2}")
        out[col] = vals.astype(float)
    for col in ("x", "depth", "time", "value", "sigma"):
        vals = out[col].to_numpy()
        bad = ~np.isfinite(vals)
        if col == "time":
            bad &= ~np.isnan(vals)  # empty: checked above
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"column '{col}' must be a finite number", source=source, where=f"row {i + 2}")
    if (out["sigma"] <= 0).any():
        i = int(np.flatnonzero(out["sigma"] <= 0)[0])
        raise InputError("sigma must be > 0 (the standard deviation of the observation, SI)",
                         source=source, where=f"row {i + 2}")
    if (out["depth"] < 0).any():
        i = int(np.flatnonzero(out["depth"] < 0)[0])
        raise InputError("depth must be >= 0 (m below the ground)", source=source, where=f"row {i + 2}")
    vhg0 = (out["kind"] == "vhg") & (out["depth"] <= 0)
    if vhg0.any():
        i = int(np.flatnonzero(vhg0)[0])
        raise InputError("a vhg observation needs depth > 0 (the piezometer opening below the bed)",
                         source=source, where=f"row {i + 2}")
    return out.reset_index(drop=True)


@dataclass
class Operators:
    """Observation operators of one table on one section.

    ``head_weights`` maps the heads (absolute, per unknown) to the head at each observation's
    point (rows for every observation; only head and vhg rows are used); ``footprint`` is
    ``(n_obs, nx)`` weights of seepage observations over columns; ``x`` and ``depth`` are the
    table's columns as arrays.
    """

    table: pd.DataFrame
    head_weights: sp.csr_matrix
    footprint: np.ndarray
    kind: np.ndarray
    x: np.ndarray = None
    depth: np.ndarray = None
    _head_rows: sp.csr_matrix | None = field(default=None, repr=False)

    def __post_init__(self):
        if self.x is None:
            self.x = self.table["x"].to_numpy()
        if self.depth is None:
            self.depth = self.table["depth"].to_numpy()

    @property
    def n(self) -> int:
        return len(self.table)

    @property
    def head_rows(self) -> sp.csr_matrix:
        """``d(value)/d(h)`` of the head and gradient observations (zero rows for seepage,
        temperature and thermal flux)."""
        if self._head_rows is None:
            scale = np.ones(self.n)
            vhg = self.kind == "vhg"
            scale[vhg] = 1.0 / self.depth[vhg]
            self._head_rows = (sp.diags(np.where(np.isin(self.kind, HEAD_FREE_KINDS), 0.0, scale))
                               @ self.head_weights).tocsr()
        return self._head_rows


def _ground_at(section: Section, x: np.ndarray) -> np.ndarray:
    prof = np.asarray(section.scenario.ground)
    return np.interp(x, prof[:, 0], prof[:, 1])


def build_operators(section: Section, table: pd.DataFrame, pan_diameter: float = DEFAULT_PAN_DIAMETER,
                    source: str = "observations") -> Operators:
    """Interpolation weights of every observation on the section's grid.

    Raises
    ------
    InputError
        If an observation lies outside the section or below the model base.
    """
    g = section.grid
    x = table["x"].to_numpy()
    depth = table["depth"].to_numpy()
    kind = table["kind"].to_numpy()
    outside = (x < g.x_edges[0]) | (x > g.x_edges[-1])
    if outside.any():
        i = int(np.flatnonzero(outside)[0])
        raise InputError(f"x = {x[i]:g} m is outside the section ({g.x_edges[0]:g} to {g.x_edges[-1]:g} m)",
                         source=source, where=f"row {i + 2}")
    z = _ground_at(section, x) - depth
    low = (z <= g.z_edges[-1]) & (kind != "seepage")
    if low.any():
        i = int(np.flatnonzero(low)[0])
        raise InputError(f"depth = {depth[i]:g} m reaches below the model base", source=source, where=f"row {i + 2}")
    rows, cols, vals = [], [], []
    xc = g.xc
    zc_all = g.z_centre
    idx = g.index()
    for i in range(len(table)):
        if kind[i] == "seepage":
            continue
        if xc.size == 1:
            cw = [(0, 1.0)]
        else:
            j = int(np.clip(np.searchsorted(xc, x[i]) - 1, 0, xc.size - 2))
            a = float(np.clip((x[i] - xc[j]) / (xc[j + 1] - xc[j]), 0.0, 1.0))
            cw = [(j, 1.0 - a), (j + 1, a)]
        for j, wx in cw:
            if wx == 0.0:
                continue
            act = np.flatnonzero(g.active[:, j])
            zcol = zc_all[act, j][::-1]
            cells = idx[act, j][::-1]
            if zcol.size == 1 or z[i] >= zcol[-1]:
                pairs = [(cells[-1], 1.0)] if z[i] >= zcol[-1] else [(cells[0], 1.0)]
            elif z[i] <= zcol[0]:
                pairs = [(cells[0], 1.0)]
            else:
                k = int(np.searchsorted(zcol, z[i]) - 1)
                b = (z[i] - zcol[k]) / (zcol[k + 1] - zcol[k])
                pairs = [(cells[k], 1.0 - b), (cells[k + 1], b)]
            for c, wz in pairs:
                rows.append(i); cols.append(c); vals.append(wx * wz)
    W = sp.csr_matrix((vals, (rows, cols)), shape=(len(table), section.n))
    foot = np.zeros((len(table), g.nx))
    half = 0.5 * pan_diameter
    for i in np.flatnonzero(kind == "seepage"):
        overlap = np.clip(np.minimum(g.x_edges[1:], x[i] + half) - np.maximum(g.x_edges[:-1], x[i] - half), 0, None)
        if overlap.sum() == 0:
            overlap[int(np.clip(np.searchsorted(g.x_edges, x[i]) - 1, 0, g.nx - 1))] = 1.0
        foot[i] = overlap
    return Operators(table, W, foot, kind, x, depth)


def stream_top(terms: list[Term]) -> Term | None:
    """The stream term on the top faces, if any column is submerged."""
    for t in terms:
        if t.kind == "stream" and t.face == "top":
            return t
    return None


def _seepage_weights(section: Section, ops: Operators, terms: list[Term], source: str) -> tuple[np.ndarray, Term]:
    """Footprint weights restricted to submerged columns and normalised; per stream-top entry."""
    top = stream_top(terms)
    nx = section.grid.nx
    wet = np.zeros(nx, dtype=bool)
    if top is not None:
        wet[top.column_or_row] = True
    w = ops.footprint * wet[None, :]
    seep = ops.kind == "seepage"
    total = w.sum(axis=1)
    dry = seep & (total == 0)
    if dry.any():
        i = int(np.flatnonzero(dry)[0])
        raise InputError(f"the seepage meter at x = {ops.x[i]:g} m is not over the submerged bed "
                         "in the model", source=source, where=f"row {i + 2}")
    w[seep] /= total[seep, None]
    # to stream-top entries
    return (w[:, top.column_or_row] if top is not None else np.zeros((ops.n, 0))), top


def _wet_width(section: Section, top: Term) -> np.ndarray:
    """Wetted width of each stream-top entry (the bed flux is the flow over it)."""
    return section.grid.dx[top.column_or_row] if top.width is None else top.width


def predict(section: Section, ops: Operators, u: np.ndarray, terms: list[Term], t: float,
            source: str = "observations") -> np.ndarray:
    """Simulated value of every observation for relative heads ``u`` and the terms at time ``t``."""
    h = u + section.h_ref
    out = ops.head_weights @ h
    kind = ops.kind
    out[kind == "temperature"] = np.nan  # filled from the heat run (bedflux.forward.heat_observe)
    vhg = kind == "vhg"
    if vhg.any():
        x = ops.x[vhg]
        stage = section.scenario.stream.local_stage(t, x) if section.scenario.stream is not None else np.nan
        out[vhg] = (out[vhg] - stage) / ops.depth[vhg]
    seep = kind == "seepage"
    if seep.any():
        w, top = _seepage_weights(section, ops, terms, source)
        q = -top.inflow(u) / _wet_width(section, top)
        out[seep] = (w @ q)[seep]
    thermal = kind == "thermal_flux"
    if thermal.any():
        qz = derive(section, u, terms).qz[section.grid.active]  # per unknown, as the heads
        out[thermal] = ops.head_weights[thermal] @ qz
    return out


def linear_parts(section: Section, ops: Operators, u: np.ndarray, terms: list[Term],
                 source: str = "observations") -> tuple[sp.csr_matrix, np.ndarray, np.ndarray, Term | None]:
    """The operator as ``d(value)/d(h)`` (sparse, per unknown), the seepage weights per
    stream-top entry, the derivative of each stream-top entry's bed flux with respect to its
    conductance, ``(h - H) / w`` (w the wetted width; for derivatives of the bed conductance), and
    the stream-top term."""
    seep = ops.kind == "seepage"
    if not seep.any():
        return ops.head_rows, np.zeros((ops.n, 0)), np.zeros(0), stream_top(terms)
    w, top = _seepage_weights(section, ops, terms, source)
    w = np.where(seep[:, None], w, 0.0)
    dx = _wet_width(section, top)
    # q = c (u - U) / w with c the conductance, U = r / c and w the wetted width: d q / d u_cell = c / w
    i, k = np.nonzero(w)
    head = ops.head_rows
    # the seepage rows of the head part are empty: the rows merge without sums
    rows = np.concatenate([np.repeat(np.arange(ops.n), np.diff(head.indptr)), i])
    order = np.argsort(rows, kind="stable")
    indptr = np.zeros(ops.n + 1, dtype=np.int64)
    np.cumsum(np.bincount(rows, minlength=ops.n), out=indptr[1:])
    W = sp.csr_matrix((np.concatenate([head.data, w[i, k] * (top.conductance / dx)[k]])[order],
                       np.concatenate([head.indices, top.cells[k]])[order], indptr), shape=(ops.n, section.n))
    flux_per_conductance = (u[top.cells] - top.r / top.conductance) / dx
    return W, w, flux_per_conductance, top
