"""The forward model as calibration and planning see it: parameters in, predicted data and the
Jacobian out.

``Forward`` is the one narrow interface: ``n_params``, ``n_data``, ``predict(m)``,
``jacobian(m)`` (and ``predict_and_jacobian``), with ``m`` the vector of (transformed)
parameters. Nothing else of the model crosses it.

Sensitivities are computed with the forward factorization reused:

- steady: ``dh/dp = A^-1 dR/dp`` where ``R`` is the sum of inflows at fixed heads (the residual)
  and ``A`` its negative Jacobian in h; by the direct method (one back-substitution per parameter)
  or the adjoint (one per observation), whichever needs fewer;
- transient: the direct method carried along the time steps with the same factors as the
  forward run (``(S/dt + theta A1) s1 = ...``, see :func:`_step_sensitivity`).

The active set (submerged, seeping, ET branch) is held at the one the forward run chose, so the
derivative is that of the branch the solution lies on.

A variably saturated run (Richards' equation) takes its sensitivities by the direct method along
the steps of the base run, one factorization of the converged Newton Jacobian per state shared by
all parameters (:mod:`bedflux.forward.unsaturated_sensitivity`), for zone ``kh``, ``kv``,
``specific_storage`` (``specific_yield``: zero), ``ZONE.retention.alpha`` / ``.n``,
``recharge.rate`` and ``stream.leakance``; with temperature observations, also the zone thermal
properties (``thermal_conductivity``, ``heat_capacity``, ``dispersivity``), in linear and
variably saturated runs alike.

Parameters without an analytic derivative (for example a layer depth or the stage; and, in a
variably saturated run, a side head or a riparian rate) fall back to central differences. A
thermal-flux row chains the state sensitivities through the face fluxes and adds the explicit
derivative of the face conductances and boundary inflows
(:func:`bedflux.forward.derivatives.thermal_flux_parts`; in a variably saturated run
:func:`bedflux.forward.unsaturated_sensitivity.flow_derivatives`). Temperature rows carry the
head sensitivities into the heat steps (:mod:`bedflux.forward.heat_observe`,
:mod:`bedflux.forward.unsaturated_heat`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import partial
from typing import Callable

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.forward.derivatives import (DerivativeRule, derivative_rule, residual_derivative,
                                        thermal_flux_parts)
from bedflux.forward.heat_observe import THERMAL_RULES, AlongFlow, observe_temperatures, require_heat
from bedflux.forward.observe import DEFAULT_PAN_DIAMETER, Operators, check_observations, linear_parts, predict
from bedflux.forward.reuse import OperatorSource, SectionSource
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import ET_LINEAR, Section
from bedflux.section.heat_run import flow_is_steady
from bedflux.section.steady import SteadySolution, solve_steady

LN10 = math.log(10.0)
#: Derivative rules of storage parameters (no effect in a steady run).
_STORAGE_RULES = ("zone-specific_storage", "zone-specific_yield")
#: Rules with an analytic derivative in the linear model.
_LINEAR_RULES = ("zone-kh", "zone-kv", "zone-specific_storage", "zone-specific_yield", "recharge", "riparian",
                 "side-head", "leakance")
#: Rules with an analytic derivative in a variably saturated run
#: (:mod:`bedflux.forward.unsaturated_sensitivity`).
VARIABLY_SATURATED_RULES = ("zone-kh", "zone-kv", "retention-alpha", "retention-n", "zone-specific_storage",
             "zone-specific_yield", "recharge", "leakance")


@dataclass(frozen=True)
class FreeParameter:
    """A free parameter: a scenario path, bounds and start (SI), transform and optional prior.

    ``log`` parameters are estimated as log10 of the value.
    """

    path: str
    low: float
    high: float
    start: float
    log: bool = False
    prior: float | None = None
    prior_sd: float | None = None
    note: str = ""

    def internal(self, value: float) -> float:
        """The value in the estimation space."""
        return math.log10(value) if self.log else value

    def natural(self, m: float) -> float:
        """The SI value of an estimation-space value."""
        return 10.0**m if self.log else m

    def dnatural(self, m: float) -> float:
        """d(natural)/d(internal)."""
        return LN10 * 10.0**m if self.log else 1.0

    def prior_spread(self) -> float | None:
        """The prior's standard deviation in the estimation space (None without a prior).

        ``prior_sd`` is given in SI; for a log parameter it is converted to decades at the
        prior, to first order ``prior_sd / (prior ln 10)``.
        """
        if self.prior_sd is None:
            return None
        return self.prior_sd / (self.prior * LN10) if self.log else self.prior_sd


def free_parameters(scenario: Scenario, free: list[dict], source: str = "fit") -> list[FreeParameter]:
    """Check a list of ``{"path", "low", "high", "start", "log", "prior", "prior_sd"}`` (SI).

    Conductivities, storage and leakance are log-transformed unless ``log`` says otherwise.

    Raises
    ------
    InputError
        Naming the parameter for an unknown path, bounds that exclude the start, a non-positive
        bound of a log parameter, a non-positive prior spread, or a duplicate.
    """
    out = []
    seen = set()
    for i, f in enumerate(free):
        where = f"free parameter {i + 1}"
        if not isinstance(f, dict) or "path" not in f:
            raise InputError("each free parameter needs a path, e.g. {path = \"bed.kv\", low = ..., high = ...}",
                             source=source, where=where)
        path = str(f["path"])
        where = f"free parameter '{path}'"
        unknown = set(f) - {"path", "low", "high", "start", "log", "prior", "prior_sd"}
        if unknown:
            raise InputError(f"unknown key '{sorted(unknown)[0]}'; allowed: path, low, high, start, log, prior, "
                             "prior_sd", source=source, where=where)
        if path in seen:
            raise InputError("listed twice", source=source, where=where)
        seen.add(path)
        try:
            current = scenario.value_at(path)
        except InputError as err:
            raise InputError(err.message, source=source, where=where) from None
        prop = path.rsplit(".", 1)[-1]
        default_log = prop in ("kh", "kv", "specific_storage", "leakance")
        log = bool(f.get("log", default_log))
        try:
            low, high = float(f["low"]), float(f["high"])
        except (KeyError, TypeError, ValueError):
            raise InputError("needs numeric low and high bounds (SI)", source=source, where=where) from None
        start = float(f.get("start", current))
        if not low < high:
            raise InputError(f"low = {low:g} must be below high = {high:g}", source=source, where=where)
        if not low <= start <= high:
            raise InputError(f"the start {start:g} lies outside the bounds [{low:g}, {high:g}]",
                             source=source, where=where)
        if log and low <= 0:
            raise InputError(f"a log-transformed parameter needs low > 0; got {low:g}", source=source, where=where)
        prior = f.get("prior")
        prior_sd = f.get("prior_sd")
        if (prior is None) != (prior_sd is None):
            raise InputError("give both prior and prior_sd, or neither", source=source, where=where)
        if prior_sd is not None and float(prior_sd) <= 0:
            raise InputError("prior_sd must be > 0", source=source, where=where)
        if prior is not None and log and float(prior) <= 0:
            raise InputError("the prior of a log parameter must be > 0", source=source, where=where)
        if prior is not None and not low <= float(prior) <= high:
            raise InputError(f"the prior {float(prior):g} lies outside the bounds [{low:g}, {high:g}]",
                             source=source, where=where)
        try:
            scenario.with_values({path: start})
        except InputError as err:
            raise InputError(f"start = {start:g} (SI) is not a value the scenario allows: {err.message}",
                             source=source, where=where) from None
        note = ""
        for name in ("low", "high"):
            bound = low if name == "low" else high
            allowed = _allowed_bound(scenario, path, start, bound, log)
            if allowed != bound:
                note += f"{name} bound narrowed from {bound:g} to {allowed:g}, the scenario's limit; "
                low, high = (allowed, high) if name == "low" else (low, allowed)
        out.append(FreeParameter(path, low, high, start, log,
                                 None if prior is None else float(prior),
                                 None if prior_sd is None else float(prior_sd), note.rstrip("; ")))
    if not out:
        raise InputError("no free parameters", source=source)
    return out


def _allowed_bound(scenario: Scenario, path: str, start: float, bound: float, log: bool) -> float:
    """``bound`` if the scenario accepts it, else the value closest to it that it accepts (by
    bisection between the start, which it accepts, and the bound)."""
    def ok(v: float) -> bool:
        try:
            scenario.with_values({path: v})
            return True
        except InputError:
            return False

    if ok(bound):
        return bound
    a, b = (math.log10(start), math.log10(bound)) if log else (start, bound)
    for _ in range(60):
        mid = 0.5 * (a + b)
        if ok(10.0**mid if log else mid):
            a = mid
        else:
            b = mid
    return 10.0**a if log else a


# ------------------------------------------------------------------------------------------

@dataclass
class _StepEnd:
    """What the transient Jacobian carries from one step to the next, at the end of the last step:
    the head sensitivities ``dh/dp`` (per unknown and parameter), the predicted data and their
    Jacobian (None without analytic parameters)."""

    head_sensitivity: np.ndarray
    predicted: np.ndarray
    jacobian: np.ndarray | None


@dataclass
class _ForwardState:
    """A forward run at one parameter vector (``key``: its bytes): the section, the operators and
    the predicted data; a steady run's solution (factor, heads, terms) for its Jacobian; the
    analytic Jacobian columns a transient run carried along its steps (``carried``: their
    parameter numbers)."""

    key: bytes
    section: Section
    ops: Operators
    predicted: np.ndarray
    solution: SteadySolution | None = None
    carried: tuple = ()
    columns: np.ndarray | None = None
    #: the temperature rows' Jacobian columns of the ``carried`` parameters (a run with steady flow)
    temperature_columns: np.ndarray | None = None


@dataclass
class Forward:
    """Predicted data and Jacobian of an observation table for free scenario parameters.

    Parameters
    ----------
    scenario
        The base scenario (free values are replaced through ``Scenario.with_values``, or
        ``Scenario.with_plain_values`` for plain values inside their bounds).
    observations
        A table with columns ``kind, x, depth, time, value, sigma`` (SI); ``time`` may be empty
        in a steady run.
    free
        The free parameters.
    pan_diameter
        Seepage-meter pan diameter (m) for the footprint average.

    Notes
    -----
    The run at the last parameter vector is kept, so ``jacobian(m)`` after ``predict(m)`` (as an
    optimiser asks for them) adds only the sensitivity solves of a steady run. Sections of plain
    parameter values are re-assembled on the cached geometry and the observation operators are
    built once per grid (:mod:`bedflux.forward.reuse`).
    """

    scenario: Scenario
    observations: pd.DataFrame
    free: list[FreeParameter]
    pan_diameter: float = DEFAULT_PAN_DIAMETER
    fd_step: float = 1e-4
    source: str = "observations"
    n_forward_runs: int = field(default=0, init=False)
    n_sensitivity_solves: int = field(default=0, init=False)
    #: ``map(function, items) -> list`` run elsewhere, e.g. over a cluster's workers: the
    #: central-difference columns of a Jacobian are then computed there (None: here, in turn)
    column_map: Callable | None = field(default=None, init=False, repr=False, compare=False)

    def __post_init__(self):
        self.observations = check_observations(self.observations, self.source, self.scenario.transient)
        self.rules = [derivative_rule(self.scenario, p.path) for p in self.free]
        self._sections = SectionSource(self.scenario, self.free)
        self._operators = OperatorSource(self.pan_diameter, self.source)
        self._last: _ForwardState | None = None
        # every observation must lie in the section (checked once, before any fitting)
        self.has_temperature = bool((self.observations["kind"] == "temperature").any())
        self.has_thermal_flux = bool((self.observations["kind"] == "thermal_flux").any())
        section = self._section_at(self.start())
        self._operators.operators(section, self.observations)
        require_heat(section, self.has_temperature, self.source)
        if self.scenario.transient:
            t = self.observations["time"]
            late = t > self.scenario.time.end
            if late.any() or (t < 0).any():
                i = int(np.flatnonzero(late | (t < 0))[0])
                raise InputError(f"time = {t.iloc[i]:g} s is outside the run [0, {self.scenario.time.end:g}] s",
                                 source=self.source, where=f"row {i + 2}")

    def __getstate__(self) -> dict:
        # the kept run holds a factorization, which cannot be pickled (a copy sent to another
        # process runs again where it needs to)
        return {**self.__dict__, "_last": None, "column_map": None}

    @property
    def n_params(self) -> int:
        return len(self.free)

    @property
    def n_data(self) -> int:
        return len(self.observations)

    def start(self) -> np.ndarray:
        """Starting values in the estimation space."""
        return np.array([p.internal(p.start) for p in self.free])

    def scenario_at(self, m: np.ndarray) -> Scenario:
        """The scenario with the free parameters set to ``m`` (estimation space)."""
        return self.scenario.with_values({p.path: p.natural(v) for p, v in zip(self.free, m)})

    def predict(self, m: np.ndarray) -> np.ndarray:
        """Simulated observations at ``m``."""
        return self._state(np.asarray(m, dtype=float)).predicted.copy()

    def jacobian(self, m: np.ndarray) -> np.ndarray:
        """``d(data)/d(m)`` (n_data x n_params)."""
        return self.predict_and_jacobian(m)[1]

    def predict_and_jacobian(self, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Simulated observations and the Jacobian in one pass (analytic where available)."""
        m = np.asarray(m, dtype=float)
        with_rule = VARIABLY_SATURATED_RULES if self.scenario.variably_saturated else _LINEAR_RULES
        analytic = [j for j, rule in enumerate(self.rules) if rule.name in with_rule
                    and not (rule.name in _STORAGE_RULES and not self.scenario.transient)]
        if self.has_temperature:
            analytic += [j for j, rule in enumerate(self.rules) if rule.name in THERMAL_RULES]
        d, J = self._run(m, analytic)
        numeric = []
        for j, rule in enumerate(self.rules):
            if j in analytic:
                continue
            if rule.name in _STORAGE_RULES and not self.scenario.transient:
                J[:, j] = 0.0  # storage does not act in a steady run
            else:
                numeric.append(j)
        if numeric and self.column_map is not None:
            columns = self.column_map(partial(_difference_column, self, m), numeric)
            self.n_forward_runs += 2 * len(numeric)  # counted on the copies that ran them
        else:
            columns = [self._central_difference(m, j) for j in numeric]
        for j, column in zip(numeric, columns):
            J[:, j] = column
        return d, J

    def jacobian_fd(self, m: np.ndarray, step: float | None = None) -> np.ndarray:
        """Central-difference Jacobian (a check and a fallback); ``step`` is relative (absolute in
        the exponent of log parameters)."""
        m = np.asarray(m, dtype=float)
        return np.column_stack([self._central_difference(m, j, step) for j in range(self.n_params)])

    def _central_difference(self, m: np.ndarray, j: int, step: float | None = None) -> np.ndarray:
        rel = step or self.fd_step
        p = self.free[j]
        # log10 parameters: an absolute step in the exponent; others: relative to the value
        h = rel if p.log else rel * (abs(m[j]) if m[j] != 0 else (p.high - p.low))
        up, dn = m.copy(), m.copy()
        up[j] += h
        dn[j] -= h
        # runs of their own: the kept run at m stays
        return (self._forward_run(up).predicted - self._forward_run(dn).predicted) / (2 * h)

    # ----------------------------------------------------------------------------------
    def _section_at(self, m: np.ndarray) -> Section:
        if self._sections.scenario is not self.scenario:  # a new base scenario: nothing kept applies
            self._sections, self._last = SectionSource(self.scenario, self.free), None
        return self._sections.section(np.array([p.natural(v) for p, v in zip(self.free, m)]))

    def _state(self, m: np.ndarray, carry: list[int] | None = None) -> _ForwardState:
        """The run at ``m``, kept for the next call (a transient run carrying the sensitivities of
        the parameters ``carry``)."""
        carry = tuple(carry or ())
        last = self._last
        if (last is None or last.key != m.tobytes() or (carry and last.carried != carry)
                or self._sections.scenario is not self.scenario
                or self._operators.operators(last.section, self.observations) is not last.ops):
            self._last = last = self._forward_run(m, carry)
        return last

    def _forward_run(self, m: np.ndarray, carry: tuple = ()) -> _ForwardState:
        section = self._section_at(m)
        ops = self._operators.operators(section, self.observations)
        self.n_forward_runs += 1
        key = m.tobytes()
        if section.scenario.variably_saturated:
            from bedflux.forward.unsaturated_sensitivity import run_with_sensitivities

            return _ForwardState(key, section, ops, run_with_sensitivities(section, ops, [], [], self.source)[0])
        if not section.scenario.transient or (self.has_temperature and not self._flow_changes):
            # a steady run; or a run with [heat] whose flow never changes: the heat run takes its
            # one flow solve for every time (bedflux.section.heat_run), and so do the flow data
            sol = solve_steady(section, reuse=True)
            d = predict(section, ops, sol.u, sol.terms, 0.0, self.source)
            state = _ForwardState(key, section, ops, d, sol, carried=carry)
            if self.has_temperature:
                values = [p.natural(v) for p, v in zip(self.free, m)]
                rows, temperatures, state.temperature_columns = self._temperatures(
                    section, ops, sol, [self.rules[j] for j in carry], [values[j] for j in carry])
                d[rows] = temperatures
            return state
        values = [p.natural(v) for p, v in zip(self.free, m)]
        d, columns = self._transient(section, ops, [self.rules[j] for j in carry], [values[j] for j in carry])
        return _ForwardState(key, section, ops, d, carried=carry, columns=columns)

    def _run(self, m: np.ndarray, analytic: list[int]) -> tuple[np.ndarray, np.ndarray]:
        if self.scenario.variably_saturated and analytic:
            return self._variably_saturated_run(m, analytic)
        state = self._state(m, analytic if self.scenario.transient else None)
        J = np.zeros((self.n_data, self.n_params))
        if state.section.scenario.variably_saturated or not analytic:
            return state.predicted.copy(), J
        values = [p.natural(v) for p, v in zip(self.free, m)]
        chain = np.array([p.dnatural(v) for p, v in zip(self.free, m)])
        rules = [self.rules[j] for j in analytic]
        if state.solution is not None:
            Jsub = self._steady_jacobian(state.section, state.ops, state.solution, rules,
                                         [values[j] for j in analytic])
        else:
            Jsub = state.columns
        if self.has_temperature and state.solution is not None:
            rows = state.ops.kind == "temperature"
            if state.carried == tuple(analytic):
                Jsub[rows] = state.temperature_columns
            else:
                Jsub[rows] = self._temperatures(state.section, state.ops, state.solution, rules,
                                                [values[j] for j in analytic])[2]
        J[:, analytic] = Jsub * chain[analytic][None, :]
        return state.predicted.copy(), J

    @property
    def _flow_changes(self) -> bool:
        """True for a transient run whose flow changes (heat then follows every flow step)."""
        return self.scenario.transient and not flow_is_steady(self.scenario)

    def _temperature_times(self, section: Section, ops: Operators) -> tuple[np.ndarray, np.ndarray]:
        rows = ops.kind == "temperature"
        times = ops.table["time"].to_numpy()[rows] if section.scenario.transient else np.zeros(int(rows.sum()))
        return rows, times

    def _temperatures(self, section: Section, ops: Operators, sol: SteadySolution, rules: list[DerivativeRule],
                      values: list[float]) -> tuple:
        """The temperature rows, their simulated values and their derivatives with respect to
        ``rules`` in a run with the steady flow ``sol`` (:mod:`bedflux.forward.heat_observe`)."""
        rows, times = self._temperature_times(section, ops)
        values_, jac = observe_temperatures(section, sol, ops.head_weights[rows], times, rules, values)
        self.n_sensitivity_solves += len(rules)
        return rows, values_, jac

    def _variably_saturated_run(self, m: np.ndarray, analytic: list[int]) -> tuple[np.ndarray, np.ndarray]:
        """Predicted data and the direct-method sensitivities of the parameters ``analytic`` of a
        variably saturated run (:mod:`bedflux.forward.unsaturated_sensitivity`); the run is kept."""
        from bedflux.forward.unsaturated_sensitivity import run_with_sensitivities

        section = self._section_at(m)
        ops = self._operators.operators(section, self.observations)
        self.n_forward_runs += 1
        values = [p.natural(v) for p, v in zip(self.free, m)]
        chain = np.array([p.dnatural(v) for p, v in zip(self.free, m)])
        d, Jsub, counts = run_with_sensitivities(section, ops, [self.rules[j] for j in analytic],
                                                 [values[j] for j in analytic], self.source)
        self.n_sensitivity_solves += counts.solves
        self._last = _ForwardState(m.tobytes(), section, ops, d)
        J = np.zeros((self.n_data, self.n_params))
        J[:, analytic] = Jsub * chain[analytic][None, :]
        return d.copy(), J

    def _steady_jacobian(self, section: Section, ops, sol, rules: list[DerivativeRule], values: list[float]
                         ) -> np.ndarray:
        W, w_top, flux_per_conductance, top = linear_parts(section, ops, sol.u, sol.terms)
        dR = np.zeros((section.n, len(rules)))
        E = np.zeros((ops.n, len(rules)))
        if self.has_thermal_flux:
            T, E = thermal_flux_parts(section, ops, sol.u, sol.terms, rules, values)
            W = (W + T).tocsr()
        for j, (rule, v) in enumerate(zip(rules, values)):
            dR[:, j], dconductance = residual_derivative(section, sol.terms, sol.u, rule, v)
            if dconductance is not None and w_top.shape[1]:
                E[:, j] += w_top @ (dconductance * flux_per_conductance)
        if len(rules) <= ops.n:
            X = sol.factor.solve(dR)
            self.n_sensitivity_solves += len(rules)
            return W @ X + E
        lam = sol.factor.solve(W.T.toarray())
        self.n_sensitivity_solves += ops.n
        return lam.T @ dR + E

    def _transient(self, section: Section, ops, rules: list[DerivativeRule], values: list[float]):
        from bedflux.section.transient import run_transient

        times = ops.table["time"].to_numpy()
        P = len(rules)
        d = np.full(ops.n, np.nan)
        J = np.zeros((ops.n, P))
        last = _StepEnd(np.zeros((section.n, P)), np.full(ops.n, np.nan), None)
        heat = None
        if self.has_temperature and self._flow_changes:
            rows, t_rows = self._temperature_times(section, ops)
            heat = AlongFlow(section, ops.head_weights[rows], t_rows, rules, values)

        def observe(u, s, terms, t):
            vals = predict(section, ops, u, terms, t)
            if not P:
                return vals, None
            W, w_top, flux_per_conductance, top = linear_parts(section, ops, u, terms)
            dJ = W @ s
            if self.has_thermal_flux:
                T, Et = thermal_flux_parts(section, ops, u, terms, rules, values)
                dJ += T @ s + Et
            for j, (rule, v) in enumerate(zip(rules, values)):
                if rule.name in ("zone-kv", "leakance") and w_top.shape[1]:
                    _, dconductance = residual_derivative(section, terms, u, rule, v)
                    if dconductance is not None:
                        dJ[:, j] += w_top @ (dconductance * flux_per_conductance)
            return vals, dJ

        def on_start(u, terms, init):
            s = np.zeros((section.n, P))
            if P and init is not None:
                dR = np.column_stack([residual_derivative(section, init.terms, u, rule, v)[0]
                                      for rule, v in zip(rules, values)])
                s = init.factor.solve(dR)
            if heat is not None:
                heat.start(u, terms, s)
            vals, dJ = observe(u, s, terms, 0.0)
            at0 = times <= 0.0
            if at0.any():
                d[at0] = vals[at0]
                if P:
                    J[at0] = dJ[at0]
            last.head_sensitivity, last.predicted, last.jacobian = s, vals, dJ

        def on_step(info):
            s1 = (_step_sensitivity(section, info, last.head_sensitivity, rules, values) if P
                  else last.head_sensitivity)
            self.n_sensitivity_solves += P
            if heat is not None:
                heat.step(info, last.head_sensitivity, s1)
            inside = (times > info.t0) & (times <= info.t1 + 1e-9 * max(info.t1, 1.0))
            v1, j1 = observe(info.u1, s1, info.terms1, info.t1)
            if inside.any():
                a = ((times[inside] - info.t0) / info.dt)[:, None]
                v0, j0 = last.predicted, last.jacobian
                d[inside] = ((1 - a[:, 0]) * v0[inside] + a[:, 0] * v1[inside])
                if P:
                    J[inside] = (1 - a) * j0[inside] + a * j1[inside]
            last.head_sensitivity, last.predicted, last.jacobian = s1, v1, j1

        run_transient(section, on_start=on_start, on_step=on_step)
        if heat is not None:
            d[rows] = heat.values
            J[rows] = heat.jacobian
        return d, J


