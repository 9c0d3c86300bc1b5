"""Heat transport on the section: the finite-volume operator for given water flows.

Energy per metre of section width, with temperatures ``theta = T - T_gw`` relative to the
groundwater temperature (which keeps budgets exact, as relative heads do for water):

    C V dtheta/dt = - sum over faces (advected + conducted heat out) + boundary heat in
                    + rho_w c_w R theta

``C = n rho_w c_w + (1 - n) c_s`` is the bulk volumetric heat capacity (porosity ``n``, solid
grains ``c_s``), ``V`` the cell area, and ``R`` the water a cell releases from storage (its water
imbalance over the faces and boundary terms): water leaving storage leaves at the cell's
temperature, so a uniform temperature stays uniform whatever the flow does.

Faces. The heat flow across a face from cell ``a`` to cell ``b`` carrying the water flow ``F``
(m^2/s per metre, a to b) is the exponentially fitted flux of Il'in (1969) and Allen & Southwell
(1955) (Scharfetter & Gummel 1969 in semiconductors):

    H = D (B(-P) theta_a - B(P) theta_b),   P = rho_w c_w F / D,   B(x) = x / (exp(x) - 1)

with ``D`` the face's conduction conductance, the harmonic mean of the two half cells'
``lambda + rho_w c_w alpha |q|`` (bulk conductivity plus thermal dispersion along the face-normal
Darcy flux ``q``, dispersivity ``alpha``) over their half widths. ``P`` is the cell Peclet number of
the face. The flux is exact for steady one-dimensional advection and conduction at every ``P``, is
central differencing (second order) for ``|P| << 2``, and tends to upwind for ``|P| >> 2``; its
matrix is an M-matrix, so temperatures never overshoot (no oscillation). The extra conduction over
central differencing, ``D (P/2 coth(P/2) - 1)``, is 8 % of ``D`` at ``P = 1`` and 31 % at ``P = 2``;
a daily wave is carried without visible smearing when ``|P| <= 2`` (docs/numerics.md), which at
``dz = 2 cm`` and ``lambda = 1.8`` holds up to Darcy fluxes of 3.7 m/d.

Boundaries, as entries ``s theta_source - g theta_cell`` of heat inflow (W per metre of width):

- every water inflow through a boundary carries its source temperature (``s = rho_w c_w Q``),
  every outflow the cell's (``g = rho_w c_w |Q|``): the stream's on the bed and stream sides,
  the groundwater's through head and flux sides and the base, the ground's (or the groundwater's
  without ``ground_temperature``) with recharge;
- conduction to the stream over the wetted part of the bed (the stream is well mixed at the
  stream temperature), to the groundwater temperature at the base (the model base is held at it),
  and to ``ground_temperature`` over exposed ground when given (else exposed ground is insulated);
  the far sides do not conduct (insulated);
- evapotranspiration takes water at the cell's temperature.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp

from bedflux.scenario.heat import WATER_HEAT_CAPACITY
from bedflux.section.discretisation import Section, Term

#: Energy budget lines in report order (W per metre of section width).
HEAT_LINES = ("stream", "ground", "left", "right", "bottom", "evapotranspiration", "water_storage",
              "heat_storage")
#: Cell Peclet number above which a daily wave starts to smear (docs/numerics.md).
PECLET_ADVICE = 2.0


def bernoulli(x: np.ndarray) -> np.ndarray:
    """``B(x) = x / (exp(x) - 1)`` without overflow or cancellation (``B(0) = 1``)."""
    x = np.asarray(x, dtype=float)
    out = np.ones_like(x)
    small = np.abs(x) < 1e-6
    out[small] = 1.0 - 0.5 * x[small] + x[small] ** 2 / 12.0
    pos = (x > 0) & ~small
    xp = x[pos]
    out[pos] = xp * np.exp(-xp) / -np.expm1(-xp)
    neg = (x < 0) & ~small
    out[neg] = x[neg] / np.expm1(x[neg])
    return out


@dataclass(frozen=True)
class ThermalCells:
    """Per unknown: bulk volumetric heat capacity (J m-3 K-1), bulk thermal conductivity
    (W m-1 K-1), dispersivity (m) and the zone volume fractions (zones x unknowns)."""

    capacity: np.ndarray
    conductivity: np.ndarray
    dispersivity: np.ndarray
    porosity: np.ndarray
    fractions: np.ndarray


def thermal_cells(section: Section) -> ThermalCells:
    """Thermal properties of every cell: volume-weighted means of the zones it holds; the bulk
    heat capacity ``n rho_w c_w + (1 - n) c_s`` from the cell's porosity ``n``."""
    g, m = section.grid, section.materials
    zones = section.scenario.zones
    fr = np.array([m.cover.to_columns(g, m.cover.fraction(g, i))[g.active] for i in range(len(zones))])
    fr = fr / fr.sum(axis=0, keepdims=True)

    def mean(prop: str) -> np.ndarray:
        return np.array([getattr(z, prop) for z in zones]) @ fr

    n = m.porosity[g.active]
    capacity = n * WATER_HEAT_CAPACITY + (1.0 - n) * mean("heat_capacity")
    return ThermalCells(capacity, mean("thermal_conductivity"), mean("dispersivity"), n, fr)


