"""Per-cell material properties from the scenario's zones, or from arrays a user passes.

The first zone fills the domain; each later zone overrides the cells it covers: a layer of a
given thickness below the ground (over an x range when given) or a box in x and z. A cell is
covered when its centre is inside.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import numpy as np

from .errors import InputError
from .grid import Grid
from .scenario import K_MAX, K_MIN, Scenario

PROPERTIES = ("kh", "kv", "ss", "sy", "porosity")


@dataclass(frozen=True)
class Materials:
    """``(nz, nx)`` arrays of kh, kv (m/s), ss (1/m), sy, porosity (-) and the zone of each cell."""

    kh: np.ndarray
    kv: np.ndarray
    ss: np.ndarray
    sy: np.ndarray
    porosity: np.ndarray
    zone: np.ndarray
    zone_names: tuple[str, ...]


def zone_index(scenario: Scenario, grid: Grid) -> np.ndarray:
    """``(nz, nx)`` index into ``scenario.zones`` of the zone that owns each cell."""
    xc = np.broadcast_to(grid.xc[None, :], (grid.nz, grid.nx))
    zc = np.nan_to_num(grid.z_centre, nan=-np.inf)
    depth_below_ground = grid.ground[None, :] - zc
    owner = np.zeros((grid.nz, grid.nx), dtype=np.int16)
    for i, zone in enumerate(scenario.zones[1:], start=1):
        inside = np.ones_like(owner, dtype=bool)
        if zone.x is not None:
            inside &= (xc >= zone.x[0]) & (xc <= zone.x[1])
        if zone.depth is not None:
            inside &= depth_below_ground <= zone.depth
        if zone.z is not None:
            inside &= (zc >= zone.z[0]) & (zc <= zone.z[1])
        if not (inside & grid.active).any():
            raise InputError(f"zone '{zone.name}' covers no cell of the grid (check its x, z or depth against "
                             f"[grid] x = [{grid.x_edges[0]:g}, {grid.x_edges[-1]:g}] and the ground)",
                             source=scenario.source, where=f"zone '{zone.name}'")
        owner[inside & grid.active] = i
    return owner


def materials(scenario: Scenario, grid: Grid, fields: Mapping[str, np.ndarray] | None = None) -> Materials:
    """Per-cell properties.

    Parameters
    ----------
    scenario, grid
        The scenario and its grid.
    fields
        Optional ``(nz, nx)`` arrays (SI) for any of kh, kv, ss, sy that replace the zone values:
        a heterogeneous field from the Python API. Values of inactive cells are ignored.

    Raises
    ------
    InputError
        If an array has the wrong shape or a non-positive or implausible conductivity.
    """
    owner = zone_index(scenario, grid)
    table = {p: np.array([getattr(z, p) for z in scenario.zones]) for p in PROPERTIES}
    arrays = {p: table[p][owner] for p in PROPERTIES}
    for name, value in (fields or {}).items():
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
        if name in ("ss", "sy", "porosity") and vals.min() < 0:
            raise InputError(f"field '{name}' must be >= 0", where="fields")
        arrays[name] = np.where(grid.active, a, arrays[name])
    return Materials(arrays["kh"], arrays["kv"], arrays["ss"], arrays["sy"], arrays["porosity"], owner,
                     tuple(z.name for z in scenario.zones))
