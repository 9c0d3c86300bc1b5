"""What a forward model keeps from one parameter vector to the next.

- :class:`SectionSource`: the section at a parameter vector. When every free parameter is a plain
  value (zone conductivities and storage, leakance, recharge, constant side heads, ET rates; see
  :meth:`bedflux.scenario.spec.Scenario.is_plain_path`) and lies inside bounds the scenario was
  shown to accept, the scenario is copied along the changed values only
  (:meth:`~bedflux.scenario.spec.Scenario.with_plain_values`) and the section re-assembled on
  the cached geometry (:class:`bedflux.section.reassembly.Reassembly`); otherwise (a layer depth,
  the stage, a variably saturated run, a value outside the bounds) the scenario is rebuilt and
  re-checked by ``with_values`` and discretised anew, as before.
- :class:`OperatorSource`: observation operators, built once per grid and observation places.
"""
from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.forward.observe import Operators, build_operators
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import Section, discretise
from bedflux.section.reassembly import Reassembly

#: Observation table columns that place an observation (its value and sigma do not).
PLACE_COLUMNS = ("kind", "x", "depth", "time")


class SectionSource:
    """Sections of ``scenario`` at parameter values, re-assembled where the geometry stays.

    Parameters
    ----------
    scenario
        The base scenario.
    free
        The free parameters (``path``, ``low``, ``high`` in SI).
    """

    def __init__(self, scenario: Scenario, free: Sequence):
        self.scenario = scenario
        self.paths = [p.path for p in free]
        self.low = np.array([p.low for p in free], dtype=float)
        self.high = np.array([p.high for p in free], dtype=float)
        self.plain = not scenario.variably_saturated and all(scenario.is_plain_path(p) for p in self.paths)
        self._reassembly: Reassembly | None = None
        self._last: tuple[np.ndarray, Section] | None = None

    def _bounds_accepted(self) -> bool:
        """True when the scenario accepts both bounds of every parameter (each plain value is
        checked against an interval of its own, so it then accepts every value between)."""
        for path, low, high in zip(self.paths, self.low, self.high):
            try:
                self.scenario.with_values({path: low})
                self.scenario.with_values({path: high})
            except InputError:
                return False
        return True

    def section(self, values: np.ndarray) -> Section:
        """The section with the free parameters at ``values`` (SI); the same section again for
        the same values."""
        values = np.array(values, dtype=float)
        if self._last is not None and np.array_equal(values, self._last[0]):
            return self._last[1]
        section = self._build(values)
        self._last = (values, section)
        return section

    def _build(self, values: np.ndarray) -> Section:
        named = dict(zip(self.paths, values.tolist()))
        inside = self.plain and bool(np.all((values >= self.low) & (values <= self.high)))
        if inside and self._reassembly is not None:
            return self._reassembly.section_for(self.scenario.with_plain_values(named))
        section = discretise(self.scenario.with_values(named))
        if inside and self._last is not None:
            # a second parameter vector: the model is used again, so this section becomes the
            # base of the next ones (a model asked at one vector only is built in full, as before)
            self.plain = self._bounds_accepted()
            if self.plain:
                self._reassembly = Reassembly(section)
        return section


class OperatorSource:
    """Observation operators, built again only when the grid or the observation places change."""

    def __init__(self, pan_diameter: float, source: str):
        self.pan_diameter = pan_diameter
        self.source = source
        self._table: pd.DataFrame | None = None
        self._places: tuple | None = None
        self._grid = None
        self._ground = None
        self._ops: Operators | None = None

    def operators(self, section: Section, table: pd.DataFrame) -> Operators:
        """The operators of ``table`` on ``section`` (see :func:`build_operators`)."""
        if table is not self._table:
            places = tuple(table[c].to_numpy() for c in PLACE_COLUMNS)
            if self._places is None or not all(_same(a, b) for a, b in zip(places, self._places)):
                self._ops = None
            self._table, self._places = table, places
        grid = section.grid
        if self._ops is not None and grid is not self._grid:
            same = (self._ground == section.scenario.ground and _same(grid.x_edges, self._grid.x_edges)
                    and _same(grid.z_edges, self._grid.z_edges) and _same(grid.active, self._grid.active)
                    and _same(grid.thickness, self._grid.thickness))
            if not same:
                self._ops = None
        if self._ops is None:
            self._ops = build_operators(section, table, self.pan_diameter, self.source)
        self._grid, self._ground = grid, section.scenario.ground
        return self._ops


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    """Equal arrays (NaN equal to NaN)."""
    if a.dtype.kind == "f" and b.dtype.kind == "f":
        return bool(np.array_equal(a, b, equal_nan=True))
    return bool(np.array_equal(a, b))
