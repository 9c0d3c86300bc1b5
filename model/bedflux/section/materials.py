"""Per-cell material properties from the scenario's zones, or from arrays a user passes.

The first zone fills the domain; each later zone overrides the part of the domain it covers: a
layer of a given thickness below the ground (over an x range when given) or a box in x and z.
A layer's top is the ground of its column (the top face of the column's cut top cell), so a
layer is exactly its thickness in every column, whatever the ground slope.

Cells that straddle zone boundaries get the volume fractions of the zones they hold, and the
averages that match how the pieces are arranged. Each column is cut into *strips* at the zone x
limits that fall inside it; inside a strip the zones lie in horizontal layers, so

    kv of a strip = harmonic mean over its layers (layers in series for vertical flow)
    kh of a strip = arithmetic mean over its layers (layers side by side for horizontal flow)

and the strips of a column stand side by side, so

    kv of the cell = arithmetic mean over its strips, weighted by width
    kh of the cell = harmonic mean over its strips, weighted by width

Storage (specific storage and specific yield) and porosity are volume-weighted means. A cell inside one zone keeps that
zone's values exactly.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable, Mapping

import numpy as np

from bedflux.errors import InputError
from bedflux.section.grid import Grid
from bedflux.scenario.spec import K_MAX, K_MIN, Scenario

PROPERTIES = ("kh", "kv", "specific_storage", "specific_yield", "porosity")
#: Property field names that were renamed (old -> new).
RENAMED_FIELDS = {"ss": "specific_storage", "sy": "specific_yield"}


@dataclass(frozen=True)
class ZoneCover:
    """Where the zones lie: the section cut into strips, and the owner of each height interval.

    Attributes
    ----------
    strip_col, strip_edges
        Column of each strip and the strip edges (m); strips of a column are contiguous.
    breaks
        ``(n_strips, K + 1)`` increasing elevations (from -inf to +inf) that split each strip into
        intervals of one zone.
    owner
        ``(n_strips, K)`` index of the zone that owns each interval.
    """

    strip_col: np.ndarray
    strip_edges: np.ndarray
    breaks: np.ndarray
    owner: np.ndarray
    _memo: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def strip_width(self) -> np.ndarray:
        return np.diff(self.strip_edges)

    def cell_extent(self, grid: Grid) -> tuple[np.ndarray, np.ndarray]:
        """``(nz, n_strips)`` bottom and top of each cell in each strip (inactive cells: their row)."""
        bottom = np.broadcast_to(grid.z_edges[1:, None], (grid.nz, self.strip_col.size))
        top_all = np.where(grid.active, grid.cell_bottom + grid.thickness, grid.z_edges[:-1, None])
        return bottom, top_all[:, self.strip_col]

    def overlaps(self, grid: Grid):
        """Yield ``(j, fraction)``: the ``(nz, n_strips)`` fraction of each cell's height in the
        strip that lies in interval ``j`` (owned by ``owner[:, j]``)."""
        bottom, top = self.cell_extent(grid)
        height = top - bottom
        for j in range(self.owner.shape[1]):
            lo, hi = self.breaks[:, j], self.breaks[:, j + 1]
            ov = np.minimum(top, hi[None, :]) - np.maximum(bottom, lo[None, :])
            yield j, np.clip(ov, 0.0, None) / height

    def fraction(self, grid: Grid, zone: int, overlaps: tuple | None = None) -> np.ndarray:
        """``(nz, n_strips)`` volume fraction of each cell-strip that lies in ``zone``
        (``overlaps``: those of :meth:`overlaps`, when already at hand)."""
        out = np.zeros((grid.nz, self.strip_col.size))
        for j, f in overlaps or self.overlaps(grid):
            out += np.where(self.owner[None, :, j] == zone, f, 0.0)
        return out

    def to_columns(self, grid: Grid, per_strip: np.ndarray) -> np.ndarray:
        """Width-weighted sum over the strips of each column: ``(nz, n_strips) -> (nz, nx)``."""
        if self._memo.get("grid") is not grid:
            self._memo.update(grid=grid, weights=(self.strip_width / grid.dx[self.strip_col])[None, :],
                              starts=np.flatnonzero(np.r_[True, np.diff(self.strip_col) != 0]))
        weighted = per_strip * self._memo["weights"]
        starts = self._memo["starts"]
        if starts.size == self.strip_col.size:
            return weighted  # one strip per column: the sum over a column's strips is that strip
        return np.add.reduceat(weighted, starts, axis=1)


def zone_cover(scenario: Scenario, grid: Grid) -> ZoneCover:
    """Cut the section into strips at the zone x limits and find the owner of each height interval."""
    zones = scenario.zones
    x0, x1 = grid.x_edges[0], grid.x_edges[-1]
    cuts = [v for z in zones[1:] if z.x is not None for v in z.x if x0 < v < x1]
    xs = np.unique(np.concatenate([grid.x_edges, np.asarray(cuts, dtype=float)]))
    mid = 0.5 * (xs[1:] + xs[:-1])
    col = np.clip(np.searchsorted(grid.x_edges, mid, side="right") - 1, 0, grid.nx - 1)
    ground = grid.ground[col]
    ns = col.size
    # each later zone as a height interval [lo, hi] per strip (empty where it does not apply)
    lows, highs = [], []
    for z in zones[1:]:
        applies = np.ones(ns, dtype=bool) if z.x is None else (mid >= z.x[0]) & (mid <= z.x[1])
        if z.depth is not None:
            lo, hi = ground - z.depth, np.full(ns, np.inf)
        else:
            lo, hi = np.full(ns, z.z[0]), np.full(ns, z.z[1])
        lows.append(np.where(applies, lo, np.inf))
        highs.append(np.where(applies, hi, np.inf))
    lows_a = np.array(lows).reshape(-1, ns).T
    highs_a = np.array(highs).reshape(-1, ns).T
    breaks = np.sort(np.hstack([np.full((ns, 1), -np.inf), lows_a, highs_a, np.full((ns, 1), np.inf)]), axis=1)
    a, b = breaks[:, :-1], breaks[:, 1:]
    with np.errstate(invalid="ignore"):
        probe = np.where(np.isfinite(a) & np.isfinite(b), 0.5 * (a + b),
                         np.where(np.isfinite(b), b - 1.0, np.where(np.isfinite(a), a + 1.0, 0.0)))
    owner = np.zeros(probe.shape, dtype=np.int16)
    for i in range(1, len(zones)):
        inside = (probe >= lows_a[:, i - 1:i]) & (probe <= highs_a[:, i - 1:i])
        owner = np.where(inside, i, owner)
    return ZoneCover(col, xs, breaks, owner)


def _require_cover(scenario: Scenario, grid: Grid, covered: np.ndarray) -> None:
    """Raise if a zone covers no part of any active cell."""
    for i, zone in enumerate(scenario.zones[1:], start=1):
        if not covered[i]:
            raise InputError(f"zone '{zone.name}' covers no cell of the grid, not even in part (check its x, z "
                             f"or depth against [grid] x = [{grid.x_edges[0]:g}, {grid.x_edges[-1]:g}] and the ground)",
                             source=scenario.source, where=f"zone '{zone.name}'")


@dataclass(frozen=True)
class Materials:
    """``(nz, nx)`` arrays of kh, kv (m/s), specific storage (1/m), specific yield and porosity (-) and
    the zone of each cell.

    ``zone`` is the zone at the cell centre (for figures); the properties are the averages over
    the zones a cell holds (see the module docstring). ``cover`` and ``table`` keep what is needed
    for :meth:`derivative`; ``replaced`` names the properties given as user arrays, ``multiplied``
    those whose zone values carry per-cell multipliers.
    """

    kh: np.ndarray
    kv: np.ndarray
    specific_storage: np.ndarray
    specific_yield: np.ndarray
    porosity: np.ndarray
    zone: np.ndarray
    zone_names: tuple[str, ...]
    grid: Grid | None = None
    cover: ZoneCover | None = None
    table: Mapping[str, np.ndarray] | None = None
    replaced: frozenset = frozenset()
    multiplied: frozenset = frozenset()
    _memo: dict = field(default_factory=dict, repr=False, compare=False)
    #: what depends on the geometry only (the cover's overlaps, zone fractions; made when first
    #: needed, for derivatives and new zone values), shared with :meth:`with_zone_values` copies
    _shared: dict = field(default_factory=dict, repr=False, compare=False)

    def _overlaps(self) -> tuple:
        if "overlaps" not in self._shared:
            self._shared["overlaps"] = tuple(self.cover.overlaps(self.grid))
        return self._shared["overlaps"]

    def _fraction(self, zone: int) -> np.ndarray:
        key = ("fraction", zone)
        if key not in self._shared:
            self._shared[key] = self.cover.fraction(self.grid, zone, self._overlaps())
        return self._shared[key]

    def with_zone_values(self, table: Mapping[str, np.ndarray]) -> "Materials":
        """The materials for new zone values (``table``: per property, one value per zone) on the
        same geometry: the averages recomputed from the cached volume fractions, as
        :func:`materials` computes them. Not for materials with user arrays (``replaced``)."""
        if self.replaced or self.multiplied:
            raise ValueError("materials with user arrays or zone multipliers cannot take new zone values")
        table = {p: np.asarray(table[p], dtype=float) for p in PROPERTIES}
        changed = [p for p in PROPERTIES if not np.array_equal(table[p], self.table[p])]
        arrays = {p: getattr(self, p) for p in PROPERTIES}
        arrays.update(_zone_averages(self.cover, self.grid, self._overlaps(), table, changed))
        return Materials(arrays["kh"], arrays["kv"], arrays["specific_storage"], arrays["specific_yield"],
                         arrays["porosity"], self.zone, self.zone_names, self.grid, self.cover, table,
                         self.replaced, _shared=self._shared)

    def derivative(self, prop: str, zone: int) -> np.ndarray:
        """``(nz, nx)`` derivative of each cell's ``prop`` with respect to the value of ``zone``
        (chain rule through the harmonic and arithmetic means); 0 where a user array replaced it."""
        if (prop, zone) not in self._memo:
            self._memo[(prop, zone)] = self._derivative(prop, zone)
        return self._memo[(prop, zone)]

    def _derivative(self, prop: str, zone: int) -> np.ndarray:
        g = self.grid
        if prop in self.replaced:
            return np.zeros((g.nz, g.nx))
        if prop in self.multiplied:
            raise ValueError(f"no sensitivities of {prop} under per-cell zone multipliers")
        f = self._fraction(zone)
        value = self.table[prop][zone]
        if prop == "kv":
            strip = _strip_average(self._overlaps(), self.cover, g, self.table["kv"], harmonic=True)
            return self.cover.to_columns(g, strip**2 * f) / value**2
        if prop == "kh":
            strip = _strip_average(self._overlaps(), self.cover, g, self.table["kh"], harmonic=False)
            return self.kh**2 * self.cover.to_columns(g, f / strip**2)
        return self.cover.to_columns(g, f)


def _strip_average(overlaps: tuple, cover: ZoneCover, grid: Grid, values: np.ndarray, harmonic: bool
                   ) -> np.ndarray:
    """``(nz, n_strips)`` harmonic or arithmetic mean of ``values`` (per zone) over each cell-strip
    (``overlaps``: :meth:`ZoneCover.overlaps`)."""
    total = np.zeros((grid.nz, cover.strip_col.size))
    v = 1.0 / values if harmonic else values
    for j, f in overlaps:
        total += f * v[cover.owner[:, j]][None, :]
    return 1.0 / total if harmonic else total


def _centre_zone(cover: ZoneCover, grid: Grid) -> np.ndarray:
    """Zone at the centre of each cell (in the strip that holds the column centre)."""
    edges = cover.strip_edges
    xc = grid.xc[cover.strip_col]
    holds = (edges[:-1] <= xc) & (xc < edges[1:])
    centre_strip = np.zeros(grid.nx, dtype=np.int64)
    centre_strip[cover.strip_col[holds]] = np.flatnonzero(holds)
    zc = np.where(grid.active, grid.z_centre, 0.5 * (grid.z_edges[1:, None] + grid.z_edges[:-1, None]))
    br = cover.breaks[centre_strip]  # (nx, K + 1)
    k = np.sum(zc.T[:, :, None] >= br[:, None, 1:-1], axis=2)  # (nx, nz) interval index
    return np.take_along_axis(cover.owner[centre_strip], k, axis=1).T.astype(np.int16)


def materials(scenario: Scenario, grid: Grid, fields: Mapping[str, np.ndarray] | None = None) -> Materials:
    """Per-cell properties.

    Parameters
    ----------
    scenario, grid
        The scenario and its grid.
    fields
        Optional ``(nz, nx)`` arrays (SI) for any of kh, kv, specific_storage, specific_yield and porosity
        that replace the zone values:
        a heterogeneous field from the Python API. Values of inactive cells are ignored.
        A key ``ZONE.PROPERTY`` (``bed.kv``) gives instead a positive per-cell multiplier of that
        zone's value (a random field over a zone): each cell's share of the zone then carries the
        zone's value times the cell's multiplier, averaged with its other zones as above.

    Raises
    ------
    InputError
        If a zone covers no part of the grid, or an array has the wrong shape or a non-positive or
        implausible conductivity.
    """
    cover = zone_cover(scenario, grid)
    table = zone_table(scenario)
    fields = dict(fields or {})
    scale = _zone_multipliers(scenario, grid, cover, fields)
    active = grid.active[:, cover.strip_col]
    covered = np.zeros(len(scenario.zones), dtype=bool)

    def noting_cover(overlaps):
        # one interval at a time (a large section holds one at once), noting the zones it covers
        for j, f in overlaps:
            own = cover.owner[:, j]
            covered[np.unique(own[((f > 0) & active).any(axis=0)])] = True
            yield j, f

    arrays = _zone_averages(cover, grid, noting_cover(cover.overlaps(grid)), table, scale=scale)
    _require_cover(scenario, grid, covered)
    for name, value in (fields or {}).items():
        if name in RENAMED_FIELDS:
            raise InputError(f"field '{name}' was renamed; pass it as '{RENAMED_FIELDS[name]}'", where="fields")
        if name not in PROPERTIES:
            raise InputError(f"unknown property field '{name}'; allowed: {', '.join(PROPERTIES)}", where="fields")
        a = np.asarray(value, dtype=float)
        if a.shape != (grid.nz, grid.nx):
            raise InputError(f"field '{name}' has shape {a.shape}; the grid is (nz, nx) = {(grid.nz, grid.nx)}",
                             where="fields")
        vals = a[grid.active]
        if not np.all(np.isfinite(vals)):
            raise InputError(f"field '{name}' has non-finite values in active cells", where="fields")
        if name in ("kh", "kv") and (vals.min() < K_MIN or vals.max() > K_MAX):
            raise InputError(f"field '{name}' must lie in [{K_MIN:g}, {K_MAX:g}] m/s; got "
                             f"{vals.min():.3g} to {vals.max():.3g}", where="fields")
        if name in ("specific_storage", "specific_yield", "porosity") and vals.min() < 0:
            raise InputError(f"field '{name}' must be >= 0", where="fields")
        arrays[name] = np.where(grid.active, a, arrays[name])
    return Materials(arrays["kh"], arrays["kv"], arrays["specific_storage"], arrays["specific_yield"],
                     arrays["porosity"], _centre_zone(cover, grid), tuple(z.name for z in scenario.zones), grid,
                     cover, table, frozenset(fields), frozenset(scale))


def zone_table(scenario: Scenario) -> dict[str, np.ndarray]:
    """Per property, the value of every zone (SI)."""
    return {p: np.array([getattr(z, p) for z in scenario.zones], dtype=float) for p in PROPERTIES}


def _zone_averages(cover: ZoneCover, grid: Grid, overlaps: Iterable, table: Mapping[str, np.ndarray],
                   properties: tuple | list = PROPERTIES,
                   scale: Mapping[str, Mapping[int, np.ndarray]] | None = None) -> dict[str, np.ndarray]:
    """``(nz, nx)`` arrays of the ``properties``: the averages of the zone values (see the module
    docstring) over the volume fractions ``overlaps`` (:meth:`ZoneCover.overlaps`, read once);
    ``scale`` (property -> zone -> ``(nz, n_strips)`` multipliers) makes a zone's value vary per cell."""
    sums = {p: np.zeros((grid.nz, cover.strip_col.size)) for p in properties}
    for j, f in overlaps:
        own = cover.owner[:, j]
        for p in properties:
            value = table[p][own][None, :]
            for zone, m in (scale or {}).get(p, {}).items():
                value = np.where(own[None, :] == zone, value * m, value)
            sums[p] += f * (1.0 / value if p == "kv" else value)
    arrays = {}
    if "kv" in sums:
        arrays["kv"] = cover.to_columns(grid, 1.0 / sums.pop("kv"))
    if "kh" in sums:
        arrays["kh"] = 1.0 / cover.to_columns(grid, 1.0 / sums.pop("kh"))
    for p, s in sums.items():
        arrays[p] = cover.to_columns(grid, s)
    return arrays


