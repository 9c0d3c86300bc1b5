"""Richards' equation on the section grid: the discrete residual and Jacobian of the mixed form.

The unknown is the pressure head ``psi`` of every active cell (head = psi + z). Per cell of area
``V`` (m^2 per metre of width) the backward-Euler step from ``psi0`` is (Celia, Bouloutas &
Zarba 1990, the mixed form)

    F(psi) = V (theta(psi) - theta(psi0)) / dt + V Ss Sw(psi0) (psi - psi0) / dt - inflow(psi) = 0

with ``Sw = theta / theta_s`` (specific storage acts on the water-filled pores, so it is the
linear model's storage below the water table), and ``inflow`` the net flow into the cell through
its faces and boundary terms plus the root-water uptake. A steady state solves ``-inflow = 0``.

Interior faces carry the linear model's harmonic-mean saturated conductance ``C`` times the
relative conductivity of the *upstream* cell (the one with the higher head): ``Q = C Kr_up (h_a - h_b)``.
Upstream weighting keeps the scheme monotone and gives the right front speed for infiltration
into dry soil and across layers (Forsyth, Wu & Pruess 1995); it is first order in space where
Kr varies. Boundary terms are the linear model's terms (``r - g u``, see
:mod:`bedflux.section.discretisation`) times the upstream Kr of the face: the boundary's own pressure
head (a head side is hydrostatic, so its pressure at a cell is ``H - z``) when water flows in,
the cell's when it flows out.

Newton's method (with the derivative of the upstream Kr) and modified Picard (Kr lagged, the
moisture capacity kept: Celia et al. 1990) differ only in :meth:`RichardsSystem.jacobian`.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import scipy.sparse as sp

from bedflux.section.retention import Properties, SoilWater
from bedflux.section.operator import Faces
from bedflux.section.discretisation import Section, Term


@dataclass(frozen=True)
class Uptake:
    """Root water uptake after Feddes, Kowalik & Zaradny (1978).

    ``potential`` is the uptake each cell would give unstressed (m^2/s per metre of width); it is
    reduced by ``a(psi)``: 0 above ``h1`` (too wet), rising linearly to 1 at ``h2``, 1 down to
    ``h3``, falling linearly to 0 at ``h4`` (wilting), 0 below. ``heads`` is ``(4, ncells)``;
    ``cols`` is the column of each uptake cell.
    """

    cells: np.ndarray
    cols: np.ndarray
    potential: np.ndarray
    heads: np.ndarray

    def reduction(self, psi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The Feddes factor ``a`` and ``da/dpsi`` at the pressure heads of the uptake cells."""
        h1, h2, h3, h4 = self.heads
        p = psi[self.cells]
        wet = (p < h1) & (p >= h2)
        mid = (p < h2) & (p >= h3)
        dry = (p < h3) & (p > h4)
        a = np.where(wet, (h1 - p) / (h1 - h2), np.where(mid, 1.0, np.where(dry, (p - h4) / (h3 - h4), 0.0)))
        da = np.where(wet, -1.0 / (h1 - h2), np.where(dry, 1.0 / (h3 - h4), 0.0))
        return a, da

    def rate(self, psi: np.ndarray) -> np.ndarray:
        """Actual uptake of each uptake cell (m^2/s, >= 0)."""
        return self.potential * self.reduction(psi)[0]


@dataclass
class StepForcing:
    """What the boundaries do over one step (or in a steady state).

    ``terms`` are the linear model's terms (Dirichlet faces with ``g > 0``, fluxes with
    ``g = 0``); ``face_psi`` gives, per term, the pressure head on the boundary side of each
    entry (used for the upstream Kr of inflow; NaN for flux terms).
    """

    terms: list[Term]
    face_psi: list[np.ndarray]
    uptake: Uptake | None = None
    face_kr: list[np.ndarray] | None = None  # Kr at face_psi, filled by the first evaluation


@dataclass
class Storage:
    """The start of a backward-Euler step: its water content, pressure heads and step length."""

    psi0: np.ndarray
    theta0: np.ndarray
    elastic: np.ndarray  # V Ss Sw(psi0), m^2 per m of pressure head
    dt: float


@dataclass
class Evaluation:
    """Residual of one iterate with the pieces the Jacobian, the budget and the fluxes need."""

    psi: np.ndarray
    props: Properties
    residual: np.ndarray
    scale: float  # throughput: absolute boundary flows, uptake and storage changes (m^2/s)
    floor: float  # round-off level of the residual norm (m^2/s)
    face_kr: np.ndarray
    face_up_is_lo: np.ndarray
    term_kr: list[np.ndarray]
    term_from_face: list[np.ndarray]
    uptake: np.ndarray | None
    storage_rate: np.ndarray | None

    @property
    def norm(self) -> float:
        """Sum of absolute residuals (m^2/s)."""
        return float(np.abs(self.residual).sum())

    def converged(self, tolerance: float) -> bool:
        """Residual below ``tolerance`` of the throughput."""
        return self.norm <= tolerance * self.scale


