"""Weighted least squares for the free parameters, with linearised uncertainty.

Objective: ``sum ((d_obs - d_sim) / sigma)^2`` plus, for parameters with a prior,
``((m - m_prior) / sd_prior)^2`` in the estimation space (log10 for log parameters; a prior spread
given in SI is converted to decades as ``prior_sd / (prior ln 10)``). Solved with scipy's bounded
trust-region reflective method and the analytic Jacobian of :class:`bedflux.forward.sensitivity.Forward`.

Uncertainty (linearised, e.g. Hill & Tiedeman 2007, ch. 7): ``C = s^2 (J^T W J + P)^-1`` with the
residual variance ``s^2 = S / (n - p)``, 95 % intervals ``m +- t(0.975, n - p) sqrt(C_jj)``
mapped back to SI; composite scaled sensitivities ``css_j = sqrt(sum_i (J_ij b_j sqrt(w_i))^2 / n)``
with ``J_ij b_j`` the change of datum i per relative change of parameter j (Hill & Tiedeman 2007,
eq. 4-3).

A parameter that ends on one of its bounds (within :data:`BOUND_TOLERANCE` of the range in the
estimation space) is not a best estimate but a limit: its verdict says so and which way the data
pull (the sign of the objective's gradient there).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
import pandas as pd
from scipy import optimize, stats

from bedflux.errors import InputError, SolverError
from bedflux.field.logger_pair_spread import PAIR_DEPTHS, logger_flux_sd
from bedflux.forward.observe import HAND_DRIVEN_MAX_DEPTH, HEAD_RESOLUTION, SEEPAGE_FLOOR, SEEPAGE_RELATIVE_SD
from bedflux.forward.observe import DEFAULT_PAN_DIAMETER
from bedflux.forward.sensitivity import LN10, Forward, free_parameters
from bedflux.scenario.spec import Scenario
from bedflux.calibration.display import with_unit

#: Correlations above this are reported as parameters the data cannot tell apart.
CORRELATION_LIMIT = 0.95
#: A value this close to a bound (fraction of the range in the estimation space) is on the bound.
BOUND_TOLERANCE = 1e-6


@dataclass
class FitResult:
    """Best values, intervals and diagnostics of a calibration (values in SI)."""

    best: dict[str, float]
    ci95: dict[str, tuple[float, float]]
    covariance: np.ndarray
    correlation: np.ndarray
    residuals: pd.DataFrame
    jacobian: np.ndarray
    n_forward_runs: int
    statistics: dict
    scaled_sensitivity: dict[str, float]
    singular_values: np.ndarray
    singular_vectors: np.ndarray
    verdicts: dict[str, str]
    paths: list[str]
    m_best: np.ndarray
    posterior: dict | None = None
    starts: list[dict] = field(default_factory=list)
    bound_notes: dict[str, str] = field(default_factory=dict)
    at_bound: dict[str, str] = field(default_factory=dict)
    standard_deviation: dict[str, float] = field(default_factory=dict)
    free: list = field(default_factory=list)
    transient: bool = False


def _prior_terms(forward: Forward) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    has = np.array([p.prior is not None for p in forward.free])
    centre = np.zeros(forward.n_params)
    sd = np.ones(forward.n_params)
    for j, p in enumerate(forward.free):
        if p.prior is None:
            continue
        centre[j] = p.internal(p.prior)
        sd[j] = p.prior_spread()
    return has, centre, sd


def _residual_functions(forward: Forward):
    d_obs = forward.observations["value"].to_numpy()
    sigma = forward.observations["sigma"].to_numpy()
    has, centre, sd = _prior_terms(forward)
    cache: dict = {}

    def evaluate(m):
        key = tuple(np.round(m, 15))
        if cache.get("key") != key:
            try:
                d, J = forward.predict_and_jacobian(m)
            except SolverError:
                if "key" not in cache:
                    raise
                # a trial point where a variably saturated run does not converge: non-finite
                # residuals make the trust-region solver reject the step and shrink the region
                d = np.full(forward.n_data, np.nan)
                J = np.full((forward.n_data, forward.n_params), np.nan)
            cache.update(key=key, d=d, J=J)
        return cache["d"], cache["J"]

    def fun(m):
        # a steady run's Jacobian is left to jac (the optimiser asks for it at accepted steps only;
        # the forward model keeps the run for it); a transient run carries its sensitivities
        # along the time steps, so one run gives both
        d = evaluate(m)[0] if forward.scenario.transient else forward.predict(m)
        r = (d - d_obs) / sigma
        return np.concatenate([r, ((m - centre) / sd)[has]])

    def jac(m):
        _, J = evaluate(m)
        Jw = J / sigma[:, None]
        prior_rows = (np.eye(forward.n_params) / sd[:, None])[has]
        return np.vstack([Jw, prior_rows])

    return fun, jac, evaluate


def _solve_from(forward: Forward, start: tuple[int, np.ndarray], functions: tuple | None = None
                ) -> tuple[np.ndarray, float, int, int]:
    """Least squares from one start ``(k, m0)``: best point, objective, evaluations and the
    forward runs they took (counted here: on a worker the model is a copy). ``functions``: the
    residual functions shared by the starts run here (a task makes its own)."""
    k, m0 = start
    fun, jac, _ = functions or _residual_functions(forward)
    lo = np.array([p.internal(p.low) for p in forward.free])
    hi = np.array([p.internal(p.high) for p in forward.free])
    runs = forward.n_forward_runs
    try:
        sol = optimize.least_squares(fun, m0, jac=jac, bounds=(lo, hi), method="trf", x_scale="jac",
                                     xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=200)
    except InputError:
        raise
    except (ValueError, np.linalg.LinAlgError) as err:
        raise SolverError(f"the least-squares solver failed from start {k + 1}: {err}") from None
    return sol.x, float(np.sum(sol.fun**2)), int(sol.nfev), forward.n_forward_runs - runs


def estimate(forward: Forward, starts: int = 1, seed: int = 0,
             progress: Callable[[str], None] | None = None, client=None) -> FitResult:
    """Fit the free parameters of ``forward`` to its observations.

    Parameters
    ----------
    forward
        The forward model with observations and free parameters.
    starts
        Number of starting points: the given start, then points drawn uniformly in the
        (transformed) bounds with ``seed``; the best fit is kept.
    progress
        Called with a line of text after each start (after all of them with a client).
    client
        A dask client: several starts run as tasks on its workers, and the central-difference
        columns of the Jacobians computed in this process (one start, the final covariance) run
        there too (the same numbers); None runs everything here, one after another.
    """
    functions = _residual_functions(forward)
    lo = np.array([p.internal(p.low) for p in forward.free])
    hi = np.array([p.internal(p.high) for p in forward.free])
    rng = np.random.default_rng(seed)
    points = [forward.start()] + [rng.uniform(lo, hi) for _ in range(max(starts, 1) - 1)]
    on_workers = client is not None and len(points) > 1
    if client is not None:
        # the central-difference columns of the Jacobians computed here run on the workers
        from bedflux.calibration.cluster import TaskPool

        forward.column_map = TaskPool(client).map
    try:
        if on_workers:
            from bedflux.calibration.cluster import task_map

            solved = task_map(client, _solve_from, (forward,), list(enumerate(points)))
        else:
            solved = (_solve_from(forward, (k, m0), functions) for k, m0 in enumerate(points))
        best = None
        history = []
        for k, (x, objective, nfev, runs) in enumerate(solved):
            if on_workers:
                forward.n_forward_runs += runs
            history.append({"start": k + 1, "objective": objective, "evaluations": nfev,
                            "values": {p.path: p.natural(v) for p, v in zip(forward.free, x)}})
            if progress is not None:
                progress(f"start {k + 1}/{len(points)}: weighted sum of squares {objective:.6g} "
                         f"after {nfev} evaluations")
            if best is None or objective < best[1]:
                best = (x, objective)
        result = fit_result_at(forward, best[0], functions[2])
    finally:
        forward.column_map = None
    result.starts = history
    return result


def calibrate(forward: Forward, starts: int = 1, seed: int = 0, sample: int = 0,
              progress: Callable[[str], None] | None = None, client=None) -> FitResult:
    """Estimate, optionally sample the posterior (``sample`` steps), and count the forward runs.

    With a dask ``client`` the starts and the sampler's walkers run on its workers."""
    result = estimate(forward, starts=starts, seed=seed, progress=progress, client=client)
    if sample:
        result.posterior = sample_posterior(forward, result, steps=sample, seed=seed, client=client)
    result.n_forward_runs = forward.n_forward_runs
    return result


