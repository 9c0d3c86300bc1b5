"""Variably saturated runs: the section's boundaries for Richards' equation, the steady solve and
adaptive backward-Euler stepping.

Boundaries (per step, from the linear model's terms of :mod:`bedflux.section.discretisation`):

- submerged top faces hold the stage (plus bedform head, through the bed leakance);
- exposed top faces take the recharge as a flux until the top cell's head reaches the ground;
  then they are a seepage face at zero pressure, released when it would take in more than the
  recharge (the same complementary rule as the linear model). Recharge that a seepage face does
  not take in is reported as ``ponding``;
- sides and base as in the linear model (a head side is hydrostatic);
- riparian evapotranspiration is root water uptake: the rate spread over the root zone as in the
  linear model, reduced by each cell's pressure head after Feddes et al. (1978), and none in
  columns under the stream. With a daily cycle each step takes the cycle's mean over the step.

Time steps (backward Euler) start at ``[time] step``, which is also the longest. After each
accepted step the local error in water content is estimated from the change of the rate of
water content between this step and the last (:func:`local_error`); the next step is the one
that would meet :data:`THETA_TOLERANCE` (times :data:`SAFETY`, at most :data:`MAX_GROWTH` times
longer), and a step whose error exceeds :data:`REJECT` tolerances is retried shorter. A step that
needs more than :data:`HARD_ITERATIONS` Newton iterations makes the next shorter, and a step that
fails is cut by :data:`CUT` and retried. Newton starts each step from the linear extrapolation of
the last two states. Steps land exactly on the output times, on the breakpoints of the forcing
(pulse start and peak, flood-wave start and end, series times, the daily cycle's 06:00 and
18:00) and just before the instants when the stage floods or leaves a piece of a column's top;
after a column floods the step restarts at :data:`RESTART_STEP` with no error history (the
rate of water content jumps there), and it then grows with the error estimate.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Protocol

import numpy as np

from bedflux.errors import SolverError
from bedflux.scenario.forcing import SUNRISE, SUNSET, FloodWave, Pulse, Series
from bedflux.section.retention import VAN_GENUCHTEN, SoilWater
from bedflux.scenario.spec import Scenario
from bedflux.section.richards import Evaluation, RichardsSystem, StepForcing, Storage, Uptake, boundary_pressure
from bedflux.section.richards_newton import NEWTON, JacobianSolver, Outcome, iterate
from bedflux.scenario.units import SECONDS_PER_DAY
from bedflux.section.discretisation import ActiveSet, Section

#: Iterations at or below which the step after a restart (no error history yet) grows by :data:`GROWTH`.
EASY_ITERATIONS = 4
#: Iterations above which the next step shrinks by :data:`SHRINK`.
HARD_ITERATIONS = 10
GROWTH = 1.5
SHRINK = 0.7
#: A failed step is retried this fraction as long.
CUT = 0.25
#: Local error allowed per step in water content (:func:`local_error`).
THETA_TOLERANCE = 0.01
#: The next step is this fraction of the length that would meet the tolerance exactly.
SAFETY = 0.9
#: Largest growth of the step from one to the next.
MAX_GROWTH = 2.0
#: A step whose error exceeds this many tolerances is rejected and retried shorter ...
REJECT = 4.0
#: ... unless it is already shorter than this fraction of :data:`RESTART_STEP`.
MIN_ERROR_STEP = 0.1
#: Shortest step, as a fraction of ``[time] step``, before the run gives up.
MIN_STEP_FRACTION = 1e-6
#: Passes of the seepage-face active set per step.
STEP_PASSES = 8
#: Sampling interval of the stage when the flooding instants of the columns are located (s).
FLOOD_SAMPLE = 30.0
#: The step landing at a flooding instant ends this long (s) before the stage crosses the ground.
FLOOD_MARGIN = 1e-3
#: After a column floods the next step is at most this long (s): infiltration into newly
#: flooded soil starts as t^-1/2 (sorptivity), which only short first steps resolve. (A column
#: falling dry needs no restart: measured, docs/performance.md.)
RESTART_STEP = 30.0
#: First pseudo-time step of the steady solve's continuation (s).
CONTINUATION_START = 600.0
#: Steady solve: Newton iterations before pseudo-transient continuation takes over.
STEADY_ITERATIONS = 40


def soil_water(scenario: Scenario, section: Section) -> SoilWater:
    """Soil water parameters of every unknown from the zones' ``retention`` tables."""
    specs = [z.retention for z in scenario.zones]
    owner = section.materials.zone[section.grid.active]
    vg = np.array([r.model == VAN_GENUCHTEN for r in specs])[owner]
    alpha = np.array([r.alpha for r in specs])[owner]
    n = np.array([r.n if r.n is not None else np.nan for r in specs])[owner]
    tr = np.array([r.residual for r in specs])[owner]
    ts = np.array([r.saturated for r in specs])[owner]
    return SoilWater(vg, alpha, n, tr, ts)


