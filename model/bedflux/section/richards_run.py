"""A variably saturated run of a scenario: steady or transient, packaged as the result Dataset.

The Dataset has every variable of a linear run (heads, Darcy fluxes with the relative
conductivity, bed flux, exchange, budget) plus ``pressure_head``, ``water_content``,
``saturation``, ``water_table``, ``ponding``, the storage split into its saturated (elastic) and
unsaturated (draining pores) parts, and per accepted step its end, length, iterations and budget
closure. In transient runs the budget lines are means over the output interval (over all the
adaptive steps in it); ``exchange`` and ``bed_flux`` are values at the output instant.
"""
from __future__ import annotations

import warnings
from typing import Callable

import numpy as np
import xarray as xr

from bedflux.section.fluxes import BUDGET_LINES, Fluxes, derive
from bedflux.section.results import add_variables, build_dataset
from bedflux.section.richards import Evaluation, RichardsSystem, StepForcing
from bedflux.section.richards_newton import NEWTON, JacobianSolver
from bedflux.section.richards_steps import (RESTART_STEP, Budget, SectionBoundaries, Stepper, flooding_times,
                                            forcing_breakpoints, run_steps, soil_water, step_budget)
from bedflux.section.discretisation import Section
from bedflux.section.steady import solve_steady
from bedflux.section.transient import output_times


def run_variably_saturated(section: Section, method: str = NEWTON, solver: str = "auto",
                           progress: Callable[[float], None] | None = None,
                           on_state: Callable | None = None) -> xr.Dataset:
    """Run a scenario whose zones carry ``retention`` (see :mod:`bedflux.section.richards_steps`).

    Parameters
    ----------
    section
        The discretised scenario.
    method
        ``"newton"`` (default) or ``"picard"`` (modified Picard).
    solver
        Jacobian solver: ``"auto"``, ``"direct"`` or ``"amg-gmres"``.
    progress
        Called with the fraction of a transient run done.
    on_state
        Called with ``(t0, t1, view, terms, u, water_content)`` of the start (``t0 = t1 = 0``) and
        of every accepted step: the flow view (faces times their relative conductivity), its
        terms, the relative heads and the water content at ``t1`` (heat transport uses it).
    """
    sc = section.scenario
    system = RichardsSystem(section, soil_water(sc, section))
    boundaries = SectionBoundaries(section)
    stepper = Stepper(system, boundaries, method, JacobianSolver(section.n, solver))
    notes = _notes(sc)
    attrs = {"variably_saturated": 1, "nonlinear_method": method, "solver": stepper.solver.method,
             "cells": section.n}
    if notes:
        attrs["notes"] = " ".join(notes)
    ev, forcing, state = _start(section, system, stepper, boundaries)
    if on_state is not None:
        on_state(0.0, 0.0, *system.flow_view(ev, forcing), system.head_u(ev.psi), ev.props.theta)
    if not sc.transient:
        budget = step_budget(system, ev, forcing, None, BUDGET_LINES)
        fl, extra = _state(system, ev, forcing, 0.0, budget)
        attrs.update({"run": "steady", "iterations": stepper.iterations})
        ds = build_dataset(section, [fl], [section.stage(0.0)], None, attrs)
        add_variables(ds, {k: (dims, v) for k, (dims, v) in extra.items()})
        return ds
    return _transient(section, system, stepper, ev, forcing, state, attrs, progress, on_state)


def _start(section: Section, system: RichardsSystem, stepper: Stepper, boundaries: SectionBoundaries):
    """The state at t = 0: the steady state of the t = 0 forcing (from the linear model's
    solution), or hydrostatic at ``[initial] head``; its evaluation, forcing and active set."""
    sc = section.scenario
    if not sc.transient or sc.initial_head is None:
        linear = solve_steady(section, 0.0, method="direct" if section.n <= 100_000 else "auto")
        linear.factor = None
        out, forcing, state = stepper.solve_steady(system.psi_from_u(linear.u), 0.0, linear.state)
        return out.evaluation, forcing, state
    psi = sc.initial_head - section.h_ref - system.zr
    state = boundaries.initial_state()
    forcing = boundaries.forcing(0.0, 0.0, state, steady=False)
    state = boundaries.update(system.evaluate(psi, forcing, None), forcing, 0.0, state)
    forcing = boundaries.forcing(0.0, 0.0, state, steady=False)
    return system.evaluate(psi, forcing, None), forcing, state


