"""Calibration: fit scenario parameters to observed heads, gradients and seepage fluxes."""
from __future__ import annotations

from typing import Callable

import pandas as pd

from ..observe import DEFAULT_PAN_DIAMETER
from ..callable_package import call_as
from ..scenario import Scenario
from ..sensitivity import Forward, free_parameters
from .estimate import FitResult, calibrate

__all__ = ["fit", "FitResult"]


def fit(scenario: Scenario, observations: pd.DataFrame, free: list[dict], *,
        pan_diameter: float = DEFAULT_PAN_DIAMETER, starts: int = 1, seed: int = 0, sample: int = 0,
        progress: Callable[[str], None] | None = None) -> FitResult:
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

    Returns
    -------
    FitResult
        ``.best``, ``.ci95``, ``.covariance``, ``.correlation``, ``.residuals``, ``.jacobian``,
        ``.n_forward_runs``, statistics, sensitivities and verdicts.
    """
    forward = Forward(scenario, observations, free_parameters(scenario, free), pan_diameter)
    return calibrate(forward, starts=starts, seed=seed, sample=sample, progress=progress)


call_as(__name__, fit)