def forcing_breakpoints(scenario: Scenario, end: float) -> np.ndarray:
    """Times in (0, end) where a forcing signal or the daily uptake cycle has a kink."""
    signals = [] if scenario.stream is None else [scenario.stream.stage]
    signals += [b.signal for b in (scenario.left, scenario.right, scenario.bottom) if b.signal is not None]
    times: list[float] = []
    for s in signals:
        if isinstance(s, Pulse):
            times += [s.start, s.start + s.rise]
        elif isinstance(s, FloodWave):
            times += [s.start, s.start + s.duration]
        elif isinstance(s, Series):
            times += list(s.times)
    if any(r.daily_cycle for r in scenario.riparian):
        # sunrise and sunset of the daily cycle on the run's clock (clock0: clock time of t = 0)
        clock0 = scenario.time.clock0 if scenario.time is not None else 0.0
        days = np.arange(-1.0, end / SECONDS_PER_DAY + 1.0)
        times += list(days * SECONDS_PER_DAY + SUNRISE - clock0) + list(days * SECONDS_PER_DAY + SUNSET - clock0)
    t = np.unique(np.asarray(times, dtype=float))
    return t[(t > 0.0) & (t < end)]


def flooding_times(section: Section, end: float, drying: bool = True) -> np.ndarray:
    """Instants in (0, end) at which the stage floods or leaves a piece of a channel column's top
    face (a transient run wets a piece when the mean stage over it rises above the ground at its
    midpoint, :meth:`bedflux.section.grid.GroundPieces.below`).

    The stage is sampled every :data:`FLOOD_SAMPLE` seconds and each crossing is bisected to the
    round-off of the time; the instant returned lies on the *old* side of the crossing, so a step
    ending there still sees the piece as it was and the next step, which restarts short, is the
    first to see it flooded or dry. ``drying`` False: only the instants when a piece floods.
    """
    sc = section.scenario
    if sc.stream is None or end <= 0.0:
        return np.zeros(0)
    p = section.pieces
    keep = section.piece_in_channel > 0.0
    mid_x, ground = 0.5 * (p.x0 + p.x1)[keep], p.gm[keep]

    def stage(t: np.ndarray) -> np.ndarray:
        return np.asarray(sc.stream.stage(t), dtype=float)

    t = np.linspace(0.0, end, int(np.ceil(end / FLOOD_SAMPLE)) + 1)
    wet = stage(t)[:, None] + sc.stream.slope * mid_x - ground > 0.0
    k, j = np.nonzero(wet[1:] != wet[:-1])
    if not drying:
        k, j = k[~wet[k, j]], j[~wet[k, j]]
    lo, hi, old = t[k], t[k + 1], wet[k, j]
    level = ground[j] - sc.stream.slope * mid_x[j]  # the stage at which piece j floods
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        same = (stage(mid) > level) == old
        lo, hi = np.where(same, mid, lo), np.where(same, hi, mid)
    times = np.unique(lo - FLOOD_MARGIN)
    return times[(times > 0.0) & (times < end)]