@dataclass
class HeatTerm:
    """Heat inflow ``s theta_source - g theta[cells]`` (W per metre of width) of one budget line;
    ``source`` names the temperature (``stream``, ``groundwater``, ``ground``; None: none)."""

    line: str
    cells: np.ndarray
    g: np.ndarray
    s: np.ndarray
    source: str | None
    #: the water inflow (m^2/s per metre, times the flow state's weight) of each entry of a term
    #: that water crosses (None: a conduction term or the storage release)
    flow: np.ndarray | None = None
    #: ``g / lambda[cells]`` of a conduction term (None: not a conduction term)
    per_conductivity: np.ndarray | None = None

    def inflow(self, theta: np.ndarray, sources: dict[str, float]) -> np.ndarray:
        src = 0.0 if self.source is None else sources[self.source]
        return self.s * src - self.g * theta[self.cells]


class HeatGeometry:
    """The section's faces as heat sees them (computed once): both cells, area and half widths."""

    def __init__(self, section: Section, cells: ThermalCells):
        self.section = section
        self.cells = cells
        g = section.grid
        hf, vf = section.hfaces, section.vfaces
        t = g.thickness.ravel()
        self.lo = np.concatenate([hf.lo, vf.lo])
        self.hi = np.concatenate([hf.hi, vf.hi])
        self.area = np.concatenate([hf.area, vf.area])
        self.water_conductance = np.concatenate([hf.conductance, vf.conductance])
        self.d_lo = 0.5 * np.concatenate([g.dx[hf.lo_pos % g.nx], t[vf.lo_pos]])
        self.d_hi = 0.5 * np.concatenate([g.dx[hf.hi_pos % g.nx], t[vf.hi_pos]])
        self.n = section.n

    @cached_property
    def top_half(self) -> np.ndarray:
        """Half thickness of the top cell of each column."""
        g = self.section.grid
        return 0.5 * g.thickness[g.top_row, np.arange(g.nx)]

    def face_flow(self, u: np.ndarray) -> np.ndarray:
        """Water flow across each face, lo to hi (m^2/s per metre), for relative heads ``u``."""
        return self.water_conductance * (u[self.lo] - u[self.hi])


def source_of(term: Term, ground_given: bool) -> str | None:
    """The temperature water carries when it enters through ``term``."""
    if term.face == "cell":
        return None
    if term.kind == "stream":
        return "stream"
    if term.kind in ("recharge", "seepage_face"):
        return "ground" if ground_given else "groundwater"
    return "groundwater"


def line_of(term: Term) -> str:
    """The energy budget line of a water term."""
    if term.kind in ("recharge", "seepage_face"):
        return "ground"
    return term.kind


