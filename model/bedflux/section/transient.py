"""Transient runs: theta time stepping with storage, reusing factorizations.

With storage coefficients ``S`` (specific storage times cell area, plus specific yield on the
top cells of exposed columns: the water-table condition linearised about the ground surface),
each step solves

    backward Euler:  (S/dt + A1) u1 = S/dt u0 + b1
    Crank-Nicolson:  (S/dt + A1/2) u1 = (S/dt - A0/2) u0 + (b0 + b1)/2

where ``A = L + diag(conductance)`` and ``b = r`` come from the boundary terms. The matrix depends only on
the step length, the scheme's theta (Crank-Nicolson runs also take backward-Euler half steps) and
on which faces are submerged, seeping or evapotranspiring on which branch; factorizations are
cached by exactly that, so a constant step reuses one factor and a flood that floods and drains
the floodplain once refactors only when the set of faces changes.

Steps are shortened where needed so that outputs fall exactly on the requested times.

The water budget of every step is checked: a closure above :data:`bedflux.section.fluxes.CLOSURE_LIMIT`
stops the run with a :class:`SolverError` that names the step. A step that fails (that, or face
states that do not settle) keeps the outputs so far in the error's ``partial`` attribute, marked
partial as after an interrupt.
"""
from __future__ import annotations

from collections import OrderedDict
from dataclasses import dataclass
from typing import Callable

import numpy as np

from bedflux.errors import SolverError
from bedflux.section.flood import peak_attrs
from bedflux.section.fluxes import (BUDGET_LINES, CLOSURE_LIMIT, Fluxes, check_closure, derive, gross_flow,
                                    inflow_outflow, term_budget)
from bedflux.section.linear import Factor, factorize
from bedflux.section.discretisation import ActiveSet, Section, Term
from bedflux.section.steady import solve_steady

#: Factorizations kept (each keyed by step length and face states).
CACHE_SIZE = 8
#: Crank-Nicolson runs start with this many steps done as two backward-Euler half steps each.
RANNACHER_STEPS = 2
#: Passes allowed per step for seepage faces and ET branches to settle.
STEP_PASSES = 8


@dataclass
class TransientRun:
    """What a transient run produced: per output time the derived fluxes and the stage, the output
    times (s) and the run's attributes (scheme, steps, factorizations, ``partial`` ...)."""

    states: list[Fluxes]
    stages: list[float]
    times: list[float]
    attrs: dict


@dataclass
class StepInfo:
    """Everything one step used: for sensitivities and tests (see :func:`run_transient`)."""

    t0: float
    t1: float
    dt: float
    theta: float
    u0: np.ndarray
    u1: np.ndarray
    u0_wt: np.ndarray
    terms0: list[Term]
    terms1: list[Term]
    factor: Factor
    elastic: np.ndarray
    water_table: np.ndarray
    fill: np.ndarray
    filled: np.ndarray
    state: ActiveSet
    et_factor: float


class FactorCache:
    """The last few factorizations keyed by (dt, theta, face states); counts builds and their cost."""

    def __init__(self, section: Section, size: int = CACHE_SIZE):
        self.section = section
        self.size = size
        self._store: OrderedDict = OrderedDict()
        self.builds = 0
        self.build_seconds = 0.0

    def get(self, key: tuple, terms: list[Term], extra_diag: np.ndarray, theta: float) -> Factor:
        if key in self._store:
            self._store.move_to_end(key)
            return self._store[key]
        import time

        t0 = time.perf_counter()
        scaled = [Term(t.kind, t.face, t.cells, t.column_or_row, theta * t.conductance, t.r) for t in terms]
        A = self.section.matrix(scaled, extra_diag)
        if theta != 1.0:
            A = A - (1.0 - theta) * self.section.L  # theta * L + diag(theta conductance + S/dt)
        f = factorize(A, "direct")
        self.build_seconds += time.perf_counter() - t0
        self.builds += 1
        self._store[key] = f
        if len(self._store) > self.size:
            self._store.popitem(last=False)
        return f


def output_times(end: float, every: float) -> np.ndarray:
    """0, every, 2 every, ... and ``end`` (always included)."""
    n = int(np.floor(end / every + 1e-9))
    t = every * np.arange(n + 1)
    if end - t[-1] > 1e-9 * end:
        t = np.append(t, end)
    else:
        t[-1] = end
    return t


def _state_key(wet: np.ndarray, state: ActiveSet, dt: float, theta: float) -> tuple:
    return (round(dt, 9), theta, wet.tobytes(), state.seepage.tobytes(), state.et_mode.tobytes())


def _apply(terms: list[Term], u: np.ndarray, section: Section) -> np.ndarray:
    """``A u = L u + sum conductance u`` for the given terms."""
    out = section.L @ u
    for t in terms:
        out += np.bincount(t.cells, weights=t.conductance * u[t.cells], minlength=section.n)
    return out


