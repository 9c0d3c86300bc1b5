"""Planning the next campaign: where new seepage meters, piezometers and temperature logger pairs teach
the most."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from bedflux.forward.observe import check_observations
from bedflux.scenario.spec import Scenario
from bedflux.forward.sensitivity import Forward, FreeParameter, free_parameters
from bedflux.errors import InputError
from bedflux.planning.candidates import (DEFAULT_LOGGER_MAX_DEPTH, DEFAULT_MAX_DEPTH, Instruments, as_observations,
                                         check_candidates)
from bedflux.planning.fit_start import FitStart, covariance_from_fit, overlap_with_fit, read_fit
from bedflux.planning.reading import default_reading_time, describe_reading
from bedflux.planning.targets import parse_target, target_gradient, to_natural
from bedflux.planning.worth import add_one, greedy, posterior, target_spread

__all__ = ["plan", "prior_covariance"]


def prior_covariance(free: list[FreeParameter]) -> np.ndarray:
    """Diagonal prior covariance in the estimation space: ``prior_sd`` where given (converted to
    decades for log parameters), else a quarter of the range between the bounds (the bounds taken
    as a 95 % range: common practice)."""
    sd = []
    for p in free:
        if p.prior_sd is not None:
            sd.append(p.prior_spread())
        else:
            sd.append((p.internal(p.high) - p.internal(p.low)) / 4.0)
    return np.diag(np.square(sd))


def plan(scenario: Scenario, free: list[dict] | None, candidates: pd.DataFrame, n: int, target: str = "parameters",
         *, existing: pd.DataFrame | None = None, instruments: Instruments = Instruments(), min_spacing: float = 0.0,
         max_per_transect: int | None = None, length: float | None = None,
         pan_diameter: float = 0.57, max_depth: float = DEFAULT_MAX_DEPTH, fit: FitStart | str | Path | None = None,
         reading_time: float | None = None, logger_max_depth: float = DEFAULT_LOGGER_MAX_DEPTH,
         source: str = "plan", client=None) -> pd.DataFrame:
    """Rank ``n`` new instruments by the expected reduction of the target's uncertainty.

    Parameters
    ----------
    scenario
        The scenario; its values are the linearisation point (with ``fit``: the fit's values).
    free
        As in :func:`bedflux.calibration.fit` (SI dicts with path, low, high and optional prior, prior_sd);
        with ``fit`` it may be None (the fit's free parameters).
    candidates
        ``kind`` (seepage, piezometer or logger_pair), ``x``, ``depth``, optional ``sigma`` (SI),
        ``transect``, ``time`` (s; default ``reading_time``), for logger pairs ``shallow_depth`` and
        ``deep_depth`` (m below the bed; default 0.05 and 0.15 m; ``depth`` becomes their mid-depth).
    n
        Number of instruments to choose.
    target
        See :mod:`bedflux.planning.targets`.
    existing
        Instruments already in place and not in the fit (an observation table): kept, their
        information counted.
    min_spacing
        Least distance (m) between two new instruments of the same kind.
    max_per_transect
        At most this many new instruments with the same ``transect`` label.
    fit
        A fit output folder (or its :class:`~bedflux.planning.fit_start.FitStart`): start from its
        calibrated values and the covariance behind its intervals, and carry its misfit to the
        new instruments (see :mod:`bedflux.planning.fit_start`).
    reading_time
        When a transient scenario's instruments are read (s; default: when the stage departs most
        from its start). Not allowed for a steady scenario.
    logger_max_depth
        Deepest sensor of a logger pair (m below the bed).
    client
        A ``dask.distributed`` client: the perturbed runs behind a prediction target's gradient
        run as tasks on its workers, with the same numbers as without one (None: in this process).

    Returns
    -------
    DataFrame
        Ranked picks: ``rank, kind, x, depth, expected_sd, reduction, sigma, simulated,
        shallow_depth, deep_depth`` (expected_sd of the target after the pick, in its natural units;
        reduction: fraction of the spread it removes; sensor depths of logger pairs, else NaN).
        ``.attrs`` holds the target and its units, the spread before any pick, the
        single-instrument curve, where the plan started, the reading times and stages, warnings.
    """
    if fit is not None and not isinstance(fit, FitStart):
        fit = read_fit(fit, source)
    factor = 1.0
    if fit is not None:
        try:
            scenario = scenario.with_values(fit.best)
        except InputError as err:
            raise InputError(f"the fit in {fit.folder} does not fit this scenario: {err.message}", source=source,
                             where="fit") from None
        free = free or fit.free()
        free = [dict(f, start=fit.best[f["path"]]) if f["path"] in fit.best else f for f in free]
        factor = fit.misfit_factor
    if not free:
        raise InputError("no free parameters: give [[free]] tables or a fit", source=source)
    fp = free_parameters(scenario, free, source)
    cand = check_candidates(candidates, f"{source}: candidates", max_depth, logger_max_depth)
    instruments = instruments.for_scenario(scenario)
    if reading_time is not None:
        if not scenario.transient:
            raise InputError("a steady scenario has no clock: reading_time applies to transient scenarios only",
                             source=source, where="reading_time")
        if not 0.0 <= reading_time <= scenario.time.end:
            raise InputError(f"reading_time = {reading_time:g} s lies outside the run [0, {scenario.time.end:g}] s",
                             source=source, where="reading_time")
    t_read = default_reading_time(scenario) if reading_time is None else float(reading_time)
    times = (pd.to_numeric(cand["time"], errors="coerce").fillna(t_read).to_numpy() if "time" in cand
             else np.full(len(cand), t_read))
    obs = as_observations(cand, 0.0)
    obs["time"] = times
    forward = Forward(scenario, obs, fp, pan_diameter, source=f"{source}: candidates")
    m = forward.start()
    d, J = forward.predict_and_jacobian(m)
    sigma = instruments.sigma(cand, d) * factor
    C0 = prior_covariance(fp)
    if fit is not None:
        C0 = covariance_from_fit(fit, fp, C0)
    if existing is not None and len(existing):
        ex = check_observations(existing, f"{source}: existing instruments", scenario.transient)
        if fit is not None:
            i = overlap_with_fit(ex, fit)
            if i is not None:
                raise InputError(f"existing instrument {i + 1} ({ex['kind'].iloc[i]} at x = {ex['x'].iloc[i]:g} m) is "
                                 f"already in the fit in {fit.folder}; list under existing only instruments the "
                                 "fit did not use", source=source, where="existing")
        fe = Forward(scenario, ex, fp, pan_diameter, source=f"{source}: existing instruments")
        Je = fe.jacobian(m)
        C0 = posterior(C0, Je, ex["sigma"].to_numpy() * factor)
    tgt = parse_target(target, [p.path for p in fp], length, source)
    if tgt.kind == "reversal":
        if not scenario.transient:
            raise InputError("a reversal target needs a transient scenario (a [time] table)", source=source,
                             where="target")
        x0, x1 = scenario.grid.x0, scenario.grid.x1
        if not (np.isfinite(tgt.x) and x0 <= tgt.x <= x1):
            raise InputError(f"reversal:{tgt.x:g} is not a column of the section ({x0:g} to {x1:g} m)",
                             source=source, where="target")
    g, value = target_gradient(forward, tgt, m, client=client)
    labels = cand["transect"].astype(str).to_numpy()
    xs = cand["x"].to_numpy()
    kinds = cand["kind"].to_numpy()

    def allowed(i: int, chosen: list[int]) -> bool:
        if not np.isfinite(sigma[i]):
            return False
        for c in chosen:
            if kinds[c] == kinds[i] and abs(xs[c] - xs[i]) < min_spacing:
                return False
        if max_per_transect is not None and labels[i]:
            if sum(labels[c] == labels[i] for c in chosen) >= max_per_transect:
                return False
        return True

    picks = greedy(C0, J, sigma, n, g, allowed)
    table = pd.DataFrame({
        "rank": np.arange(1, len(picks) + 1),
        "kind": [kinds[p.index] for p in picks],
        "x": [xs[p.index] for p in picks],
        "depth": [cand["depth"].iloc[p.index] for p in picks],
        "expected_sd": [to_natural(forward, tgt, m, p.after) for p in picks],
        "reduction": [p.reduction for p in picks],
        "sigma": [sigma[p.index] for p in picks],
        "simulated": [d[p.index] for p in picks],
        "shallow_depth": [cand["shallow_depth"].iloc[p.index] for p in picks],
        "deep_depth": [cand["deep_depth"].iloc[p.index] for p in picks],
    })
    single = np.array([target_spread(add_one(C0, J[i], sigma[i]), g) for i in range(len(cand))])
    si_unit, display_factor, display = tgt.units()
    reading = describe_reading(scenario, times)
    warnings = list(reading.warnings)
    unreadable = int(np.sum((kinds == "logger_pair") & ~np.isfinite(sigma)))
    if unreadable:
        warnings.append(f"{unreadable} logger-pair candidate(s) left out: at the flux predicted there the daily "
                        "temperature wave at the deep sensor is too damped to read (strong upward flow) or not "
                        "damped at all (strong downward flow); try shallower or closer sensors")
    if fit is not None:
        warnings += [f"in the fit, {note}; the plan's spread for it is linearised at that bound"
                     for p, note in fit.at_bound.items() if p in [q.path for q in fp]]
    table.attrs.update({
        "target": tgt.label(), "target_value": value,
        "unit": si_unit, "display_factor": display_factor, "display_unit": display,
        "prior_sd": to_natural(forward, tgt, m, target_spread(C0, g)),
        "single_x": xs.tolist(), "single_kind": kinds.tolist(), "single_depth": cand["depth"].tolist(),
        "single_sd": [to_natural(forward, tgt, m, s) for s in single],
        "reading_time": max(reading.times), "reading_times": reading.times, "reading_stages": reading.stages,
        "reading": reading.text, "warnings": warnings,
        "start": (f"the fit in {fit.folder}: its calibrated values and the covariance behind its intervals "
                  f"(reduced chi-square {fit.reduced_chi_square:.3g}; new instruments' error spreads times "
                  f"{factor:.3g})" if fit is not None else
                  "the scenario's values and the prior of the free parameters (no fit)"),
        "fit": None if fit is None else str(fit.folder),
        "fit_reduced_chi_square": None if fit is None else fit.reduced_chi_square,
        "misfit_factor": factor,
    })
    return table