@dataclass(eq=False)
class HeatOperator:
    """``A theta = b(sources)`` for one water-flow state: the face coefficients, the boundary heat
    terms and the matrix ``A`` (heat outflow per kelvin, W per metre per K)."""

    geometry: HeatGeometry
    a_lo: np.ndarray
    a_hi: np.ndarray
    terms: list[HeatTerm]
    A: sp.csr_matrix
    peclet_max: float
    peclet_at: tuple[float, float] = (float("nan"), float("nan"))
    #: face water flows (lo to hi, m^2/s per metre), conduction conductances, Peclet numbers and
    #: the two half cells' effective conductivities: what :class:`ResidualTangent` differentiates
    F: np.ndarray | None = None
    D: np.ndarray | None = None
    P: np.ndarray | None = None
    lam_lo: np.ndarray | None = None
    lam_hi: np.ndarray | None = None

    @property
    def water_terms(self) -> list[HeatTerm]:
        """The terms water crosses, in the order of the flow states' water terms."""
        return [t for t in self.terms if t.flow is not None]

    def internal_gross(self, theta: np.ndarray) -> float:
        """Sum of the magnitudes of the face heat flows' parts (the scale of their round-off)."""
        geo = self.geometry
        return float(np.abs(self.a_lo * theta[geo.lo]).sum() + np.abs(self.a_hi * theta[geo.hi]).sum())

    @cached_property
    def _source_vectors(self) -> dict[str, np.ndarray]:
        """Per source, the right-hand side of a source temperature of 1 K."""
        out: dict[str, np.ndarray] = {}
        for t in self.terms:
            if t.source is not None:
                v = out.setdefault(t.source, np.zeros(self.geometry.n))
                v += np.bincount(t.cells, weights=t.s, minlength=v.size)
        return out

    def rhs(self, sources: dict[str, float]) -> np.ndarray:
        """``b``: the heat the boundary sources bring in at their temperatures."""
        b = np.zeros(self.geometry.n)
        for name, v in self._source_vectors.items():
            if sources[name] != 0.0:
                b += sources[name] * v
        return b

    def budget(self, theta: np.ndarray, sources: dict[str, float], weight: float = 1.0,
               into: dict[str, list[float]] | None = None) -> tuple[dict[str, list[float]], float]:
        """Inflow and outflow of each line (``{line: [in, out]}``, times ``weight``) and the gross
        of their parts, added to ``into`` when given."""
        out = into if into is not None else {k: [0.0, 0.0] for k in HEAT_LINES}
        gross = 0.0
        for t in self.terms:
            h = t.inflow(theta, sources) * weight
            out[t.line][0] += float(h[h > 0].sum())
            out[t.line][1] -= float(h[h < 0].sum())
            src = 0.0 if t.source is None else sources[t.source]
            gross += weight * float(np.abs(t.s * src).sum() + np.abs(t.g * theta[t.cells]).sum())
        return out, gross + weight * self.internal_gross(theta)