class SectionBoundaries:
    """The scenario's boundaries and root uptake for Richards' equation on its section."""

    def __init__(self, section: Section):
        self.section = section
        sc = section.scenario
        heads = np.array([r.uptake_heads for r in sc.riparian]).reshape(-1, 4)
        self.uptake_heads = heads[section.et_zone].T if section.et_cells.size else np.zeros((4, 0))

    def initial_state(self) -> ActiveSet:
        return self.section.initial_active_set()

    def forcing(self, t0: float, t1: float, state: ActiveSet, steady: bool) -> StepForcing:
        """Terms at the end of the step ``[t0, t1]`` (or of the steady state at ``t1``)."""
        s = self.section
        terms = [t for t in s.terms(t1, state, steady=True) if t.kind != "evapotranspiration"]
        uptake = None
        if s.et_cells.size:
            keep = ~s.submerged(t1)[s.et_cols]  # no uptake under the stream
            cycle = s.et_factor(t0, t1) if s.et_cycle.any() and not steady and t1 > t0 else 1.0
            factor = np.where(s.et_cycle & (not steady), cycle, 1.0)
            rate = s.et_rate_at(t1) * factor  # dry ground only: no uptake under the stream
            uptake = Uptake(s.et_cells[keep], s.et_cols[keep], rate[keep], self.uptake_heads[:, keep])
        return StepForcing(terms, [boundary_pressure(s, t) for t in terms], uptake)

    def update(self, ev: Evaluation, forcing: StepForcing, t: float, state: ActiveSet) -> ActiveSet:
        """Seepage faces where the top cell's head reaches the ground; release where a seepage face
        would take in more than the recharge."""
        s = self.section
        g = s.grid
        new = state.copy()
        fraction = s.wetted_fraction(t)
        zc = g.z_centre[g.active]
        h_top = ev.psi[s.top_cells] + zc[s.top_cells]
        # the dry part of a partly wetted column too, at the level the linear model holds it
        new.seepage[(fraction < 1.0) & ~state.seepage & (h_top > s.seepage_level(t))] = True
        u = ev.psi + zc - s.h_ref
        for term, kr in zip(forcing.terms, ev.term_kr):
            if term.kind == "seepage_face":
                width = g.dx[term.column_or_row] if term.width is None else term.width
                inflow = kr * (term.r - term.conductance * u[term.cells]) / width
                new.seepage[term.column_or_row[inflow > max(s.scenario.recharge, 0.0) + 1e-15]] = False
        new.seepage[fraction >= 1.0] = False
        return new


@dataclass
class StepRecord:
    """One accepted step: its end, length, iterations and budget closure."""

    t1: float
    dt: float
    iterations: int
    closure: float


@dataclass
class Budget:
    """Flows of one state or step (m^2/s): in and out by line, storage split, closure."""

    inflow: dict[str, float]
    outflow: dict[str, float]
    storage_saturated: float = 0.0
    storage_unsaturated: float = 0.0

    @property
    def closure(self) -> float:
        tin, tout = sum(self.inflow.values()), sum(self.outflow.values())
        scale = max(tin, tout)
        return 0.0 if scale == 0.0 else (tin - tout) / scale


def step_budget(system: RichardsSystem, ev: Evaluation, forcing: StepForcing, storage: Storage | None,
                lines: tuple[str, ...]) -> Budget:
    """The water budget of a converged iterate, from the same flows as its residual."""
    u = system.head_u(ev.psi)
    bin_ = {k: 0.0 for k in lines}
    bout = {k: 0.0 for k in lines}
    for term, kr in zip(forcing.terms, ev.term_kr):
        q = kr * (term.r - term.conductance * u[term.cells])
        bin_[term.kind] += float(q[q > 0].sum())
        bout[term.kind] -= float(q[q < 0].sum())
    if ev.uptake is not None:
        bout["evapotranspiration"] += float(ev.uptake.sum())
    b = Budget(bin_, bout)
    if storage is not None:
        release = -ev.storage_rate
        bin_["storage"] = float(release[release > 0].sum())
        bout["storage"] = -float(release[release < 0].sum())
        b.storage_saturated = -float((storage.elastic * (ev.psi - storage.psi0)).sum()) / storage.dt
        b.storage_unsaturated = -float((system.volume * (ev.props.theta - storage.theta0)).sum()) / storage.dt
    return b


