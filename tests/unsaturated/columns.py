"""Sections with boundary values a scenario cannot state (pressure heads on a face), for the checks
against analytic solutions: the scenario supplies grid and soil, the test the boundary terms."""
from __future__ import annotations

import numpy as np

from bedflux.scenario.spec import Scenario
from bedflux.section.richards import RichardsSystem, StepForcing, boundary_pressure
from bedflux.section.richards_steps import Stepper, soil_water
from bedflux.section.discretisation import Section, Term, discretise


def box(width, height, dx, dz, ks, retention, **extra) -> Section:
    """A rectangular section ``[0, width] x [0, height]`` of one soil."""
    d = {"grid": {"x": [0.0, width], "bottom": 0.0, "dx": dx, "dz": dz}, "ground": {"elevation": height},
         "zone": [{"name": "soil", "kh": ks, "kv": ks, "specific_storage": 0.0, "retention": retention}],
         "sides": {"left": {"head": 0.0}, "right": {"head": 0.0}, "bottom": {"head": 0.0}}}
    d.update(extra)
    return discretise(Scenario.from_dict(d))


def pressure_terms(section: Section, faces: dict) -> StepForcing:
    """Dirichlet terms holding the pressure head ``faces[side](x or z)`` on the named faces
    (``top``, ``bottom``, ``left``, ``right``); head = pressure + elevation of the face."""
    g = section.grid
    zc = g.z_centre
    terms = []
    for side, pressure in faces.items():
        if side == "top":
            cols = np.arange(g.nx)
            cells, place = section.top_cells, cols
            cond = g.dx / section.top_half_resistance
            head = pressure(g.xc) + g.ground
        else:
            geo = section.sides[side]
            cells, place, cond = geo.cells, geo.column_or_row, geo.conductance
            if side == "bottom":
                head = pressure(g.xc) + g.z_edges[-1]
            else:
                col = 0 if side == "left" else g.nx - 1
                z = zc[place, col]
                head = pressure(z) + z
        terms.append(Term(side, side, cells, place, cond, cond * (head - section.h_ref)))
    return StepForcing(terms, [boundary_pressure(section, t) for t in terms], None)


class FixedBoundaries:
    """Boundaries that do not change with time or state."""

    def __init__(self, section: Section, forcing: StepForcing):
        self.section = section
        self.fixed = forcing

    def initial_state(self):
        return self.section.initial_active_set()

    def forcing(self, t0, t1, state, steady):
        return self.fixed

    def update(self, ev, forcing, t, state):
        return state


def stepper(section: Section, forcing: StepForcing, method: str = "newton", form: str = "mixed") -> Stepper:
    system = RichardsSystem(section, soil_water(section.scenario, section), form=form)
    return Stepper(system, FixedBoundaries(section, forcing), method)