def _lag_derivative(section: Section, factor: float, t: float, u_lag: np.ndarray) -> np.ndarray:
    """``dR/du_lag`` per unknown: ET of a daily cycle (mean ``factor`` over the step) taken at the
    heads of the step's start."""
    out = np.zeros(section.n)
    if not section.et_cells.size or not section.et_cycle.any():
        return out
    linear = section.et_cycle & (section.et_branch_at(u_lag) == ET_LINEAR)
    coef = np.where(linear, -factor * section.et_rate_at(t) / section.et_ext, 0.0)
    return np.bincount(section.et_cells, weights=coef, minlength=section.n)


def _step_sensitivity(section: Section, info, s0: np.ndarray, rules: list[DerivativeRule],
                      values: list[float]) -> np.ndarray:
    """Carry the sensitivities over one step with the step's own factorization.

    (S/dt + theta A1) s1 = S_el/dt s0 + S_wt/dt s0_wt - dfill/dh0 s0 + dR/du_lag s0
                           + theta dR1/dp + (1 - theta) (dR0/dp - A0 s0)
                           - dS_el/dp (h1 - h0)/dt - dS_wt/dp (h1 - h0_wt)/dt - dfill/dp

    (the ET of a daily cycle is taken at the heads of the step's start in the terms of both ends)
    """
    th, dt = info.theta, info.dt
    g = section.grid
    clipped = info.u0_wt != info.u0  # water table held at the ground at the start: fixed there
    s0_wt = np.where(clipped[:, None], 0.0, s0)
    rhs = (info.elastic / dt)[:, None] * s0 + (info.water_table / dt)[:, None] * s0_wt
    rhs += _lag_derivative(section, info.et_factor, info.t1, info.u0)[:, None] * s0
    if info.filled.any():
        top = section.top_cells[info.filled]
        specific_yield = section.materials.specific_yield[g.top_row[info.filled], np.nonzero(info.filled)[0]]
        ground_u = g.ground[info.filled] - section.h_ref
        below = (ground_u - info.u0[top]) > 0
        coef = np.zeros(section.n)
        coef[top] = np.where(below, specific_yield * g.dx[info.filled] / dt, 0.0)
        rhs += coef[:, None] * s0
    if th != 1.0:
        diag0 = np.zeros(section.n)
        for t in info.terms0:
            diag0 += np.bincount(t.cells, weights=t.conductance, minlength=section.n)
        rhs -= (1.0 - th) * (section.L @ s0 + diag0[:, None] * s0)
    for j, (rule, v) in enumerate(zip(rules, values)):
        col = th * residual_derivative(section, info.terms1, info.u1, rule, v)[0]
        if th != 1.0:
            col += (1.0 - th) * residual_derivative(section, info.terms0, info.u0, rule, v)[0]
        if rule.name == "zone-specific_storage":
            dstorage = section.materials.derivative("specific_storage", rule.zone)[g.active]
            col -= dstorage * section.cell_volume * (info.u1 - info.u0) / dt
        elif rule.name == "zone-specific_yield":
            dyield = section.materials.derivative("specific_yield", rule.zone)[g.top_row, np.arange(g.nx)]
            dS = np.zeros(section.n)
            wt = info.water_table
            sel = (dyield > 0) & (wt[section.top_cells] > 0)
            dS[section.top_cells[sel]] = g.dx[sel] * dyield[sel]
            col -= dS * (info.u1 - info.u0_wt) / dt
            if info.filled.any():
                fz = info.filled & (dyield > 0)
                if fz.any():
                    cells = section.top_cells[fz]
                    col[cells] -= info.fill[cells] * dyield[fz] / section.top_specific_yield[fz]
        rhs[:, j] += col
    return info.factor.solve(rhs)


def _difference_column(forward: Forward, m: np.ndarray, j: int) -> np.ndarray:
    """Column ``j`` of the Jacobian at ``m`` by central differences (a task of ``column_map``)."""
    return forward._central_difference(m, j)
