"""A discretised section re-assembled for new values that leave its geometry alone.

Zone conductivities and storage, the bed leakance, recharge, constant side heads and riparian
ET rates (the scenario's *plain* paths, :meth:`bedflux.scenario.spec.Scenario.is_plain_path`)
change no cell, face or boundary position. For them the grid, the zone cover and its volume
fractions, the face and boundary index arrays and the sparsity pattern of the matrix are kept;
the per-cell properties, face conductances and matrix values are recomputed from cached index
arrays with vectorised numpy, by the same formulas as :func:`bedflux.section.discretisation.discretise`
(equal to round-off). A calibration's parameter update then costs a few array operations instead
of a new grid, zone cover and matrix. Depths of layers, the stage or the ground change the
geometry and need a new section.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import (Section, et_unit_rate, reference_head, require_fixed_head,
                                            side_geometries)
from bedflux.section.materials import zone_table
from bedflux.section.operator import Faces, half_cell_resistance


class _FaceCells:
    """Flat grid positions of the two cells of each face and their lengths across it."""

    def __init__(self, faces: Faces, lengths: np.ndarray, horizontal: bool, nx: int):
        self.lo_pos, self.hi_pos = faces.lo_pos, faces.hi_pos
        if horizontal:
            self.len_lo, self.len_hi = lengths[self.lo_pos % nx], lengths[self.hi_pos % nx]
        else:
            self.len_lo, self.len_hi = lengths[self.lo_pos], lengths[self.hi_pos]

    def conductance(self, area: np.ndarray, k: np.ndarray) -> np.ndarray:
        """Harmonic-mean face conductance for the per-cell conductivity ``k`` (flat)."""
        return area / (half_cell_resistance(self.len_lo, k[self.lo_pos]) + half_cell_resistance(self.len_hi,
                                                                                                   k[self.hi_pos]))


class Reassembly:
    """Re-assemble ``section`` for scenarios that differ from its own in plain values only.

    Parameters
    ----------
    section
        A section built by :func:`bedflux.section.discretisation.discretise` without user
        property arrays.
    """

    def __init__(self, section: Section):
        if section.materials.replaced:
            raise ValueError("a section with user property arrays cannot be re-assembled for zone values")
        g = section.grid
        self.base = section
        self._h = _FaceCells(section.hfaces, g.dx, True, g.nx)
        self._v = _FaceCells(section.vfaces, g.thickness.ravel(), False, g.nx)
        # positions in L.data of the entries (lo, hi), (hi, lo), (lo, lo), (hi, hi) of every face
        L = section.L
        lo = np.concatenate([section.hfaces.lo, section.vfaces.lo]).astype(np.int64)
        hi = np.concatenate([section.hfaces.hi, section.vfaces.hi]).astype(np.int64)
        rows = np.repeat(np.arange(L.shape[0], dtype=np.int64), np.diff(L.indptr))
        keys = rows * L.shape[0] + L.indices  # increasing: CSR with sorted indices
        wanted = np.concatenate([lo * L.shape[0] + hi, hi * L.shape[0] + lo, lo * (L.shape[0] + 1),
                                 hi * (L.shape[0] + 1)])
        if not L.has_sorted_indices:
            raise ValueError("the conductance matrix needs sorted indices")
        self._slots = np.searchsorted(keys, wanted)
        if not np.array_equal(keys[self._slots], wanted):
            raise ValueError("a face has no entry in the conductance matrix")

    def section_for(self, scenario: Scenario) -> Section:
        """The section of ``scenario``, which must differ from the base section's scenario in
        plain values only (:meth:`bedflux.scenario.spec.Scenario.is_plain_path`).

        Raises
        ------
        InputError
            If no head is fixed anywhere, as :func:`discretise` does.
        """
        base = self.base
        g = base.grid
        mat = base.materials.with_zone_values(zone_table(scenario))
        # conductivities equal to the base section's (the same arrays) keep its faces and matrix
        hfaces, vfaces, L = base.hfaces, base.vfaces, base.L
        top_half_resistance, sides = base.top_half_resistance, base.sides
        if mat.kh is not base.materials.kh:
            hfaces = replace(hfaces, conductance=self._h.conductance(hfaces.area, mat.kh.ravel()))
        if mat.kv is not base.materials.kv:
            vfaces = replace(vfaces, conductance=self._v.conductance(vfaces.area, mat.kv.ravel()))
            cols = np.arange(g.nx)
            top_half_resistance = half_cell_resistance(g.thickness[g.top_row, cols], mat.kv[g.top_row, cols])
        if hfaces is not base.hfaces or vfaces is not base.vfaces:
            c = np.concatenate([hfaces.conductance, vfaces.conductance])
            data = np.bincount(self._slots, weights=np.concatenate([-c, -c, c, c]), minlength=L.nnz)
            L = sp.csr_matrix((data, L.indices, L.indptr), shape=L.shape, copy=False)
            L.has_sorted_indices = True
            sides = side_geometries(g, mat, base.index)
        section = replace(base, scenario=scenario, materials=mat, hfaces=hfaces, vfaces=vfaces, L=L,
                          h_ref=reference_head(scenario, g), top_half_resistance=top_half_resistance,
                          sides=sides, et_unit_rate=et_unit_rate(scenario, base.et_zone, base.et_share))
        require_fixed_head(section)
        return section
