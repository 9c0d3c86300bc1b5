"""Runs with ``[heat]``: water flow, then heat carried by it, as one result Dataset.

- A steady run solves the flow, then the steady temperature with the stream temperature's mean
  (a wave's ``mean``, a constant, a series' value at t = 0).
- A transient run whose forcing does not change in time (constant stage and side heads, no daily
  cycle, steady start) solves the flow once; heat then steps with one factorization of its matrix
  per step length, reused (Crank-Nicolson runs start with two backward-Euler half steps,
  Rannacher 1984).
- A transient run with changing flow steps heat after every flow step, backward Euler, with the
  step's mean water flows (the flow scheme's weights of both ends), so that water and heat
  budgets refer to the same flows; the heat matrix is factorized every step.

The energy budget of every step is checked: a closure (in - out over the gross of the parts)
above :data:`HEAT_CLOSURE_LIMIT` stops the run with a :class:`SolverError`.
"""
from __future__ import annotations

from typing import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
import xarray as xr

from bedflux.errors import SolverError
from bedflux.scenario.forcing import Constant, Signal, Wave
from bedflux.scenario.heat import WATER_HEAT_CAPACITY
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import Section, Term
from bedflux.section.flood import peak_attrs
from bedflux.section.fluxes import CLOSURE_LIMIT, check_closure, derive
from bedflux.section.heat import (HEAT_LINES, PECLET_ADVICE, HeatGeometry, HeatOperator, ThermalCells,
                                  heat_operator, thermal_cells)
from bedflux.section.results import add_variables, build_dataset
from bedflux.section.steady import solve_steady
from bedflux.section.transient import RANNACHER_STEPS, StepInfo, output_times, run_transient

#: Largest energy budget closure (imbalance over the gross of its parts) a heat step accepts.
HEAT_CLOSURE_LIMIT = 1e-8


def flow_is_steady(scenario: Scenario) -> bool:
    """True when the flow of a transient scenario never changes: constant stage and side signals,
    no daily evapotranspiration cycle, and a steady start."""
    if scenario.initial_head is not None or any(r.daily_cycle for r in scenario.riparian):
        return False
    signals = [] if scenario.stream is None else [scenario.stream.stage]
    signals += [b.signal for b in (scenario.left, scenario.right, scenario.bottom) if b.signal is not None]
    return all(isinstance(s, Constant) for s in signals)


def steady_value(signal: Signal) -> float:
    """The value a steady run takes from a temperature signal: a wave's mean, else its value at 0."""
    return float(signal.mean) if isinstance(signal, Wave) else float(signal(0.0))