def fit_result_at(forward: Forward, m: np.ndarray, evaluate=None) -> FitResult:
    """Statistics, intervals and verdicts at the parameter vector ``m`` (estimation space)."""
    if evaluate is None:
        d, J = forward.predict_and_jacobian(m)
    else:
        d, J = evaluate(m)
    obs = forward.observations
    sigma = obs["sigma"].to_numpy()
    w = 1.0 / sigma**2
    resid = obs["value"].to_numpy() - d
    n, p = forward.n_data, forward.n_params
    has, centre, sd = _prior_terms(forward)
    wss = float(np.sum(w * resid**2))
    prior_ss = float(np.sum(((m - centre) / sd)[has] ** 2))
    dof = max(n + int(has.sum()) - p, 1)
    s2 = (wss + prior_ss) / dof
    Jw = J * np.sqrt(w)[:, None]
    info = Jw.T @ Jw + np.diag(np.where(has, 1.0 / sd**2, 0.0))
    U, sv, Vt = np.linalg.svd(Jw, full_matrices=False)
    unseen = unseen_parameters(info)
    seen = ~unseen
    cov = np.full((p, p), np.nan)
    cov[np.ix_(unseen, unseen)] = np.where(np.eye(int(unseen.sum()), dtype=bool), np.inf, np.nan)
    if seen.any():
        cov[np.ix_(seen, seen)] = s2 * np.linalg.inv(info[np.ix_(seen, seen)])
    sdm = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(sdm, sdm)
    corr[~np.isfinite(corr)] = np.nan
    np.fill_diagonal(corr, 1.0)
    tq = stats.t.ppf(0.975, dof)
    paths = [q.path for q in forward.free]
    best = {q.path: float(q.natural(v)) for q, v in zip(forward.free, m)}
    ci = {}
    for q, v, sd_j in zip(forward.free, m, sdm):
        lo_i, hi_i = q.internal(q.low), q.internal(q.high)
        # intervals are clipped to the bounds; a parameter the data do not see spans them
        a = lo_i if not np.isfinite(sd_j) else max(v - tq * sd_j, lo_i)
        b = hi_i if not np.isfinite(sd_j) else min(v + tq * sd_j, hi_i)
        ci[q.path] = (float(q.natural(a)), float(q.natural(b)))
    # Hill & Tiedeman scale by the value (b dy/db); a head has an arbitrary datum, so per metre
    scale = np.array([1.0 / LN10 if q.log else (1.0 if _is_head(q.path) else abs(q.natural(v)) or 1.0)
                      for q, v in zip(forward.free, m)])
    scaled_sensitivity = np.sqrt(np.mean((Jw * scale[None, :]) ** 2, axis=0))
    stats_d = {
        "n_observations": n, "n_parameters": p, "n_priors": int(has.sum()),
        "weighted_sum_of_squares": wss, "prior_sum_of_squares": prior_ss,
        "reduced_chi_square": (wss + prior_ss) / dof, "degrees_of_freedom": dof,
        "aic": n * math.log(max(wss, 1e-300) / n) + 2 * p,
        "bic": n * math.log(max(wss, 1e-300) / n) + p * math.log(n),
        "residual_sd": math.sqrt(s2),
    }
    table = obs.copy()
    table["simulated"] = d
    table["residual"] = resid
    table["weighted_residual"] = resid / sigma
    verdicts = _verdicts(forward, m, scaled_sensitivity, corr, sdm, sv, Vt, J, info, s2, tq)
    # gradient of the objective in the estimation space: where the data pull a parameter on a bound
    gradient = -2.0 * J.T @ (w * resid) + 2.0 * np.where(has, (m - centre) / sd**2, 0.0)
    blind = {q.path for q, u, c in zip(forward.free, unseen, scaled_sensitivity) if u or c == 0.0}
    at_bound = bound_notes(forward.free, m, gradient, blind)
    for path, note in at_bound.items():
        verdicts[path] = _bound_verdict(note, verdicts[path], path in blind)
    notes = {q.path: q.note for q in forward.free if q.note}
    sd_si = {q.path: float(sd_j * q.dnatural(v)) for q, v, sd_j in zip(forward.free, m, sdm)}
    return FitResult(best, ci, cov, corr, table, J, forward.n_forward_runs, stats_d,
                     dict(zip(paths, scaled_sensitivity.tolist())), sv, Vt,
                     verdicts, paths, np.asarray(m), bound_notes=notes, at_bound=at_bound,
                     standard_deviation=sd_si, free=list(forward.free), transient=forward.scenario.transient)