@dataclass
class Stepper:
    """Solves steps and steady states of one section with a fixed method and solver."""

    system: RichardsSystem
    boundaries: SectionBoundaries
    method: str = NEWTON
    solver: JacobianSolver = field(default=None)
    iterations: int = 0
    failures: int = 0
    rejected: int = 0

    def __post_init__(self):
        if self.solver is None:
            self.solver = JacobianSolver(self.system.n)

    def solve_step(self, psi0: np.ndarray, t0: float, t1: float, state: ActiveSet,
                   guess: np.ndarray | None = None) -> tuple[Outcome, StepForcing, Storage, ActiveSet]:
        """One backward-Euler step with its seepage-face passes (``converged`` False on failure);
        Newton starts from ``guess`` (default ``psi0``)."""
        storage = self.system.storage(psi0, t1 - t0)
        psi = psi0 if guess is None else guess
        total = 0
        for _ in range(STEP_PASSES):
            forcing = self.boundaries.forcing(t0, t1, state, steady=False)
            out = iterate(self.system, psi, forcing, storage, self.solver, self.method)
            total += out.iterations
            self.iterations += out.iterations
            if not out.converged:
                self.failures += 1
                return Outcome(out.evaluation, total, False), forcing, storage, state
            new = self.boundaries.update(out.evaluation, forcing, t1, state)
            if new.same(state):
                return Outcome(out.evaluation, total, True), forcing, storage, state
            state, psi = new, out.psi
        self.failures += 1
        return Outcome(out.evaluation, total, False), forcing, storage, state

    def solve_steady(self, psi: np.ndarray, t: float, state: ActiveSet) -> tuple[Outcome, StepForcing, ActiveSet]:
        """The steady state at time ``t`` from the start ``psi``: Newton, and pseudo-transient
        continuation (Kelley & Keyes 1998) where Newton alone does not converge."""
        history: list[ActiveSet] = []
        for _ in range(STEP_PASSES * 4):
            forcing = self.boundaries.forcing(t, t, state, steady=True)
            out = iterate(self.system, psi, forcing, None, self.solver, self.method, max_iterations=STEADY_ITERATIONS)
            self.iterations += out.iterations
            if not out.converged:
                psi = self._continuation(psi, t, state)
                out = iterate(self.system, psi, forcing, None, self.solver, self.method,
                              max_iterations=STEADY_ITERATIONS)
                self.iterations += out.iterations
                if not out.converged:
                    raise SolverError(f"the steady variably saturated state at t = {t:g} s did not converge "
                                      f"(residual {out.evaluation.norm / out.evaluation.scale:.2e} of the throughput)")
            new = self.boundaries.update(out.evaluation, forcing, t, state)
            if new.same(state):
                return out, forcing, state
            if any(new.same(h) for h in history):
                break
            history.append(state)
            state, psi = new, out.psi
        raise SolverError("the seepage faces of the steady variably saturated state did not settle; refine the "
                          "grid near the banks or start from a transient run")

    def _continuation(self, psi: np.ndarray, t: float, state: ActiveSet) -> np.ndarray:
        """Pseudo-time steps of growing length towards the steady state: the step grows with the
        fall of the steady residual (switched evolution relaxation) and at least doubles after
        an easy step."""
        forcing = self.boundaries.forcing(t, t, state, steady=True)
        dt = CONTINUATION_START
        ev = self.system.evaluate(psi, forcing, None)
        for _ in range(400):
            storage = self.system.storage(psi, dt)
            out = iterate(self.system, psi, forcing, storage, self.solver, self.method, tolerance=1e-8)
            self.iterations += out.iterations
            if not out.converged:
                dt *= CUT
                if dt < 1e-3:
                    break
                continue
            psi = out.psi
            new = self.system.evaluate(psi, forcing, None)
            if new.converged(1e-6):
                return psi
            relaxation = ev.norm / max(new.norm, 1e-300)
            easy = 2.0 if out.iterations <= EASY_ITERATIONS else 1.0
            dt = min(dt * min(max(relaxation, easy), 10.0), 1e12)
            ev = new
        return psi