class HeatModel:
    """Temperatures relative to the groundwater temperature, their sources and their steps."""

    def __init__(self, section: Section, cells: ThermalCells | None = None):
        self.section = section
        self.spec = section.scenario.heat
        self.cells = thermal_cells(section) if cells is None else cells
        self.geometry = HeatGeometry(section, self.cells)
        self.t_ref = self.spec.groundwater
        self.storage = self.cells.capacity * section.cell_volume  # J/K per metre of width
        #: the grains' share of the bulk heat capacity (``1 - porosity``; ``1 - theta_s`` when
        #: the water content sets the water's share, :meth:`with_water_content`)
        self.grain_share = 1.0 - self.cells.porosity
        self._grains: np.ndarray | None = None
        self.factorizations = 0
        self.peclet_max = 0.0
        self.peclet_at = (float("nan"), float("nan"))

    def with_water_content(self, theta_s: np.ndarray) -> None:
        """Take the bulk heat capacity from the water content from now on (a variably saturated
        run): ``theta_w rho_w c_w + (1 - theta_s) c_s``, air's capacity neglected; set it for a
        state with :meth:`set_water`."""
        cells = self.cells
        solid = (cells.capacity - cells.porosity * WATER_HEAT_CAPACITY) / (1.0 - cells.porosity)
        self.grain_share = 1.0 - theta_s
        self._grains = self.grain_share * solid

    def set_water(self, water: np.ndarray) -> None:
        """The heat storage (J/K per metre) of the cells with water content ``water``."""
        self.storage = (water * WATER_HEAT_CAPACITY + self._grains) * self.section.cell_volume

    def sources(self, t: float, steady: bool = False) -> dict[str, float]:
        """Source temperatures relative to the groundwater temperature at time ``t``."""
        value = steady_value if steady else (lambda s: float(s(t)))
        out = {"groundwater": 0.0, "stream": 0.0, "ground": 0.0}
        if self.spec.stream is not None:
            out["stream"] = value(self.spec.stream) - self.t_ref
        if self.spec.ground is not None:
            out["ground"] = value(self.spec.ground) - self.t_ref
        return out

    def operator(self, flows: list[tuple[float, np.ndarray, list[Term]]], wet_terms: list[Term],
                 t: float) -> HeatOperator:
        op = heat_operator(self.geometry, flows, wet_terms, t, self.spec.ground is not None)
        if op.peclet_max > self.peclet_max:
            self.peclet_max, self.peclet_at = op.peclet_max, op.peclet_at
        return op

    def factor(self, M: sp.spmatrix):
        self.factorizations += 1
        try:
            # the matrix is structurally symmetric and diagonally dominant (an M-matrix): the
            # symmetric ordering of the flow solves, no pivoting
            return spla.splu(sp.csc_matrix(M), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                             options={"SymmetricMode": True})
        except RuntimeError as err:
            raise SolverError(f"the heat matrix is singular ({err})") from None

    def steady(self, op: HeatOperator, sources: dict[str, float]) -> tuple[np.ndarray, dict, float]:
        """The steady temperature for ``op`` and its energy budget (no heat storage)."""
        theta = self.factor(op.A).solve(op.rhs(sources))
        budget, gross = op.budget(theta, sources)
        check_heat(budget, gross, "in the steady heat solve")
        return theta, budget, gross

    def initial(self, op: HeatOperator) -> tuple[np.ndarray, dict, float]:
        """The start: ``[heat] initial`` uniform, or the steady temperature of the t = 0 forcing."""
        if self.spec.initial is None:
            return self.steady(op, self.sources(0.0))
        theta = np.full(self.section.n, self.spec.initial - self.t_ref)
        budget, gross = op.budget(theta, self.sources(0.0))
        return theta, budget, gross

    def step(self, op: HeatOperator, factor, theta0: np.ndarray, t0: float, t1: float, weight: float
             ) -> tuple[np.ndarray, dict, float]:
        """One step of the theta scheme (``weight`` 1: backward Euler, 0.5: Crank-Nicolson) with the
        factor of ``storage/dt + weight A``; returns the temperatures and the step's energy budget."""
        dt = t1 - t0
        s1 = self.sources(t1)
        rhs = self.storage / dt * theta0 + weight * op.rhs(s1)
        if weight != 1.0:
            s0 = self.sources(t0)
            rhs += (1.0 - weight) * (op.rhs(s0) - op.A @ theta0)
        theta1 = factor.solve(rhs)
        budget, gross = op.budget(theta1, s1, weight)
        if weight != 1.0:
            _, gross0 = op.budget(theta0, s0, 1.0 - weight, into=budget)
            gross += gross0
        release = -self.storage * (theta1 - theta0) / dt
        budget["heat_storage"] = [float(release[release > 0].sum()), -float(release[release < 0].sum())]
        gross += float(np.abs(self.storage * theta1).sum() + np.abs(self.storage * theta0).sum()) / dt
        check_heat(budget, gross, f"in the heat step to t = {t1:g} s")
        return theta1, budget, gross

    def step_matrix(self, op: HeatOperator, dt: float, weight: float) -> sp.csr_matrix:
        return (op.A * weight + sp.diags(self.storage / dt)).tocsr()


def check_heat(budget: dict, gross: float, where: str) -> None:
    """Raise :class:`SolverError` when an energy budget misses closure by more than the limit."""
    inflow = {k: v[0] for k, v in budget.items()}
    outflow = {k: v[1] for k, v in budget.items()}
    try:
        check_closure(inflow, outflow, gross, HEAT_CLOSURE_LIMIT, where)
    except SolverError as err:
        raise SolverError(str(err).replace("water budget", "energy budget").replace("m2/s", "W/m")
                          .replace("heads", "temperatures")) from None