def states_at(section: Section, times: np.ndarray, method: str = NEWTON
              ) -> list[tuple[np.ndarray, list, Section]]:
    """Relative heads, Kr-scaled terms and the Kr-scaled section view (for
    :func:`bedflux.forward.observe.predict`) at each of ``times`` (0 for a steady run); the steps land on
    them. Used by calibration and planning."""
    system = RichardsSystem(section, soil_water(section.scenario, section))
    boundaries = SectionBoundaries(section)
    stepper = Stepper(system, boundaries, method, JacobianSolver(section.n))
    ev, forcing, state = _start(section, system, stepper, boundaries)
    wanted = np.unique(np.asarray(times, dtype=float))
    found: dict[float, tuple] = {}

    def keep(ev, forcing, t):
        view, terms = system.flow_view(ev, forcing)
        found[t] = (system.head_u(ev.psi), terms, view)

    keep(ev, forcing, 0.0)
    later = wanted[wanted > 0.0]
    if later.size:
        stops, flooding = _stops(section, later)

        def on_stop(out, forcing, t):
            if np.min(np.abs(later - t)) <= 1e-9 * max(t, 1.0):
                keep(out.evaluation, forcing, float(later[np.argmin(np.abs(later - t))]))

        run_steps(stepper, ev.psi, state, stops, section.scenario.time.step, lambda *_: 0.0, on_stop,
                  restarts=flooding)
    return [found[float(t)] for t in wanted]