class StepTangent(Protocol):
    """Sensitivities carried along :func:`run_steps` (the direct method of
    :mod:`bedflux.forward.unsaturated_sensitivity`): the step lengths the error control picks
    depend on the parameters through the water content, so the run passes the derivatives of
    each step's start and end times with its candidate states."""

    #: ``d(theta)/dp`` of the current (last accepted) state, cells x parameters.
    theta_derivative: np.ndarray

    def step(self, out: Outcome, forcing: StepForcing, storage: Storage, state: ActiveSet, t0: float, t1: float,
             dt0: np.ndarray, dt1: np.ndarray) -> np.ndarray:
        """Sensitivities of a candidate step from ``t0`` to ``t1`` (``dt0``, ``dt1``: their
        derivatives); returns ``d(theta)/dp`` of its end state."""

    def accept(self) -> None:
        """The last candidate step is accepted: it becomes the current state."""


def run_steps(stepper: Stepper, psi: np.ndarray, state: ActiveSet, stops: np.ndarray, dt_max: float,
              on_step: Callable[[Outcome, StepForcing, Storage, float, float], float],
              on_stop: Callable[[Outcome, StepForcing, float], None],
              progress: Callable[[float], None] | None = None,
              restarts: np.ndarray | None = None, tangent: StepTangent | None = None) -> list[StepRecord]:
    """Adaptive backward-Euler steps through the ``stops`` (output times and breakpoints, sorted,
    after t = 0). ``on_step`` sees every accepted step and returns its budget closure;
    ``on_stop`` sees the state at every stop. At the stops listed in ``restarts`` the next step
    restarts short (:data:`RESTART_STEP`); the local error per step is held near
    :data:`THETA_TOLERANCE` (see the module doc).

    With a ``tangent`` every candidate step is passed to it with the derivatives of its start and
    end times: the step lengths are differentiated through the error control (the largest local
    error's cell, the clamps and branches taken), so the sensitivities are those of the run as
    stepped, whose step lengths move with the parameters. The steps themselves do not change.
    """
    restarts = np.zeros(0) if restarts is None else np.asarray(restarts)
    records: list[StepRecord] = []
    t = 0.0
    dt = dt_max
    end = float(stops[-1])
    dt_min = MIN_STEP_FRACTION * dt_max
    P = 0 if tangent is None else tangent.theta_derivative.shape[1]
    # derivatives of t and of the proposed step length
    d_t = d_dt = np.zeros(P)
    # the last accepted step's water content rate, length and pressure head rate, and the
    # derivatives of the rate and the length
    last: tuple[np.ndarray, float, np.ndarray, np.ndarray, np.ndarray] | None = None
    for stop in stops:
        while t < stop - 1e-9 * max(stop, 1.0):
            h, d_h = (dt, d_dt) if dt <= stop - t else (stop - t, -d_t)
            if stop - (t + h) < 0.05 * h:
                # no sliver before the stop: stretch up to the longest step, else halve the rest
                h, d_h = (stop - t, -d_t) if stop - t <= dt_max else (0.5 * (stop - t), -0.5 * d_t)
            guess = None if last is None else psi + h * last[2]  # linear predictor
            out, forcing, storage, new_state = stepper.solve_step(psi, t, t + h, state, guess)
            if not out.converged:
                dt, d_dt = h * CUT, d_h * CUT
                if dt < dt_min:
                    raise SolverError(f"the variably saturated step from t = {t:g} s did not converge even at "
                                      f"{h:.3g} s; refine the grid or shorten [time] step")
                continue
            at_stop = h == stop - t
            d_t1 = np.zeros(P) if at_stop else d_t + d_h
            rate = (out.evaluation.props.theta - storage.theta0) / h
            d_rate = None
            if tangent is not None:
                dtheta = tangent.step(out, forcing, storage, new_state, t, t + h, d_t, d_t1)
                d_rate = (dtheta - tangent.theta_derivative) / h - np.outer(rate, d_h / h)
            d_grow = np.zeros(P)
            if last is None:
                grow = GROWTH if out.iterations <= EASY_ITERATIONS else 1.0
            else:
                error, d_error = local_error_tangent(rate, h, last[0], last[1], d_rate, d_h, last[3], last[4])
                grow = SAFETY * np.sqrt(THETA_TOLERANCE / error) if error > 0.0 else MAX_GROWTH
                if error > 0.0:
                    d_grow = -0.5 * grow * d_error / error
                if error > REJECT * THETA_TOLERANCE and h > RESTART_STEP * MIN_ERROR_STEP:
                    stepper.rejected += 1
                    dt, d_dt = (h * grow, d_h * grow + h * d_grow) if grow > CUT else (h * CUT, d_h * CUT)
                    continue
                if grow > MAX_GROWTH:
                    grow, d_grow = MAX_GROWTH, np.zeros(P)
            t1 = stop if at_stop else t + h
            if tangent is not None:
                tangent.accept()
            closure = on_step(out, forcing, storage, t, t1)
            records.append(StepRecord(t1, h, out.iterations, closure))
            last = (rate, h, (out.psi - psi) / h, d_rate, d_h)
            psi, state, t, d_t = out.psi, new_state, t1, d_t1
            if out.iterations > HARD_ITERATIONS and grow > SHRINK:
                grow, d_grow = SHRINK, np.zeros(P)
            # a step cut short by a stop does not hold back the next
            longer, d_longer = h * grow, d_h * grow + h * d_grow
            if h < dt and grow >= 1.0 and dt > longer:
                longer, d_longer = dt, d_dt
            dt, d_dt = (longer, d_longer) if longer <= dt_max else (dt_max, np.zeros(P))
            if progress is not None:
                progress(t / end)
        on_stop(out, forcing, t)
        if restarts.size and np.min(np.abs(restarts - t)) <= 1e-9 * max(t, 1.0):
            if dt > RESTART_STEP:
                dt, d_dt = RESTART_STEP, np.zeros(P)
            last = None
    return records