def run_transient(section: Section, progress: Callable[[float], None] | None = None,
                  on_start: Callable[[np.ndarray, list[Term], object], None] | None = None,
                  on_step: Callable[[StepInfo], None] | None = None) -> "TransientRun":
    """Run a transient scenario: the fluxes and stages at every output time (the Dataset is built
    from them by :func:`bedflux.section.simulate.transient_dataset`).

    Parameters
    ----------
    section
        The discretised transient scenario.
    progress
        Called with the fraction of the run done.
    on_start
        Called with ``(u, terms, steady_solution)`` of the initial state (the steady solution is
        None when ``[initial] head`` is given).
    on_step
        Called with the :class:`StepInfo` of every step (sensitivities, timing).

    An interrupt (Ctrl-C) ends the run cleanly: the run holds the outputs so far and its
    ``partial`` attribute says where it stopped.

    Raises
    ------
    SolverError
        When a step fails: its water budget does not close (see :data:`bedflux.section.fluxes.CLOSURE_LIMIT`)
        or its face states do not settle; the error's ``partial`` attribute holds the
        :class:`TransientRun` of the outputs before that step, marked partial.
    """
    sc = section.scenario
    ts = sc.time
    theta = 0.5 if ts.scheme == "crank-nicolson" else 1.0
    times = output_times(ts.end, ts.output_every)
    init = None
    if sc.initial_head is None:
        init = solve_steady(section, 0.0, method="direct")
        u, state = init.u, init.state
    else:
        u = np.full(section.n, sc.initial_head - section.h_ref)
        state = section.initial_active_set()
        state = section.update_active_set(u, section.terms(0.0, state, steady=False, u_lag=u), 0.0, state)
    cache = FactorCache(section)
    t = 0.0
    terms0 = section.terms(t, state, steady=False, u_lag=u)
    if on_start is not None:
        on_start(u, terms0, init)
    # at t = 0 storage takes up whatever the boundaries bring in (zero for a steady start)
    release0 = _apply(terms0, u, section) - section.rhs(terms0)
    states: list[Fluxes] = [derive(section, u, terms0, release0, wet=section.submerged(0.0))]
    stages = [section.stage(0.0)]
    done_times = [0.0]
    partial = ""
    failure = None
    steps = 0
    backward_euler_starts_left = RANNACHER_STEPS if theta != 1.0 else 0
    last_key = None
    limit = CLOSURE_LIMIT["direct"]
    try:
        for t_out in times[1:]:
            while t < t_out - 1e-9 * max(t_out, 1.0):
                dt = min(ts.step, t_out - t)
                if t_out - (t + dt) < 1e-6 * ts.step:
                    dt = t_out - t
                if backward_euler_starts_left > 0:
                    # damp the undamped high modes of Crank-Nicolson after the start and after every
                    # change of the face states (Rannacher 1984): two backward-Euler half steps
                    substeps = [(dt / 2, 1.0), (dt / 2, 1.0)]
                    backward_euler_starts_left -= 1
                else:
                    substeps = [(dt, theta)]
                substep_results = []
                t_start = t
                for h, th in substeps:
                    info, storage_part, budget_part = _step(section, cache, u, t, h, th, state, terms0)
                    substep_results.append((h / dt, storage_part, budget_part))
                    u, state, terms0 = info.u1, info.state, info.terms1
                    t += h
                    if on_step is not None:
                        on_step(info)
                storage_in, budget = _combine(substep_results)
                steps += 1
                check_closure(*budget, limit, f"in step {steps} (t = {t_start:g} s to {t:g} s)")
                key = (section.wetted_fraction(t).tobytes(), state.seepage.tobytes(), state.et_mode.tobytes())
                if theta != 1.0 and last_key is not None and key != last_key:
                    backward_euler_starts_left = RANNACHER_STEPS
                last_key = key
                if progress is not None:
                    progress(t / ts.end)
            fl = derive(section, u, terms0, storage_in, wet=section.submerged(t))
            fl.inflow, fl.outflow, fl.gross = budget
            states.append(fl)
            stages.append(section.stage(t))
            done_times.append(t)
    except KeyboardInterrupt:
        partial = f"interrupted at t = {t:g} s; outputs up to t = {done_times[-1]:g} s of {ts.end:g} s"
    except SolverError as err:
        failure = err
        partial = f"stopped: {err}; outputs up to t = {done_times[-1]:g} s of {ts.end:g} s"
    attrs = {"run": "transient", "scheme": ts.scheme, "solver": "direct", "cells": section.n,
             "steps": steps, "factorizations": cache.builds,
             "factorization_seconds": round(cache.build_seconds, 4), **peak_attrs(sc)}
    if ts.origin is not None:
        attrs["start"] = str(np.datetime64(int(round(ts.origin)), "s"))
    if partial:
        attrs["partial"] = partial
    run = TransientRun(states, stages, done_times, attrs)
    if failure is not None:
        raise SolverError(str(failure), partial=run) from failure
    return run