def heat_operator(geo: HeatGeometry, flows: list[tuple[float, np.ndarray, list[Term]]],
                  wet_terms: list[Term], t: float, ground_given: bool) -> HeatOperator:
    """The heat operator for water flows given as weighted states ``(weight, u, terms)`` (one
    state for a steady flow; the two ends of a step with the scheme's weights for a transient one).

    ``wet_terms`` are the water terms whose top faces conduct to the stream (the stream terms of
    the state at the step's end), ``t`` the time of the exposed ground's extent.
    """
    section, cells = geo.section, geo.cells
    rc = WATER_HEAT_CAPACITY
    F = sum(w * geo.face_flow(u) for w, u, _ in flows)
    terms: list[HeatTerm] = []
    water_in = np.zeros(geo.n)
    for w, u, wterms in flows:
        for term in wterms:
            q = w * term.inflow(u)
            water_in += np.bincount(term.cells, weights=q, minlength=geo.n)
            if term.face == "cell":
                terms.append(HeatTerm(line_of(term), term.cells, -rc * q, np.zeros(q.size), None, flow=q))
            else:
                terms.append(HeatTerm(line_of(term), term.cells, rc * np.maximum(-q, 0.0), rc * np.maximum(q, 0.0),
                                      source_of(term, ground_given), flow=q))
    # conduction through the boundaries
    g = section.grid
    lam = cells.conductivity
    for term in wet_terms:
        if term.kind == "stream" and term.face == "top":
            width = g.dx[term.column_or_row] if term.width is None else term.width
            per = width / geo.top_half[term.column_or_row]
            cond = lam[term.cells] * per
            terms.append(HeatTerm("stream", term.cells, cond, cond, "stream", per_conductivity=per))
    base = section.sides["bottom"]
    per = base.area / (0.5 * g.thickness[g.nz - 1, base.column_or_row])
    cond = lam[base.cells] * per
    terms.append(HeatTerm("bottom", base.cells, cond, cond, "groundwater", per_conductivity=per))
    if ground_given:
        dry = section.wet_state(t).dry
        cols = np.flatnonzero(dry > 0.0)
        cells_top = section.top_cells[cols]
        per = dry[cols] / geo.top_half[cols]
        cond = lam[cells_top] * per
        terms.append(HeatTerm("ground", cells_top, cond, cond, "ground", per_conductivity=per))
    # water released from storage (the cell's water imbalance) leaves at the cell's temperature
    net_out = np.bincount(geo.lo, weights=F, minlength=geo.n) - np.bincount(geo.hi, weights=F, minlength=geo.n)
    release = net_out - water_in
    all_cells = np.arange(geo.n)
    terms.append(HeatTerm("water_storage", all_cells, -rc * release, np.zeros(geo.n), None))
    # faces: exponentially fitted advection-conduction
    q = np.abs(F) / geo.area
    lam_lo = lam[geo.lo] + rc * cells.dispersivity[geo.lo] * q
    lam_hi = lam[geo.hi] + rc * cells.dispersivity[geo.hi] * q
    D = geo.area / (geo.d_lo / lam_lo + geo.d_hi / lam_hi)
    P = rc * F / D
    a_lo = D * bernoulli(-P)
    a_hi = D * bernoulli(P)
    diag = np.zeros(geo.n)
    for term in terms:
        diag += np.bincount(term.cells, weights=term.g, minlength=geo.n)
    rows = np.concatenate([geo.lo, geo.lo, geo.hi, geo.hi, all_cells])
    cols = np.concatenate([geo.lo, geo.hi, geo.hi, geo.lo, all_cells])
    vals = np.concatenate([a_lo, -a_hi, a_hi, -a_lo, diag])
    A = sp.csr_matrix((vals, (rows, cols)), shape=(geo.n, geo.n))
    parts = {"F": F, "D": D, "P": P, "lam_lo": lam_lo, "lam_hi": lam_hi}
    if not P.size:
        return HeatOperator(geo, a_lo, a_hi, terms, A, 0.0, **parts)
    k = int(np.argmax(np.abs(P)))
    pos = geo.section.hfaces.positions[geo.lo[k]]
    at = (float(g.xc[pos % g.nx]), float(g.z_centre.ravel()[pos]))
    return HeatOperator(geo, a_lo, a_hi, terms, A, float(abs(P[k])), at, **parts)


def bernoulli_derivative(x: np.ndarray) -> np.ndarray:
    """``B'(x) = B(x) (1 - B(-x)) / x`` (from ``B(-x) = B(x) e^x``), by its series
    ``-1/2 + x/6 - x^3/180`` near 0."""
    x = np.asarray(x, dtype=float)
    out = np.empty_like(x)
    small = np.abs(x) < 1e-3
    xs = x[small]
    out[small] = -0.5 + xs / 6.0 - xs**3 / 180.0
    xl = x[~small]
    out[~small] = bernoulli(xl) * (1.0 - bernoulli(-xl)) / xl
    return out


@dataclass
class FlowTangent:
    """A direction of change of what the heat operator is built from, one column per parameter:
    per-cell bulk conductivity and dispersivity (n x P), face water flows (faces x P) and the water
    inflow of each entry of each of :attr:`HeatOperator.water_terms` (entries x P). None: no change."""

    conductivity: np.ndarray | None = None
    dispersivity: np.ndarray | None = None
    face_flow: np.ndarray | None = None
    term_flows: list[np.ndarray] | None = None