def bound_notes(free: list, m: np.ndarray, gradient: np.ndarray, unseen: set[str] = frozenset()) -> dict[str, str]:
    """A note for each parameter that ended on a bound, e.g. ``bed.kv stopped at its upper bound
    50 m/d: the data want more; widen the bound or question the model``.

    ``gradient`` is that of the objective in the estimation space: a negative value at the upper
    bound (a positive one at the lower) means the fit would go on past the bound. For a parameter
    in ``unseen`` (on a null direction of the information: the data do not respond to it) the
    bound, not the data, sets the value.
    """
    out = {}
    for q, v, g in zip(free, m, gradient):
        lo, hi = q.internal(q.low), q.internal(q.high)
        tol = BOUND_TOLERANCE * (hi - lo)
        for side, bound, outward, more in (("upper", hi, -g, "more"), ("lower", lo, g, "less")):
            if abs(v - bound) > tol:
                continue
            if q.path in unseen:
                pull = "the data do not see it, so the bound, not the data, sets its value"
            elif outward > 0:
                pull = f"the data want {more}; widen the bound or question the model"
            else:
                pull = "the best fit lies on the bound; widen it to see whether the data want more room"
            out[q.path] = f"{q.path} stopped at its {side} bound {with_unit(q.path, q.natural(bound))}: {pull}"
    return out