def simulate_with_heat(section: Section, method: str = "auto",
                       progress: Callable[[float], None] | None = None) -> xr.Dataset:
    """Run a scenario with ``[heat]`` (linear zones) and return the result Dataset with
    ``temperature`` and the energy budget (see :mod:`bedflux.section.results`)."""
    sc = section.scenario
    model = HeatModel(section)
    if sc.variably_saturated:
        return _variably_saturated(section, model, method, progress)
    if not sc.transient:
        return _steady(section, model, method)
    if flow_is_steady(sc):
        return _steady_flow(section, model, progress)
    return _transient_flow(section, model, progress)


def _steady(section: Section, model: HeatModel, method: str) -> xr.Dataset:
    sol = solve_steady(section, 0.0, method=method)
    sol.factor = None
    fl = derive(section, sol.u, sol.terms, wet=section.submerged(0.0))
    check_closure(fl.inflow, fl.outflow, fl.gross, CLOSURE_LIMIT[sol.method], f"in the steady solve ({sol.method})")
    ds = build_dataset(section, [fl], [section.stage(0.0)], None,
                       {"run": "steady", "solver": sol.method, "active_set_passes": sol.passes, "cells": section.n})
    op = model.operator([(1.0, sol.u, sol.terms)], sol.terms, 0.0)
    theta, budget, gross = model.steady(op, model.sources(0.0, steady=True))
    return _with_heat(ds, model, [theta], [budget], [gross], steady=True, attrs={"heat_run": "steady"})


def step_plan(ts) -> tuple[list[tuple[float, float, float]], set[int]]:
    """The heat steps of a steady-flow run: ``(t0, t1, weight)`` of every (sub)step (Crank-Nicolson
    starts with two pairs of backward-Euler half steps) and the indices of the steps that end on an
    output time."""
    weight = 0.5 if ts.scheme == "crank-nicolson" else 1.0
    plan: list[tuple[float, float, float]] = []
    ends: set[int] = set()
    t, starts = 0.0, RANNACHER_STEPS if weight != 1.0 else 0
    for t_out in output_times(ts.end, ts.output_every)[1:]:
        while t < t_out - 1e-9 * max(t_out, 1.0):
            dt = min(ts.step, t_out - t)
            if t_out - (t + dt) < 1e-6 * ts.step:
                dt = t_out - t
            parts = [(dt / 2, 1.0)] * 2 if starts > 0 else [(dt, weight)]
            starts = max(starts - 1, 0)
            for h, w in parts:
                plan.append((t, t + h, w))
                t += h
        ends.add(len(plan) - 1)
    return plan, ends


class StepFactors:
    """Factorizations of ``storage/dt + w A`` for one operator, by step length and weight."""

    def __init__(self, model: HeatModel, op: HeatOperator):
        self.model, self.op, self._store = model, op, {}

    def __call__(self, dt: float, w: float):
        key = (round(dt, 9), w)
        if key not in self._store:
            self._store[key] = self.model.factor(self.model.step_matrix(self.op, dt, w))
        return self._store[key]