class ResidualTangent:
    """``d(b - A theta)/dp`` at fixed temperatures along a :class:`FlowTangent` (n x P): the exact
    derivative of the assembly of :func:`heat_operator` (its branches held: the upstream side of
    each boundary entry, the wetted faces), linear in the temperatures and the source temperatures,
    so kept as one sparse matrix ``K`` (P blocks of n rows) and one vector per source:
    ``tangent(theta, sources) = (K theta) + sum of sources[k] V_k``.

    Faces: ``H = D (B(-P) theta_lo - B(P) theta_hi)`` with ``P = rho_w c_w F / D`` and ``D`` the
    harmonic mean of ``lambda + rho_w c_w alpha |F| / area``; boundary entries carry
    ``rho_w c_w q`` at the source or cell temperature, conduction entries ``lambda`` times their
    geometry, and the storage release ``rho_w c_w (net outflow - inflow) theta``.
    """

    def __init__(self, op: HeatOperator, tangent: FlowTangent, n_columns: int):
        geo = op.geometry
        n, P, rc = geo.n, n_columns, WATER_HEAT_CAPACITY
        lo, hi = geo.lo, geo.hi
        self.n, self.P = n, P
        dF = np.zeros((lo.size, P)) if tangent.face_flow is None else tangent.face_flow
        sign = np.sign(op.F)[:, None]
        area = geo.area[:, None]
        cells = geo.cells
        dlam_lo = rc * cells.dispersivity[lo][:, None] * sign * dF / area
        dlam_hi = rc * cells.dispersivity[hi][:, None] * sign * dF / area
        if tangent.conductivity is not None:
            dlam_lo = dlam_lo + tangent.conductivity[lo]
            dlam_hi = dlam_hi + tangent.conductivity[hi]
        if tangent.dispersivity is not None:
            absq = (np.abs(op.F) / geo.area)[:, None]
            dlam_lo = dlam_lo + rc * tangent.dispersivity[lo] * absq
            dlam_hi = dlam_hi + rc * tangent.dispersivity[hi] * absq
        D, Pe = op.D[:, None], op.P[:, None]
        dD = D**2 / area * ((geo.d_lo / op.lam_lo**2)[:, None] * dlam_lo
                            + (geo.d_hi / op.lam_hi**2)[:, None] * dlam_hi)
        dP = rc * dF / D - Pe * dD / D
        # dH = c_lo theta_lo + c_hi theta_hi
        c_lo = dD * bernoulli(-op.P)[:, None] - D * bernoulli_derivative(-op.P)[:, None] * dP
        c_hi = -dD * bernoulli(op.P)[:, None] - D * bernoulli_derivative(op.P)[:, None] * dP
        rows, cols, vals = [hi, hi, lo, lo], [lo, hi, lo, hi], [c_lo, c_hi, -c_lo, -c_hi]
        # water released from storage: rho_w c_w (net outflow over the faces - boundary inflow) theta
        diag_cells, diag_vals = [lo, hi], [rc * dF, -rc * dF]
        self.sources: dict[str, np.ndarray] = {}
        for term, dq in zip(op.water_terms, tangent.term_flows or []):
            if term.source is None:  # a sink takes rho_w c_w q theta_cell; its release part cancels
                continue
            # inflow at the source temperature (its release part: -rho_w c_w dq theta), outflow at the cell's
            inflow = term.flow > 0
            self._add_source(term.source, term.cells[inflow], rc * dq[inflow])
            diag_cells.append(term.cells[inflow])
            diag_vals.append(-rc * dq[inflow])
        if tangent.conductivity is not None:
            for term in op.terms:
                if term.per_conductivity is not None:
                    part = term.per_conductivity[:, None] * tangent.conductivity[term.cells]
                    self._add_source(term.source, term.cells, part)
                    diag_cells.append(term.cells)
                    diag_vals.append(-part)
        rows += diag_cells
        cols += diag_cells
        vals += diag_vals
        block = np.arange(P) * n
        r = np.concatenate([(idx[:, None] + block[None, :]).ravel() for idx in rows])
        c = np.concatenate([np.repeat(idx, P) for idx in cols])
        v = np.concatenate([x.ravel() for x in vals])
        self.K = sp.csr_matrix((v, (r, c)), shape=(n * P, n))

    def _add_source(self, name: str, cells: np.ndarray, values: np.ndarray) -> None:
        v = self.sources.setdefault(name, np.zeros((self.n, self.P)))
        scatter = sp.csr_matrix((np.ones(cells.size), (cells, np.arange(cells.size))), shape=(self.n, cells.size))
        v += scatter @ values

    def __call__(self, theta: np.ndarray, sources: dict[str, float]) -> np.ndarray:
        out = (self.K @ theta).reshape(self.P, self.n).T
        for name, v in self.sources.items():
            if sources[name] != 0.0:
                out = out + sources[name] * v
        return out
