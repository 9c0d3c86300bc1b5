"""Planning the next campaign: where new seepage meters and piezometers teach the most."""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..observe import check_observations
from ..callable_package import call_as
from ..scenario import Scenario
from ..sensitivity import Forward, FreeParameter, free_parameters
from ..errors import InputError
from .candidates import DEFAULT_MAX_DEPTH, Instruments, as_observations, check_candidates
from .targets import parse_target, target_gradient, to_natural
from .worth import add_one, greedy, posterior, target_spread

__all__ = ["plan", "prior_covariance"]


def prior_covariance(free: list[FreeParameter]) -> np.ndarray:
    """Diagonal prior covariance in the estimation space: ``prior_sd`` where given (converted to
    decades for log parameters), else a quarter of the range between the bounds (the bounds taken
    as a 95 % range: common practice)."""
    sd = []
    for p in free:
        if p.prior_sd is not None:
            sd.append(p.prior_sd / (p.prior * np.log(10.0)) if p.log else p.prior_sd)
        else:
            sd.append((p.internal(p.high) - p.internal(p.low)) / 4.0)
    return np.diag(np.square(sd))


def _candidate_time(scenario: Scenario) -> float:
    """Default reading time: 0 for a steady run, else when the stage departs most from its start."""
    if not scenario.transient or scenario.stream is None:
        return 0.0
    t = np.linspace(0.0, scenario.time.end, 2001)
    s = scenario.stream.stage(t)
    return float(t[int(np.argmax(np.abs(s - s[0])))])


def plan(scenario: Scenario, free: list[dict], candidates: pd.DataFrame, n: int, target: str = "parameters", *,
         existing: pd.DataFrame | None = None, instruments: Instruments = Instruments(), min_spacing: float = 0.0,
         max_per_transect: int | None = None, length: float | None = None,
         pan_diameter: float = 0.57, max_depth: float = DEFAULT_MAX_DEPTH, source: str = "plan") -> pd.DataFrame:
    """Rank ``n`` new instruments by the expected reduction of the target's uncertainty.

    Parameters
    ----------
    scenario
        The (calibrated) scenario; its values are the linearisation point.
    free
        As in :func:`bedflux.fit.fit` (SI dicts with path, low, high and optional prior, prior_sd).
    candidates
        ``kind`` (seepage or piezometer), ``x``, ``depth``, optional ``sigma`` (SI), ``transect``,
        ``time`` (s; default 0, or the stage peak of a transient run).
    n
        Number of instruments to choose.
    target
        See :mod:`bedflux.plan.targets`.
    existing
        Instruments already in place (an observation table): kept, their information counted.
    min_spacing
        Least distance (m) between two new instruments of the same kind.
    max_per_transect
        At most this many new instruments with the same ``transect`` label.

    Returns
    -------
    DataFrame
        Ranked picks: ``rank, kind, x, depth, expected_sd, reduction`` (expected_sd of the target
        after the pick, in its natural units; reduction: fraction of the spread it removes).
        ``.attrs`` holds the target, the spread before any pick and the single-instrument curve.
    """
    fp = free_parameters(scenario, free, source)
    cand = check_candidates(candidates, f"{source}: candidates", max_depth)
    t_read = _candidate_time(scenario)
    times = pd.to_numeric(cand["time"], errors="coerce").fillna(t_read).to_numpy() if "time" in cand else t_read
    obs = as_observations(cand, 0.0)
    obs["time"] = times
    forward = Forward(scenario, obs, fp, pan_diameter, source=f"{source}: candidates")
    m = forward.start()
    d, J = forward.predict_and_jacobian(m)
    sigma = instruments.sigma(cand, d)
    C0 = prior_covariance(fp)
    if existing is not None and len(existing):
        ex = check_observations(existing, f"{source}: existing instruments")
        fe = Forward(scenario, ex, fp, pan_diameter, source=f"{source}: existing instruments")
        Je = fe.jacobian(m)
        C0 = posterior(C0, Je, ex["sigma"].to_numpy())
    tgt = parse_target(target, [p.path for p in fp], length, source)
    if tgt.kind == "reversal":
        if not scenario.transient:
            raise InputError("a reversal target needs a transient scenario (a [time] table)", source=source,
                             where="target")
        x0, x1 = scenario.grid.x0, scenario.grid.x1
        if not (np.isfinite(tgt.x) and x0 <= tgt.x <= x1):
            raise InputError(f"reversal:{tgt.x:g} is not a column of the section ({x0:g} to {x1:g} m)",
                             source=source, where="target")
    g, value = target_gradient(forward, tgt, m)
    labels = cand["transect"].astype(str).to_numpy()
    xs = cand["x"].to_numpy()
    kinds = cand["kind"].to_numpy()

    def allowed(i: int, chosen: list[int]) -> bool:
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
    })
    single = np.array([target_spread(add_one(C0, J[i], sigma[i]), g) for i in range(len(cand))])
    table.attrs.update({
        "target": tgt.label(), "target_value": value,
        "prior_sd": to_natural(forward, tgt, m, target_spread(C0, g)),
        "single_x": xs.tolist(), "single_kind": kinds.tolist(), "single_depth": cand["depth"].tolist(),
        "single_sd": [to_natural(forward, tgt, m, s) for s in single],
        "reading_time": float(np.max(times)) if np.ndim(times) else float(times),
    })
    return table


call_as(__name__, plan)