def _zone_multipliers(scenario: Scenario, grid: Grid, cover: ZoneCover,
                      fields: dict[str, np.ndarray]) -> dict[str, dict[int, np.ndarray]]:
    """Take the ``ZONE.PROPERTY`` entries out of ``fields``: property -> zone index -> the
    ``(nz, n_strips)`` multiplier of that zone's value in each cell-strip."""
    names = [z.name for z in scenario.zones]
    out: dict[str, dict[int, np.ndarray]] = {}
    for key in [k for k in fields if "." in k]:
        zone, _, prop = key.partition(".")
        if prop in RENAMED_FIELDS:
            raise InputError(f"'{key}' was renamed; pass it as '{zone}.{RENAMED_FIELDS[prop]}'", where="fields")
        if zone not in names or prop not in PROPERTIES:
            raise InputError(f"unknown zone multiplier '{key}'; write ZONE.PROPERTY with a zone of "
                             f"{', '.join(names)} and a property of {', '.join(PROPERTIES)}", where="fields")
        m = np.asarray(fields.pop(key), dtype=float)
        if m.shape != (grid.nz, grid.nx):
            raise InputError(f"multiplier '{key}' has shape {m.shape}; the grid is (nz, nx) = "
                             f"{(grid.nz, grid.nx)}", where="fields")
        if not np.all(np.isfinite(m[grid.active]) & (m[grid.active] > 0)):
            raise InputError(f"multiplier '{key}' must be finite and positive in active cells", where="fields")
        out.setdefault(prop, {})[names.index(zone)] = np.where(grid.active, m, 1.0)[:, cover.strip_col]
    return out