def local_error(rate: np.ndarray, h: float, last_rate: np.ndarray, last_h: float) -> float:
    """The local error of a backward-Euler step in water content, largest over the cells:
    ``h^2 / 2 |theta''|`` with ``theta''`` from the rates of this step and the last,
    ``2 (rate - last_rate) / (h + last_h)`` (Kavetski, Binning & Sloan 2001)."""
    return float(h * h * np.max(np.abs(rate - last_rate)) / (h + last_h))


def local_error_tangent(rate: np.ndarray, h: float, last_rate: np.ndarray, last_h: float,
                        d_rate: np.ndarray | None, d_h: np.ndarray, d_last_rate: np.ndarray | None,
                        d_last_h: np.ndarray) -> tuple[float, np.ndarray]:
    """:func:`local_error` and its derivative (at the cell of the largest error) from the
    derivatives of the rates (cells x parameters; None: no parameters) and of the step lengths."""
    change = rate - last_rate
    k = int(np.argmax(np.abs(change)))
    error = local_error(rate, h, last_rate, last_h)
    if d_rate is None or d_last_rate is None:
        return error, np.zeros(d_h.size)
    d_error = (error * (2.0 * d_h / h - (d_h + d_last_h) / (h + last_h))
               + h * h * np.sign(change[k]) * (d_rate[k] - d_last_rate[k]) / (h + last_h))
    return error, d_error