def _bound_verdict(note: str, verdict: str, blind: bool) -> str:
    """The verdict of a parameter on a bound. Unseen (``blind``): its verdict, then the note.
    Otherwise the note (without the path) replaces a verdict on the spread, which the bound makes
    meaningless, and is followed by a correlation if there is one."""
    text = note.split(" ", 1)[1]
    if blind:
        return f"{verdict}; it {text}"
    if verdict.startswith("correlated"):
        return f"{text}; also {verdict}"
    return text


def unseen_parameters(info: np.ndarray, rtol: float = 1e-10) -> np.ndarray:
    """Parameters on (numerically) null directions of the information matrix: the data (and
    priors) say nothing about them, so their variance is unbounded."""
    lam, V = np.linalg.eigh(info)
    top = float(lam.max()) if lam.size else 0.0
    if top <= 0.0:
        return np.ones(info.shape[0], dtype=bool)
    tiny = lam <= rtol * top
    return np.any(np.abs(V[:, tiny]) > 0.1, axis=1) if tiny.any() else np.zeros(info.shape[0], dtype=bool)


def _is_head(path: str) -> bool:
    return path.endswith(".head") or path == "stream.stage"


def _verdicts(forward: Forward, m, scaled_sensitivity, corr, sdm, sv, Vt, J, info, s2, tq: float) -> dict[str, str]:
    """Plain-language verdict per parameter (``tq``: the t quantile of the 95 % intervals).

    - not identifiable: the 95 % interval (estimation space) covers more than 80 % of the range
      between the bounds, or the parameter loads on a (numerically) null direction of the
      weighted Jacobian, or the observations do not respond to it at all;
    - correlated: |correlation| with another parameter >= 0.95;
    - well determined: the 95 % interval (the same t interval as reported) spans less than a
      factor of 3 (log parameters) or less than the value itself (others); poorly determined
      otherwise.
    """
    paths = [q.path for q in forward.free]
    out = {}
    null = sv <= 1e-8 * (sv.max() if sv.size else 1.0)
    for j, q in enumerate(forward.free):
        span = q.internal(q.high) - q.internal(q.low)
        weak_combination = any(null[k] and abs(Vt[k, j]) > 0.3 for k in range(sv.size))
        if (scaled_sensitivity[j] == 0.0 or not np.isfinite(sdm[j]) or 2 * tq * sdm[j] > 0.8 * span
                or (weak_combination and q.prior is None)):
            out[q.path] = ("not identifiable: the observations barely respond to it (its 95 % interval "
                           "would cover most of the allowed range); fix it or add observations that respond to it")
            continue
        partners = [(abs(corr[j, k]), k) for k in range(len(paths)) if k != j and np.isfinite(corr[j, k])]
        strongest = max(partners) if partners else (0.0, -1)
        if strongest[0] >= CORRELATION_LIMIT:
            k = strongest[1]
            where = suggest_instrument(forward, m, j, k, info, s2)
            out[q.path] = f"correlated with {paths[k]} at {corr[j, k]:.2f}: fix one" + (f" or {where}" if where else "")
            continue
        lo, hi = (q.natural(m[j] - tq * sdm[j]), q.natural(m[j] + tq * sdm[j]))
        if q.log:
            spread = hi / lo
            out[q.path] = ("well determined" if spread < 3.0 else
                           f"poorly determined: the 95 % interval spans a factor of {spread:.2g}")
        else:
            width = hi - lo
            ref = 1.0 if _is_head(q.path) else max(abs(q.natural(m[j])), 1e-300)
            good = width < (0.2 if _is_head(q.path) else 1.0) * ref
            out[q.path] = ("well determined" if good else
                           f"poorly determined: the 95 % interval is {width:.3g} wide")
    return out