def _steady_flow(section: Section, model: HeatModel, progress) -> xr.Dataset:
    sc = section.scenario
    ts = sc.time
    sol = solve_steady(section, 0.0, method="direct")
    sol.factor = None
    fl = derive(section, sol.u, sol.terms, np.zeros(section.n), wet=section.submerged(0.0))
    op = model.operator([(1.0, sol.u, sol.terms)], sol.terms, 0.0)
    theta, budget, gross = model.initial(op)
    factor = StepFactors(model, op)
    plan, ends = step_plan(ts)
    thetas, budgets, grosses = [theta], [budget], [gross]
    partial, failure, t = "", None, 0.0
    try:
        for i, (t0, t1, w) in enumerate(plan):
            t = t0
            theta, budget, gross = model.step(op, factor(t1 - t0, w), theta, t0, t1, w)
            if i in ends:
                thetas.append(theta)
                budgets.append(budget)
                grosses.append(gross)
                if progress is not None:
                    progress(t1 / ts.end)
    except KeyboardInterrupt:
        partial = "interrupted at t = {t:g} s; outputs up to t = {last:g} s of {end:g} s"
    except SolverError as err:
        failure = err
        partial = f"stopped: {err}; outputs up to t = {{last:g}} s of {{end:g}} s"
    times = output_times(ts.end, ts.output_every)[: len(thetas)]
    n = len(times)
    steps = len(plan) - (RANNACHER_STEPS if ts.scheme == "crank-nicolson" else 0)  # half-step pairs are one
    attrs = {"run": "transient", "scheme": ts.scheme, "solver": "direct", "cells": section.n, "steps": steps,
             "factorizations": 1, "flow": "steady: one flow solve for every step", **peak_attrs(sc)}
    if ts.origin is not None:
        attrs["start"] = str(np.datetime64(int(round(ts.origin)), "s"))
    if partial:
        attrs["partial"] = partial.format(t=t, last=float(times[-1]), end=ts.end)
    ds = build_dataset(section, [fl] * n, [section.stage(0.0)] * n, list(times), attrs)
    ds = _with_heat(ds, model, thetas, budgets, grosses, steady=False,
                    attrs={"heat_run": "transient, steady flow", "heat_scheme": ts.scheme})
    if failure is not None:
        raise SolverError(str(failure), partial=ds) from failure
    return ds


def heat_along_flow(section: Section, model: HeatModel, on_heat: Callable, progress=None):
    """Run a transient flow and heat after every flow step (backward Euler with the step's mean
    water flows); ``on_heat(t0, t1, theta, budget, gross)`` is called for the start (``t0 = t1 = 0``)
    and after every heat step. Returns the flow's :class:`TransientRun` (raises like
    :func:`bedflux.section.transient.run_transient`)."""
    current: dict[str, np.ndarray] = {}

    def on_start(u, terms, _init) -> None:
        op = model.operator([(1.0, u, terms)], terms, 0.0)
        theta, budget, gross = model.initial(op)
        current["theta"] = theta
        on_heat(0.0, 0.0, theta, budget, gross)

    def on_step(info: StepInfo) -> None:
        flows = [(info.theta, info.u1, info.terms1)]
        if info.theta != 1.0:
            flows.append((1.0 - info.theta, info.u0, info.terms0))
        op = model.operator(flows, info.terms1, info.t1)
        factor = model.factor(model.step_matrix(op, info.dt, 1.0))
        theta, budget, gross = model.step(op, factor, current["theta"], info.t0, info.t1, 1.0)
        current["theta"] = theta
        on_heat(info.t0, info.t1, theta, budget, gross)

    return run_transient(section, progress=progress, on_start=on_start, on_step=on_step)


def _transient_flow(section: Section, model: HeatModel, progress) -> xr.Dataset:
    record: dict[float, tuple[np.ndarray, dict, float]] = {}

    def on_heat(_t0, t1, theta, budget, gross) -> None:
        record[round(t1, 6)] = (theta, budget, gross)

    def package(run) -> xr.Dataset:
        ds = build_dataset(section, run.states, run.stages, run.times, run.attrs)
        picked = [record[0.0]] + [record[round(t, 6)] for t in run.times[1:]]
        return _with_heat(ds, model, *zip(*picked), steady=False,
                          attrs={"heat_run": "transient flow, heat after every flow step",
                                 "heat_scheme": "backward-euler"})

    try:
        run = heat_along_flow(section, model, on_heat, progress)
    except SolverError as err:
        if err.partial is None:
            raise
        raise SolverError(str(err), partial=package(err.partial)) from err
    return package(run)