class RichardsSystem:
    """The discrete mixed-form Richards operator of a section.

    Parameters
    ----------
    section
        The discretised section (grid, saturated face conductances, matrix pattern, boundaries).
    soil
        Soil water parameters per unknown.
    form
        ``"mixed"`` (the default, mass-conservative) or ``"head"``: the storage written
        ``V C(psi) (psi - psi0) / dt`` with the moisture capacity ``C`` at the end of the step, the
        form whose mass-balance error Celia et al. (1990) showed; kept for that comparison.
    """

    def __init__(self, section: Section, soil: SoilWater, form: str = "mixed"):
        if form not in ("mixed", "head"):
            raise ValueError(f"unknown storage form {form!r}")
        self.section = section
        self.soil = soil
        self.form = form
        g = section.grid
        self.n = section.n
        # elevation of each cell centre relative to the reference head: psi = u - zr
        self.zr = g.z_centre[g.active] - section.h_ref
        self.volume = section.cell_volume
        self.ss = section.materials.specific_storage[g.active]
        faces: list[Faces] = [section.hfaces, section.vfaces]
        self.lo = np.concatenate([f.lo for f in faces])
        self.hi = np.concatenate([f.hi for f in faces])
        self.conductance = np.concatenate([f.conductance for f in faces])
        self.n_hfaces = section.hfaces.lo.size
        L = section.L
        self.indptr, self.indices = L.indptr, L.indices
        self.nnz = L.indices.size
        self.diag_pos = section.diagonal
        keys = np.repeat(np.arange(self.n, dtype=np.int64), np.diff(L.indptr)) * self.n + L.indices
        order = np.argsort(keys, kind="stable")
        sorted_keys = keys[order]
        self.lohi_pos = order[np.searchsorted(sorted_keys, self.lo.astype(np.int64) * self.n + self.hi)]
        self.hilo_pos = order[np.searchsorted(sorted_keys, self.hi.astype(np.int64) * self.n + self.lo)]

    # ------------------------------------------------------------------------------ state
    def head_u(self, psi: np.ndarray) -> np.ndarray:
        """Heads relative to the section's reference head."""
        return psi + self.zr

    def psi_from_u(self, u: np.ndarray) -> np.ndarray:
        """Pressure heads from relative heads."""
        return u - self.zr

    def storage(self, psi0: np.ndarray, dt: float) -> Storage:
        """The storage of a step of length ``dt`` starting from ``psi0``."""
        p = self.soil.properties(psi0)
        return Storage(psi0, p.theta, self.volume * self.ss * p.theta / self.soil.theta_s, dt)

    # ------------------------------------------------------------------------------ residual
    def evaluate(self, psi: np.ndarray, forcing: StepForcing, storage: Storage | None) -> Evaluation:
        """Residual ``F(psi)`` (m^2/s per cell; positive: more water stored than flows in)."""
        props = self.soil.properties(psi)
        kr = props.kr
        u = self.head_u(psi)
        dh = u[self.lo] - u[self.hi]
        up_lo = dh >= 0.0
        fkr = np.where(up_lo, kr[self.lo], kr[self.hi])
        q = self.conductance * fkr * dh  # flow lo -> hi
        inflow = np.bincount(self.hi, weights=q, minlength=self.n) - np.bincount(self.lo, weights=q, minlength=self.n)
        boundary_abs = 0.0
        term_kr, term_from_face = [], []
        if forcing.face_kr is None:
            forcing.face_kr = [self._kr_at(fpsi, term.cells) for term, fpsi in zip(forcing.terms, forcing.face_psi)]
        for term, face_kr in zip(forcing.terms, forcing.face_kr):
            base = term.r - term.conductance * u[term.cells]
            from_face = (term.conductance > 0) & (base > 0.0)
            tkr = np.where(term.conductance > 0, np.where(from_face, face_kr, kr[term.cells]), 1.0)
            flow = tkr * base
            inflow += np.bincount(term.cells, weights=flow, minlength=self.n)
            boundary_abs += float(np.abs(flow).sum())
            term_kr.append(tkr)
            term_from_face.append(from_face)
        taken = None
        if forcing.uptake is not None:
            taken = forcing.uptake.rate(psi)
            inflow -= np.bincount(forcing.uptake.cells, weights=taken, minlength=self.n)
            boundary_abs += float(taken.sum())
        storage_rate = None
        residual = -inflow
        if storage is not None:
            if self.form == "mixed":
                water = self.volume * (props.theta - storage.theta0)
            else:
                water = self.volume * props.capacity * (psi - storage.psi0)
            storage_rate = (water + storage.elastic * (psi - storage.psi0)) / storage.dt
            residual = residual + storage_rate
            boundary_abs += float(np.abs(storage_rate).sum())
        # heads are psi + z, so a face flow carries the round-off of |psi| + |z| times its
        # conductance: the level below which the residual cannot be pushed
        head_size = np.abs(psi) + np.abs(self.zr)
        floor = 4.0 * np.finfo(float).eps * float((self.conductance * fkr * (head_size[self.lo] + head_size[self.hi])).sum())
        return Evaluation(psi, props, residual, boundary_abs, floor, fkr, up_lo, term_kr, term_from_face,
                          taken, storage_rate)

    def _kr_at(self, psi_face: np.ndarray, cells: np.ndarray) -> np.ndarray:
        """Kr of the cells' soil at the boundary pressure heads."""
        s = self.soil
        sub = SoilWater(s.van_genuchten[cells], s.alpha[cells], s.n[cells], s.theta_r[cells], s.theta_s[cells])
        return sub.properties(np.asarray(psi_face, dtype=float)).kr

    # ------------------------------------------------------------------------------ Jacobian
    def jacobian(self, ev: Evaluation, forcing: StepForcing, storage: Storage | None, newton: bool) -> sp.csr_matrix:
        """``dF/dpsi`` (Newton) or its modified-Picard approximation (Kr lagged)."""
        props = ev.props
        psi = ev.psi
        u = self.head_u(psi)
        dh = u[self.lo] - u[self.hi]
        c = self.conductance
        # d(q)/d(psi_lo) and d(q)/d(psi_hi) of the flow lo -> hi
        dq_lo = c * ev.face_kr
        dq_hi = -c * ev.face_kr
        if newton:
            dkr_up = np.where(ev.face_up_is_lo, props.dkr[self.lo], props.dkr[self.hi])
            extra = c * dh * dkr_up
            dq_lo = dq_lo + np.where(ev.face_up_is_lo, extra, 0.0)
            dq_hi = dq_hi + np.where(ev.face_up_is_lo, 0.0, extra)
        # F_lo += q, F_hi -= q
        diag = np.bincount(self.lo, weights=dq_lo, minlength=self.n) - np.bincount(self.hi, weights=dq_hi, minlength=self.n)
        data = np.zeros(self.nnz)
        data[self.lohi_pos] += dq_hi  # d F_lo / d psi_hi
        data[self.hilo_pos] -= dq_lo  # d F_hi / d psi_lo
        for term, tkr, from_face in zip(forcing.terms, ev.term_kr, ev.term_from_face):
            # flow = tkr (r - g u): d/dpsi = -tkr g (+ (r - g u) dkr when Kr is the cell's)
            d = tkr * term.conductance
            if newton:
                own = (term.conductance > 0) & ~from_face
                d = d - np.where(own, (term.r - term.conductance * u[term.cells]) * props.dkr[term.cells], 0.0)
            diag += np.bincount(term.cells, weights=d, minlength=self.n)
        if forcing.uptake is not None:
            a, da = forcing.uptake.reduction(psi)
            diag += np.bincount(forcing.uptake.cells, weights=forcing.uptake.potential * da, minlength=self.n)
        if storage is not None:
            capacity = props.capacity
            if self.form == "head":
                capacity = capacity + props.dcapacity * (psi - storage.psi0)
            diag += (self.volume * capacity + storage.elastic) / storage.dt
        data[self.diag_pos] += diag
        J = sp.csr_matrix((data, self.indices, self.indptr), shape=(self.n, self.n), copy=False)
        J.has_sorted_indices = self.section.L.has_sorted_indices
        return J

    # ------------------------------------------------------------------------------ outputs
    def flow_view(self, ev: Evaluation, forcing: StepForcing) -> tuple[Section, list[Term]]:
        """The section with each face conductance times its upstream Kr, and the terms scaled the
        same way (plus the uptake as a cell term): :func:`bedflux.section.fluxes.derive` then gives the
        fluxes and budget of the iterate exactly as for the linear model."""
        s = self.section
        kr_h, kr_v = ev.face_kr[: self.n_hfaces], ev.face_kr[self.n_hfaces:]
        view = replace(s, hfaces=replace(s.hfaces, conductance=s.hfaces.conductance * kr_h),
                       vfaces=replace(s.vfaces, conductance=s.vfaces.conductance * kr_v))
        terms = [replace(t, conductance=t.conductance * k, r=t.r * k) for t, k in zip(forcing.terms, ev.term_kr)]
        if forcing.uptake is not None:
            terms.append(Term("evapotranspiration", "cell", forcing.uptake.cells, forcing.uptake.cols,
                              np.zeros(forcing.uptake.cells.size), -ev.uptake))
        return view, terms


def boundary_pressure(section: Section, term: Term) -> np.ndarray:
    """Pressure head on the boundary side of each entry of a Dirichlet term: its head minus the
    elevation of the face (a head side is hydrostatic, so at a side face the cell centre's)."""
    g = section.grid
    head = np.divide(term.r, term.conductance, out=np.full(term.conductance.size, np.nan), where=term.conductance > 0) + section.h_ref
    if term.face == "top":
        z = g.ground[term.column_or_row]
    elif term.face == "bottom":
        z = np.full(term.column_or_row.size, g.z_edges[-1])
    else:
        z = g.z_centre[g.active][term.cells]
    return head - z