def _stops(section: Section, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Where the steps must land after t = 0 (the given times, the forcing's breakpoints and the
    instants when a column floods or falls dry) and the instants when a column floods, after
    which steps restart short."""
    end = section.scenario.time.end
    flooding = flooding_times(section, end)
    wetting = flooding_times(section, end, drying=False)
    later = np.asarray(times, dtype=float)
    later = later[later > 0.0]
    # a column flooding just before an output floods within the output's step instead: a step of
    # a few seconds would report the start of its infiltration (t^-1/2) as the output's exchange
    nxt = np.searchsorted(later, flooding)
    gap = np.where(nxt < later.size, later[np.minimum(nxt, later.size - 1)] - flooding, np.inf)
    landing = flooding[gap >= RESTART_STEP]
    return (np.union1d(np.union1d(later, forcing_breakpoints(section.scenario, end)), landing),
            np.intersect1d(landing, wetting))


def _transient(section: Section, system: RichardsSystem, stepper: Stepper, ev: Evaluation,
               forcing: StepForcing, state, attrs: dict, progress, on_state=None) -> xr.Dataset:
    ts = section.scenario.time
    times = output_times(ts.end, ts.output_every)
    stops, flooding = _stops(section, times)
    # at t = 0 storage takes up whatever the boundaries bring in (zero for a steady start)
    b0 = step_budget(system, ev, forcing, None, BUDGET_LINES)
    net = sum(b0.inflow.values()) - sum(b0.outflow.values())
    b0.inflow["storage"], b0.outflow["storage"] = max(-net, 0.0), max(net, 0.0)
    first = _state(system, ev, forcing, 0.0, b0)
    states, extras = [first[0]], [first[1]]
    stages, done = [section.stage(0.0)], [0.0]
    acc = {"weight": 0.0, "in": dict.fromkeys(BUDGET_LINES, 0.0), "out": dict.fromkeys(BUDGET_LINES, 0.0),
           "sat": 0.0, "unsat": 0.0}

    def on_step(out, forcing, storage, t0, t1) -> float:
        b = step_budget(system, out.evaluation, forcing, storage, BUDGET_LINES)
        w = t1 - t0
        acc["weight"] += w
        for k in BUDGET_LINES:
            acc["in"][k] += w * b.inflow[k]
            acc["out"][k] += w * b.outflow[k]
        acc["sat"] += w * b.storage_saturated
        acc["unsat"] += w * b.storage_unsaturated
        if on_state is not None:
            ev1 = out.evaluation
            on_state(t0, t1, *system.flow_view(ev1, forcing), system.head_u(ev1.psi), ev1.props.theta)
        return b.closure

    def on_stop(out, forcing, t) -> None:
        if np.min(np.abs(times - t)) > 1e-9 * max(t, 1.0):
            return
        w = acc["weight"]
        mean = Budget({k: v / w for k, v in acc["in"].items()}, {k: v / w for k, v in acc["out"].items()},
                      acc["sat"] / w, acc["unsat"] / w)
        fl, extra = _state(system, out.evaluation, forcing, t, mean)
        states.append(fl)
        extras.append(extra)
        stages.append(section.stage(t))
        done.append(t)
        acc.update({"weight": 0.0, "in": dict.fromkeys(BUDGET_LINES, 0.0),
                    "out": dict.fromkeys(BUDGET_LINES, 0.0), "sat": 0.0, "unsat": 0.0})

    partial = ""
    records = []
    try:
        records = run_steps(stepper, ev.psi, state, stops, ts.step, on_step, on_stop, progress, restarts=flooding)
    except KeyboardInterrupt:
        partial = f"interrupted; outputs up to t = {done[-1]:g} s of {ts.end:g} s"
    attrs.update({"run": "transient", "scheme": "backward-euler", "steps": len(records),
                  "iterations": stepper.iterations, "failed_steps": stepper.failures, "rejected_steps": stepper.rejected,
                  "factorizations": stepper.solver.factorizations, "linear_solves": stepper.solver.solves,
                  "krylov_iterations": stepper.solver.krylov_iterations})
    if partial:
        attrs["partial"] = partial
    ds = build_dataset(section, states, stages, done, attrs)
    add_variables(ds, {k: (("time",) + extras[0][k][0], np.stack([e[k][1] for e in extras]))
                       for k in extras[0]})
    add_variables(ds, {
        "step_end": (("step",), np.array([r.t1 for r in records])),
        "step_length": (("step",), np.array([r.dt for r in records])),
        "step_iterations": (("step",), np.array([r.iterations for r in records], dtype=np.int32)),
        "step_closure": (("step",), np.array([r.closure for r in records])),
    })
    return ds


def _state(system: RichardsSystem, ev: Evaluation, forcing: StepForcing, t: float,
           budget: Budget) -> tuple[Fluxes, dict]:
    """Fluxes of a state (with its budget) and the variably saturated fields."""
    section = system.section
    g = section.grid
    view, terms = system.flow_view(ev, forcing)
    fl = derive(view, system.head_u(ev.psi), terms, None, wet=section.submerged(t))
    fl.inflow, fl.outflow = budget.inflow, budget.outflow

    def grid(values):
        a = np.full((g.nz, g.nx), np.nan)
        a[g.active] = values
        return a

    psi = grid(ev.psi)
    ponding = np.zeros(g.nx)
    recharge = max(section.scenario.recharge, 0.0)
    for term in terms:
        if term.kind == "seepage_face":
            ponding[term.column_or_row] = recharge - term.inflow(system.head_u(ev.psi)) / g.dx[term.column_or_row]
    extra = {
        "pressure_head": (("z", "x"), psi),
        "water_content": (("z", "x"), grid(ev.props.theta)),
        "saturation": (("z", "x"), grid(ev.props.theta / system.soil.theta_s)),
        "water_table": (("x",), water_table(psi, g.z_centre, g.ground, g.top_row)),
        "ponding": (("x",), ponding),
        "storage_saturated": ((), np.float64(budget.storage_saturated)),
        "storage_unsaturated": ((), np.float64(budget.storage_unsaturated)),
    }
    return fl, extra


def water_table(psi: np.ndarray, zc: np.ndarray, ground: np.ndarray, top_row: np.ndarray) -> np.ndarray:
    """Per column, the elevation of the uppermost zero-pressure level: interpolated linearly
    between the centres of the first saturated cell from the top and the unsaturated cell above
    it; where the top cell is saturated, the level its pressure implies (hydrostatic), at most
    the ground; NaN where no cell of the column is saturated."""
    nx = psi.shape[1]
    cols = np.arange(nx)
    sat = np.nan_to_num(psi, nan=-1.0) >= 0.0
    has = sat.any(axis=0)
    k = np.argmax(sat, axis=0)
    at_top = k <= top_row
    above = np.maximum(k - 1, 0)
    p_k, p_a = psi[k, cols], psi[above, cols]
    z_k, z_a = zc[k, cols], zc[above, cols]
    with np.errstate(invalid="ignore", divide="ignore"):
        inside = z_k + (z_a - z_k) * p_k / (p_k - p_a)
    level = np.where(at_top, np.minimum(z_k + p_k, ground), inside)
    return np.where(has, level, np.nan)


def _notes(scenario) -> list[str]:
    """Messages about inputs a variably saturated run does not use."""
    notes = []
    given = [z.get("name") for z in scenario.raw.get("zone", []) if isinstance(z, dict) and "specific_yield" in z]
    if given:
        notes.append(f"specific yield (specific_yield) of zone(s) {', '.join(map(str, given))} is not used in a variably "
                     "saturated run: the retention curve gives the water released as the water table falls.")
    if scenario.riparian:
        notes.append("riparian extinction_depth is not used in a variably saturated run: uptake follows the "
                     "pressure head in the root zone (uptake_heads).")
    if scenario.time is not None and scenario.time.scheme != "backward-euler":
        notes.append(f"[time] scheme = \"{scenario.time.scheme}\" is not used: a variably saturated run steps "
                     "with backward Euler (the mixed form, adaptive steps).")
    for n in notes:
        warnings.warn(n, stacklevel=3)
    return notes