def _combine(substep_results: list) -> tuple[np.ndarray, tuple[dict, dict, float]]:
    """Time-weighted mean of the storage release, budget and gross flow of the substeps of one
    step (each result is ``(share of the step, storage release, (inflow, outflow, gross))``)."""
    if len(substep_results) == 1:
        return substep_results[0][1], substep_results[0][2]
    storage = sum(w * release for w, release, _ in substep_results)
    inflow = {k: sum(w * b[0][k] for w, _, b in substep_results) for k in BUDGET_LINES}
    outflow = {k: sum(w * b[1][k] for w, _, b in substep_results) for k in BUDGET_LINES}
    return storage, (inflow, outflow, sum(w * b[2] for w, _, b in substep_results))


def _step(section: Section, cache: FactorCache, u0: np.ndarray, t0: float, dt: float, theta: float,
          state: ActiveSet, terms0: list[Term]):
    """One step from ``t0`` to ``t0 + dt``; returns its :class:`StepInfo`, the storage release
    per cell and the step's water budget with its gross flow.

    ET with a daily cycle uses the cycle's exact mean over the step at the heads of the step's
    start, in the terms of both ends, so that the scheme's weights add up to that mean.

    Water-table storage acts only below the ground: a column whose top face is a seepage face or
    is flooded at the end of the step has its water table at the ground, so its pore space above
    the start head fills by ``Sy dx max(ground - h0, 0)`` (a known amount, ``Sy`` the specific
    yield) and it has no specific-yield term in the matrix; other exposed columns store
    ``Sy dx (h1 - min(h0, ground))``.
    """
    t1 = t0 + dt
    g = section.grid
    wet = section.submerged(t1)
    was_wet = section.submerged(t0)
    S_el = section.elastic_storage()
    ground_u = section.ground_u
    # the water table at the start: the top cell's head, but never above the ground, and at the
    # ground under a column that was flooded (its pores are full whatever the head at the centre)
    u0_wt = np.minimum(u0, ground_u)
    u0_wt[section.top_cells[was_wet]] = ground_u[section.top_cells[was_wet]]
    window = (t0, t1)
    et_factor = section.et_factor(t0, t1) if section.et_cycle.any() else 1.0
    if section.et_cycle.any():
        terms0 = section.terms(t0, state, steady=False, u_lag=u0, et_window=window)
    explicit0 = np.zeros(section.n)
    if theta != 1.0:
        explicit0 = (1.0 - theta) * (_apply(terms0, u0, section) - section.rhs(terms0))
    for _ in range(STEP_PASSES):
        filled = (wet & ~was_wet) | (~wet & state.seepage)
        S_wt = section.water_table_storage(wet | state.seepage)
        fill = np.zeros(section.n)
        if filled.any():
            top = section.top_cells[filled]
            fill[top] = (section.top_specific_yield[filled] * g.dx[filled]
                         * np.maximum(ground_u[top] - u0[top], 0.0) / dt)
        S = S_el + S_wt
        base = S_el / dt * u0 + S_wt / dt * u0_wt - fill - explicit0
        terms1 = section.terms(t1, state, steady=False, u_lag=u0, et_window=window)
        factor = cache.get(_state_key(section.wetted_fraction(t1), state, dt, theta), terms1, S / dt, theta)
        u1 = factor.solve(base + theta * section.rhs(terms1))
        new = section.update_active_set(u1, terms1, t1, state)
        if new.same(state):
            break
        state = new
    else:
        raise SolverError(f"seepage faces / evapotranspiration branches did not settle in the step to "
                          f"t = {t1:g} s; shorten [time] step")
    storage_in = -(S_el * (u1 - u0) + S_wt * (u1 - u0_wt)) / dt - fill
    inflow, outflow = term_budget(terms1, u1, theta)
    gross = theta * gross_flow(terms1, u1)
    if theta != 1.0:
        term_budget(terms0, u0, 1.0 - theta, into=(inflow, outflow))
        gross += (1.0 - theta) * gross_flow(terms0, u0)
    inflow["storage"], outflow["storage"] = inflow_outflow(storage_in)
    gross += float((S_el * (np.abs(u1) + np.abs(u0)) + S_wt * (np.abs(u1) + np.abs(u0_wt))).sum() / dt
                   + np.abs(fill).sum())
    info = StepInfo(t0, t1, dt, theta, u0, u1, u0_wt, terms0, terms1, factor, S_el, S_wt, fill,
                    filled, state, et_factor)
    return info, storage_in, (inflow, outflow, gross)
