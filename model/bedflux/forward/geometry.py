"""The section's geometry as calibration, planning and their figures need it: columns, ground,
the submerged bed and the zones, without reaching into the discretisation."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bedflux.scenario.spec import Scenario


@dataclass(frozen=True)
class BedGeometry:
    """Columns of the section at one time (SI).

    ``x`` column centres, ``x_edges`` / ``z_edges`` cell edges, ``ground`` ground elevation per
    column, ``submerged`` columns under the stream, ``stage`` local stage per column (NaN where
    not submerged), ``base`` the model base elevation, ``zone`` zone index per cell (-1 outside
    the domain) and ``zone_count`` the number of zones.
    """

    x: np.ndarray
    x_edges: np.ndarray
    z_edges: np.ndarray
    ground: np.ndarray
    submerged: np.ndarray
    stage: np.ndarray
    base: float
    zone: np.ndarray
    zone_count: int


def bed_geometry(scenario: Scenario, t: float = 0.0) -> BedGeometry:
    """The geometry of ``scenario`` at time ``t`` (s)."""
    from bedflux.section.discretisation import discretise

    sec = discretise(scenario)
    g = sec.grid
    wet = sec.submerged(t)
    stage = np.where(wet, sec.local_stage(t), np.nan) if wet.any() else np.full(g.nx, np.nan)
    return BedGeometry(g.xc.copy(), g.x_edges.copy(), g.z_edges.copy(), g.ground.copy(), wet, stage,
                       float(g.z_edges[-1]), np.where(g.active, sec.materials.zone, -1),
                       len(scenario.zones))