def _variably_saturated(section: Section, model: HeatModel, method: str, progress) -> xr.Dataset:
    """Heat after every accepted step of a variably saturated run: the flow view's faces (with
    their relative conductivity), its terms, and the bulk heat capacity from the water content
    ``theta_w rho_w c_w + (1 - theta_s) c_s`` at the step's end (air's capacity neglected; the
    conductivity stays the zones' saturated value)."""
    from bedflux.section.richards_run import run_variably_saturated
    from bedflux.section.richards_steps import soil_water

    model.with_water_content(soil_water(section.scenario, section).theta_s)
    record: dict[float, tuple[np.ndarray, dict, float]] = {}
    current: dict[str, np.ndarray] = {}

    def on_state(t0, t1, view, terms, u, water) -> None:
        model.set_water(water)
        model.geometry = HeatGeometry(view, model.cells)
        op = model.operator([(1.0, u, terms)], terms, t1)
        if t1 == 0.0:
            theta, budget, gross = (model.initial(op) if section.scenario.transient
                                    else model.steady(op, model.sources(0.0, steady=True)))
        else:
            factor = model.factor(model.step_matrix(op, t1 - t0, 1.0))
            theta, budget, gross = model.step(op, factor, current["theta"], t0, t1, 1.0)
        current["theta"] = theta
        record[round(t1, 6)] = (theta, budget, gross)

    solver = {"direct": "direct", "amg-cg": "amg-gmres"}.get(method, "auto")
    ds = run_variably_saturated(section, solver=solver, progress=progress, on_state=on_state)
    steady = "time" not in ds.dims
    times = [0.0] if steady else [float(t) for t in ds["time"].values]
    picked = [record[round(t, 6)] for t in times]
    return _with_heat(ds, model, *zip(*picked), steady=steady,
                      attrs={"heat_run": "variably saturated, heat after every accepted step",
                             "heat_scheme": "backward-euler"})


def _with_heat(ds: xr.Dataset, model: HeatModel, thetas, budgets, grosses, steady: bool,
               attrs: dict) -> xr.Dataset:
    """Add ``temperature``, the energy budget and the heat attributes to a flow Dataset."""
    g = model.section.grid
    lead = () if steady else ("time",)

    def field(theta: np.ndarray) -> np.ndarray:
        out = np.full((g.nz, g.nx), np.nan)
        out[g.active] = theta + model.t_ref
        return out

    temps = np.stack([field(th) for th in thetas])
    inflow = np.array([[b[k][0] for k in HEAT_LINES] for b in budgets])
    outflow = np.array([[b[k][1] for k in HEAT_LINES] for b in budgets])
    gross = np.asarray(grosses, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        closure = np.where(gross > 0, (inflow.sum(axis=1) - outflow.sum(axis=1)) / gross, np.nan)
    pick = (lambda a: a[0]) if steady else (lambda a: a)
    ds = ds.assign_coords(heat_term=("heat_term", np.array(HEAT_LINES), {"long_name": "energy budget line"}))
    add_variables(ds, {
        "temperature": (lead + ("z", "x"), pick(temps)),
        "heat_inflow": (lead + ("heat_term",), pick(inflow)),
        "heat_outflow": (lead + ("heat_term",), pick(outflow)),
        "heat_closure": (lead, pick(closure)),
        "heat_gross": (lead, pick(gross)),
        "thermal_conductivity": (("z", "x"), _cell_field(g, model.cells.conductivity)),
        "bulk_heat_capacity": (("z", "x"), _cell_field(g, model.cells.capacity)),
    })
    ds.attrs.update({**attrs, "groundwater_temperature": model.t_ref,
                     "heat_factorizations": model.factorizations,
                     "heat_cell_peclet_max": model.peclet_max})
    if model.peclet_max > PECLET_ADVICE:
        x, z = model.peclet_at
        ds.attrs["heat_warning"] = (f"the cell Peclet number reaches {model.peclet_max:.3g} (above "
                                    f"{PECLET_ADVICE:g}) at x = {x:.4g} m, z = {z:.4g} m: a daily temperature "
                                    "wave passing there is smeared; refine the grid where the flow is fast")
    return ds


def _cell_field(grid, values: np.ndarray) -> np.ndarray:
    out = np.full((grid.nz, grid.nx), np.nan)
    out[grid.active] = values
    return out
