"""A scenario on a finer grid and a shorter step: the runs of a refinement check.

The grid's ``dx`` (not that of a one-column section), ``dz`` and ``dz_max`` are divided by the factor and the row growth is taken
to the power ``1 / factor``, so that the rows grow by the same factor per metre of depth; a
transient run's ``step`` is divided by the factor as well (its output times stay). Everything else
(zones, boundaries, forcing, output times) is the scenario's own.
"""
from __future__ import annotations

import copy
import math

from bedflux.errors import InputError
from bedflux.scenario.spec import Scenario

#: Refinement ratio between the grids of the check (grid spacing and step divided by it at each
#: level): sqrt(2), so that three levels cost 1 + 2 + 4 times the cells of a section (8 times the
#: work of a transient one at the finest); Roache (1998, Verification and Validation in
#: Computational Science and Engineering, ch. 5; from memory) asks for at least 1.1.
DEFAULT_RATIO = 2.0**0.5


def refined(scenario: Scenario, factor: float) -> Scenario:
    """``scenario`` with its grid spacing and time step divided by ``factor`` (> 1)."""
    if not factor > 1.0:
        raise InputError(f"a refinement factor must be > 1; got {factor:g}", source=scenario.source)
    raw = copy.deepcopy(dict(scenario.raw))
    g = scenario.grid
    grid = dict(raw["grid"])
    if g.dx < (g.x1 - g.x0) * (1.0 - 1e-9):  # a 1D column stays one column
        grid["dx"] = g.dx / factor
    grid["dz"] = g.dz / factor
    if g.growth != 1.0:
        grid["growth"] = g.growth ** (1.0 / factor)
    if math.isfinite(g.dz_max):
        grid["dz_max"] = g.dz_max / factor
    raw["grid"] = grid
    if scenario.transient:
        raw["time"] = {**dict(raw["time"]), "step": scenario.time.step / factor}
    return Scenario.from_dict(raw, scenario.base_dir, scenario.source)
