"""Drawing a fit's calibrated values from its posterior (``from_fit = "project/fit"``).

``bedflux fit`` writes ``fit_results.json`` (:func:`bedflux.calibration.outputs.result_dict`)
with the best values, the free parameters (bounds, log transform) and the covariance ``C`` of
the estimate in the estimation space (log10 of the value for log parameters). The linearised
posterior is the Gaussian ``N(m_best, C)`` there (Hill & Tiedeman 2007, ch. 7); a member draws
``m = m_best + A z`` with ``A A^T = C`` (symmetric square root) and ``z`` standard normal, redrawn
while it falls outside the fit's bounds, and maps it back (``10 ** m`` for log parameters).
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from bedflux.errors import InputError

RESULTS = "fit_results.json"
#: redraws allowed before a member takes the nearest point inside the bounds
MAX_REDRAWS = 1000


@dataclass(frozen=True)
class FitPosterior:
    """The linearised posterior of a fit's free parameters."""

    source: str
    paths: tuple[str, ...]
    mean: np.ndarray
    root: np.ndarray
    low: np.ndarray
    high: np.ndarray
    log: np.ndarray

    def best(self) -> dict[str, float]:
        """The fit's best values (SI) by path."""
        value = np.where(self.log, 10.0 ** self.mean, self.mean)
        return {p: float(v) for p, v in zip(self.paths, value)}

    def draw(self, rng: np.random.Generator) -> dict[str, float]:
        """One set of values (SI) by path."""
        for _ in range(MAX_REDRAWS):
            m = self.mean + self.root @ rng.standard_normal(self.mean.size)
            if np.all((m >= self.low) & (m <= self.high)):
                break
        else:
            m = np.clip(m, self.low, self.high)
        value = np.where(self.log, 10.0 ** m, m)
        return {p: float(v) for p, v in zip(self.paths, value)}


def read_fit(folder: str | Path, where: str = "from_fit") -> FitPosterior:
    """The posterior of the fit whose outputs are in ``folder``.

    Raises
    ------
    InputError
        If the folder has no ``fit_results.json`` of ``bedflux fit``, or the fit could not bound a
        parameter (its covariance entry is null: the data do not see it).
    """
    path = Path(folder) / RESULTS
    if not path.is_file():
        raise InputError(f"no {RESULTS} in {folder}; run bedflux fit with -o {folder} first, or give the "
                         "parameters as [[uncertain]] distributions", where=where)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        free = data["free"]
        best = data["best"]
        cov = data["covariance_estimation_space"]
    except (OSError, ValueError, KeyError, TypeError):
        raise InputError(f"{path} is not the results file of bedflux fit (free, best and "
                         "covariance_estimation_space are needed); run bedflux fit again", where=where) from None
    paths = tuple(str(f["path"]) for f in free)
    log = np.array([bool(f.get("log")) for f in free])
    c = np.array([[np.nan if v is None else float(v) for v in row] for row in cov], dtype=float)
    unseen = [p for p, row in zip(paths, c) if not np.all(np.isfinite(row))]
    if unseen:
        raise InputError(f"the fit in {folder} could not bound {', '.join(unseen)} (the data do not see it); "
                         "give it as an [[uncertain]] distribution instead", where=where)
    best_si = np.array([float(best[p]) for p in paths])
    mean = np.where(log, np.log10(np.where(log, best_si, 1.0)), best_si)
    w, v = np.linalg.eigh(0.5 * (c + c.T))
    root = v @ np.diag(np.sqrt(np.clip(w, 0.0, None))) @ v.T
    lo = np.array([_internal(f.get("low"), lg, -math.inf) for f, lg in zip(free, log)])
    hi = np.array([_internal(f.get("high"), lg, math.inf) for f, lg in zip(free, log)])
    return FitPosterior(str(path), paths, mean, root, lo, hi, log)


def _internal(value, log: bool, default: float) -> float:
    if value is None:
        return default
    return math.log10(value) if log else float(value)