#: Piezometer depths (m below the bed) a suggestion tries: hand-driven mini-piezometers down to
#: :data:`bedflux.forward.observe.HAND_DRIVEN_MAX_DEPTH`, and deeper ones that need a drive point.
HAND_DEPTHS = (0.1, 0.2, HAND_DRIVEN_MAX_DEPTH)
DRIVE_POINT_DEPTHS = (1.0, 3.0)


def _instrument_words(kind: str, x: float, depth: float) -> str:
    if kind == "seepage":
        return f"a seepage meter near x = {x:.3g} m"
    if kind == "thermal_flux":
        return (f"a temperature logger pair at x = {x:.3g} m, sensors {PAIR_DEPTHS[0]:g} and {PAIR_DEPTHS[1]:g} m "
                "below the bed")
    return f"a piezometer at x = {x:.3g} m, {depth:.2g} m below the bed"


def suggest_instrument(forward: Forward, m: np.ndarray, j: int, k: int, info: np.ndarray, s2: float,
                       relative_sd: float = SEEPAGE_RELATIVE_SD, floor: float = SEEPAGE_FLOOR,
                       head_resolution: float = HEAD_RESOLUTION) -> str | None:
    """The new instrument that most reduces the correlation of parameters ``j`` and ``k``.

    Candidates: a seepage meter over every submerged column (scatter ``relative_sd`` of the
    flux, not below ``floor``), piezometers at :data:`HAND_DEPTHS` and
    :data:`DRIVE_POINT_DEPTHS` below the bed (gradient uncertainty = manometer resolution /
    depth) and temperature logger pairs at :data:`~bedflux.field.logger_pair_spread.PAIR_DEPTHS`
    (the flux spread the field reduction would give, infinite where the wave cannot be read); the
    instrument defaults of ``bedflux plan`` (common practice). When the best is
    deeper than a hand-driven mini-piezometer reaches, the suggestion says that it needs a drive
    point and names the best instrument within reach by hand as well.
    """
    from bedflux.forward.sensitivity import Forward as _F
    from bedflux.forward.geometry import bed_geometry

    scen = forward.scenario_at(m)
    geo = bed_geometry(scen, scen.time.end if scen.transient else 0.0)
    wet = geo.submerged
    if not wet.any():
        return None
    xs = geo.x[wet][:: max(1, int(wet.sum()) // 40)]
    t_obs = float(forward.observations["time"].max()) if scen.transient else 0.0
    depths = HAND_DEPTHS + DRIVE_POINT_DEPTHS
    rows = [("seepage", x, 0.0) for x in xs] + [("vhg", x, dep) for dep in depths for x in xs]
    rows += [("thermal_flux", x, 0.5 * (PAIR_DEPTHS[0] + PAIR_DEPTHS[1])) for x in xs]
    cand = pd.DataFrame({"kind": [r[0] for r in rows], "x": [r[1] for r in rows], "depth": [r[2] for r in rows],
                         "time": t_obs, "value": 0.0, "sigma": 1.0})
    base_z = geo.base
    ground = np.interp(cand["x"], geo.x, geo.ground)
    cand = cand[(cand["kind"] == "seepage") | (ground - cand["depth"] > base_z)].reset_index(drop=True)
    probe = _F(forward.scenario, cand, forward.free, forward.pan_diameter)
    d, Jc = probe.predict_and_jacobian(m)
    kind = cand["kind"].to_numpy()
    sig = np.where(kind == "seepage", np.maximum(relative_sd * np.abs(d), floor),
                   head_resolution / np.maximum(cand["depth"].to_numpy(), 1e-6))
    pairs = kind == "thermal_flux"
    sig[pairs] = logger_flux_sd(d[pairs], *PAIR_DEPTHS)
    corr = np.empty(len(cand))
    for i in range(len(cand)):
        row = Jc[i] / sig[i]
        new = np.linalg.pinv(info + np.outer(row, row), rcond=1e-12) * s2
        corr[i] = abs(new[j, k] / math.sqrt(max(new[j, j] * new[k, k], 1e-300)))
    by_hand = (kind != "vhg") | (cand["depth"].to_numpy() <= HAND_DRIVEN_MAX_DEPTH + 1e-12)
    best = int(np.argmin(corr))
    r = cand.iloc[best]
    words = _instrument_words(r["kind"], r["x"], r["depth"])
    if by_hand[best]:
        return f"add {words} (correlation would fall to {corr[best]:.2f})"
    hand = int(np.flatnonzero(by_hand)[np.argmin(corr[by_hand])])
    h = cand.iloc[hand]
    return (f"add {words}, deeper than the {HAND_DRIVEN_MAX_DEPTH:g} m a hand-driven mini-piezometer "
            f"reaches: it needs a drive point (correlation would fall to {corr[best]:.2f}); within reach by "
            f"hand, {_instrument_words(h['kind'], h['x'], h['depth'])} (correlation would fall to "
            f"{corr[hand]:.2f})")


def sample_posterior(forward: Forward, result: FitResult, steps: int = 2000, walkers: int | None = None,
                     seed: int = 0, client=None) -> dict:
    """Posterior sampling with emcee (an optional dependency: ``pip install bedflux[mcmc]``).

    Likelihood ``exp(-S/2)`` with the observation sigmas, uniform within the bounds (in the
    estimation space) times the Gaussian priors. Returns 2.5/50/97.5 percentiles in SI. With a
    dask ``client`` each step's walkers are evaluated on its workers (the same chain).
    """
    try:
        import emcee
    except ModuleNotFoundError:
        raise SolverError("posterior sampling needs emcee: pip install 'bedflux[mcmc]'") from None
    fun, _, _ = _residual_functions(forward)
    lo = np.array([p.internal(p.low) for p in forward.free])
    hi = np.array([p.internal(p.high) for p in forward.free])
    ndim = forward.n_params
    nw = walkers or max(2 * ndim + 2, 8)

    def logp(m):
        if np.any(m < lo) or np.any(m > hi):
            return -np.inf
        return -0.5 * float(np.sum(fun(m) ** 2))

    rng = np.random.default_rng(seed)
    sd = np.sqrt(np.clip(np.diag(result.covariance), 1e-12, None))
    sd = np.where(np.isfinite(sd), sd, (hi - lo) / 4.0)  # unseen parameters: spread over the bounds
    p0 = np.clip(result.m_best + 0.1 * sd * rng.standard_normal((nw, ndim)), lo, hi)
    pool = None
    if client is not None:
        from bedflux.calibration.cluster import TaskPool

        pool = TaskPool(client)
    sampler = emcee.EnsembleSampler(nw, ndim, logp, pool=pool)
    sampler.run_mcmc(p0, steps, progress=False)
    chain = sampler.get_chain(discard=steps // 2, flat=True)
    out = {}
    for j, q in enumerate(forward.free):
        lo_, med, hi_ = np.percentile(chain[:, j], [2.5, 50, 97.5])
        out[q.path] = {"p2.5": q.natural(lo_), "median": q.natural(med), "p97.5": q.natural(hi_)}
    out["_acceptance"] = float(np.mean(sampler.acceptance_fraction))
    return out


def fit(scenario: Scenario, observations: pd.DataFrame, free: list[dict], *,
        pan_diameter: float = DEFAULT_PAN_DIAMETER, starts: int = 1, seed: int = 0, sample: int = 0,
        progress: Callable[[str], None] | None = None, client=None) -> FitResult:
    """Weighted least-squares calibration with linearised uncertainty.

    Parameters
    ----------
    scenario
        The scenario whose values are fitted.
    observations
        Columns ``kind, x, depth, time, value, sigma`` (SI; kinds head, vhg, seepage).
    free
        Dicts ``{"path": "bed.kv", "low": ..., "high": ..., "start": ...}`` in SI, optionally
        ``log``, ``prior`` and ``prior_sd``.
    pan_diameter
        Seepage-meter footprint (m).
    starts, seed
        Number of starting points and the seed of the random ones.
    sample
        Steps of posterior sampling with emcee (0: none).
    client
        A ``dask.distributed`` client: the starts and the sampler's walkers run as tasks on its
        workers, with the same numbers as without one (None: all in this process).

    Returns
    -------
    FitResult
        ``.best``, ``.ci95``, ``.covariance``, ``.correlation``, ``.residuals``, ``.jacobian``,
        ``.n_forward_runs``, statistics, sensitivities and verdicts.
    """
    forward = Forward(scenario, observations, free_parameters(scenario, free), pan_diameter)
    return calibrate(forward, starts=starts, seed=seed, sample=sample, progress=progress, client=client)
