"""The forward model's one entry point: scenario in, result Dataset out."""
from __future__ import annotations

from typing import Callable, Mapping

import numpy as np
import xarray as xr

from .fluxes import CLOSURE_LIMIT, check_closure, derive
from .results import build_dataset
from .scenario import Scenario
from .solve.section import Section, discretise
from .solve.steady import solve_steady


def simulate(scenario: Scenario, fields: Mapping[str, np.ndarray] | None = None, method: str = "auto",
             progress: Callable[[float], None] | None = None) -> xr.Dataset:
    """Run the scenario and return the result Dataset (see :mod:`bedflux.results`).

    Parameters
    ----------
    scenario
        A validated scenario (:func:`bedflux.load`).
    fields
        Optional ``(nz, nx)`` property arrays (``kh``, ``kv``, ``ss``, ``sy``) overriding the zones.
    method
        Linear solver: ``"auto"`` (by size), ``"direct"`` or ``"amg-cg"``.
    progress
        Called with the fraction done during transient runs.

    Raises
    ------
    SolverError
        When a solve fails, or its water budget does not close (a transient run's error then
        carries the outputs before the failing step in its ``partial`` attribute).
    """
    section = discretise(scenario, fields)
    if scenario.transient:
        from .solve.transient import run_transient

        return run_transient(section, progress=progress)
    return steady_dataset(section, method)


def steady_dataset(section: Section, method: str = "auto") -> xr.Dataset:
    """Solve the steady state of a discretised section and package it."""
    sol = solve_steady(section, 0.0, method=method)
    sol.factor = None  # free the factorization or multigrid hierarchy before the derived fields
    fl = derive(section, sol.u, sol.terms, wet=section.submerged(0.0))
    check_closure(fl.budget_in, fl.budget_out, fl.gross, CLOSURE_LIMIT[sol.method],
                  f"in the steady solve ({sol.method})")
    attrs = {"run": "steady", "solver": sol.method, "active_set_passes": sol.passes,
             "cells": section.n}
    return build_dataset(section, [fl], [section.stage(0.0)], None, attrs)
