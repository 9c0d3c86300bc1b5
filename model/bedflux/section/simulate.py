"""The forward model's one entry point: scenario in, result Dataset out."""
from __future__ import annotations

from typing import Callable, Mapping

import numpy as np
import xarray as xr

from bedflux.errors import SolverError

from bedflux.section.fluxes import CLOSURE_LIMIT, check_closure, derive
from bedflux.section.results import build_dataset
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import Section, discretise
from bedflux.section.steady import solve_steady


def simulate(scenario: Scenario, fields: Mapping[str, np.ndarray] | None = None, method: str = "auto",
             progress: Callable[[float], None] | None = None) -> xr.Dataset:
    """Run the scenario and return the result Dataset (see :mod:`bedflux.section.results`).

    A scenario whose zones carry ``retention`` runs variably saturated (Richards' equation, see
    :mod:`bedflux.section.richards_run`); otherwise the linear model runs. A scenario with
    ``[heat]`` also carries heat (:mod:`bedflux.section.heat_run`).

    Parameters
    ----------
    scenario
        A validated scenario (:func:`bedflux.load`).
    fields
        Optional ``(nz, nx)`` property arrays (``kh``, ``kv``, ``specific_storage``, ``specific_yield``,
        ``porosity``) overriding the zones.
    method
        Linear solver: ``"auto"`` (by size), ``"direct"`` or ``"amg-cg"`` (AMG-preconditioned
        GMRES for the Jacobians of a variably saturated run).
    progress
        Called with the fraction done during transient runs.

    Raises
    ------
    SolverError
        When a solve fails, or its water budget does not close (a transient run's error then
        carries the outputs before the failing step in its ``partial`` attribute).
    """
    section = discretise(scenario, fields)
    if scenario.heat is not None:
        from bedflux.section.heat_run import simulate_with_heat

        return simulate_with_heat(section, method, progress)
    if scenario.variably_saturated:
        from bedflux.section.richards_run import run_variably_saturated

        solver = {"direct": "direct", "amg-cg": "amg-gmres"}.get(method, "auto")
        return run_variably_saturated(section, solver=solver, progress=progress)
    if scenario.transient:
        return transient_dataset(section, progress)
    return steady_dataset(section, method)


def transient_dataset(section: Section, progress: Callable[[float], None] | None = None) -> xr.Dataset:
    """Run a discretised transient section and package it (a stopped run's error carries the
    Dataset of the outputs before the failing step in its ``partial`` attribute)."""
    from bedflux.section.transient import run_transient

    def package(run) -> xr.Dataset:
        return build_dataset(section, run.states, run.stages, run.times, run.attrs)

    try:
        run = run_transient(section, progress=progress)
    except SolverError as err:
        if err.partial is None:
            raise
        raise SolverError(str(err), partial=package(err.partial)) from err
    return package(run)


def steady_dataset(section: Section, method: str = "auto") -> xr.Dataset:
    """Solve the steady state of a discretised section and package it."""
    sol = solve_steady(section, 0.0, method=method)
    sol.factor = None  # free the factorization or multigrid hierarchy before the derived fields
    fl = derive(section, sol.u, sol.terms, wet=section.submerged(0.0))
    check_closure(fl.inflow, fl.outflow, fl.gross, CLOSURE_LIMIT[sol.method],
                  f"in the steady solve ({sol.method})")
    attrs = {"run": "steady", "solver": sol.method, "active_set_passes": sol.passes,
             "cells": section.n}
    return build_dataset(section, [fl], [section.stage(0.0)], None, attrs)
