"""Starting a plan from a calibration: the fit's values, its covariance and its misfit.

A fit output folder (``bedflux fit -o FOLDER``) holds ``fit_results.json`` with the calibrated
values, the free parameters (bounds and transform), the covariance behind the fit's intervals
(estimation space, already scaled by the reduced chi-square ``s^2``) and ``s^2`` itself, and
``residuals.csv`` with the observations the fit used.

The plan's covariance before any new instrument is that covariance, carried into the plan's
estimation space (a parameter may be log10 in one and linear in the other:
``C_plan = D C_fit D`` with ``D_jj = d(plan value)/d(fit value)``), so the plan's spread before
equals the fit's spread. A plan parameter the fit did not estimate, or did not see (unbounded
variance), keeps the plan's own prior, uncorrelated. The fit's misfit is carried to the new
instruments as well: when ``s^2 > 1`` their error spreads are multiplied by ``s`` (the model
explains the new data no better than the old), so that the plan's "after" is the fit's
covariance after the new data.
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from bedflux.errors import InputError
from bedflux.forward.sensitivity import FreeParameter

#: The file that marks a fit output folder.
RESULTS = "fit_results.json"


@dataclass(frozen=True)
class FitStart:
    """What a plan takes from a fit (values SI; covariance in the fit's estimation space)."""

    folder: Path
    paths: list[str]
    best: dict[str, float]
    log: dict[str, bool]
    bounds: dict[str, tuple[float, float]]
    covariance: np.ndarray
    reduced_chi_square: float
    at_bound: dict[str, str] = field(default_factory=dict)
    scenario_title: str | None = None
    observations: pd.DataFrame | None = None

    @property
    def misfit_factor(self) -> float:
        """Factor on the error spreads of new instruments: ``sqrt(s^2)`` when above 1, else 1."""
        return math.sqrt(max(self.reduced_chi_square, 1.0))

    def free(self) -> list[dict]:
        """The fit's free parameters as plan ``free`` dicts (SI)."""
        return [{"path": p, "low": self.bounds[p][0], "high": self.bounds[p][1], "log": self.log[p]}
                for p in self.paths]


def is_fit_folder(folder: Path) -> bool:
    """True if ``folder`` holds the outputs of ``bedflux fit``."""
    return (folder / RESULTS).is_file()


def read_fit(folder: str | Path, source: str = "plan", where: str = "fit") -> FitStart:
    """Read a fit output folder.

    Raises
    ------
    InputError
        Naming ``source`` and ``where`` when the folder or its results are missing, or the results
        lack what a plan needs (written by an older bedflux: run the fit again).
    """
    folder = Path(folder)
    if not is_fit_folder(folder):
        raise InputError(f"'{folder}' is not a fit output folder (no {RESULTS}; run bedflux fit -o {folder})",
                         source=source, where=where)
    try:
        d = json.loads((folder / RESULTS).read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as err:
        raise InputError(f"{folder / RESULTS} is not readable JSON: {err}", source=source, where=where) from None
    need = ("best", "parameters", "free", "covariance_estimation_space", "statistics")
    missing = [k for k in need if k not in d]
    if missing or "reduced_chi_square" not in (d.get("statistics") or {}):
        raise InputError(f"{folder / RESULTS} lacks {', '.join(missing) or 'the reduced chi-square'}; "
                         "run bedflux fit again to write what a plan needs", source=source, where=where)
    paths = list(d["parameters"])
    cov = np.array([[np.inf if v is None else float(v) for v in row] for row in d["covariance_estimation_space"]])
    free = {f["path"]: f for f in d["free"]}
    observations = None
    if (folder / "residuals.csv").is_file():
        observations = pd.read_csv(folder / "residuals.csv")
    return FitStart(folder, paths, {p: float(d["best"][p]) for p in paths},
                    {p: bool(free[p]["log"]) for p in paths},
                    {p: (float(free[p]["low"]), float(free[p]["high"])) for p in paths},
                    cov, float(d["statistics"]["reduced_chi_square"]), dict(d.get("at_bound") or {}),
                    d.get("scenario_title"), observations)


def covariance_from_fit(fit: FitStart, free: list[FreeParameter], fallback: np.ndarray) -> np.ndarray:
    """The covariance of the plan's parameters (plan estimation space) before any new instrument.

    Parameters
    ----------
    fit
        The fit to start from.
    free
        The plan's free parameters (their values are the fit's best where the fit has them).
    fallback
        The plan's own prior covariance, used for parameters the fit did not estimate or see.
    """
    C = np.array(fallback, dtype=float, copy=True)
    idx = [(j, fit.paths.index(p.path)) for j, p in enumerate(free) if p.path in fit.paths]
    seen = [(j, k) for j, k in idx if np.isfinite(fit.covariance[k, k])]
    for j, k in seen:
        C[j, :] = 0.0
        C[:, j] = 0.0
    scale = {}
    for j, k in seen:
        value = fit.best[free[j].path]
        # d(plan internal)/d(value) * d(value)/d(fit internal)
        to_plan = 1.0 / (value * math.log(10.0)) if free[j].log else 1.0
        from_fit = value * math.log(10.0) if fit.log[free[j].path] else 1.0
        scale[j] = to_plan * from_fit
    for j, k in seen:
        for i, l in seen:
            C[j, i] = scale[j] * fit.covariance[k, l] * scale[i]
    return C


def fits_beside(scenario_path: Path | None, output: Path | None, title: str) -> list[Path]:
    """Fit output folders found beside a plan: the folder of its scenario (a ``calibrated.toml``
    in a fit's outputs), else the siblings of the plan's output folder that hold a fit of a
    scenario with the same title."""
    if scenario_path is not None and is_fit_folder(scenario_path.parent):
        return [scenario_path.parent]
    if output is None or not output.parent.is_dir():
        return []
    found = []
    for sibling in sorted(output.parent.iterdir()):
        if sibling.is_dir() and sibling.resolve() != output.resolve() and is_fit_folder(sibling):
            try:
                fitted = json.loads((sibling / RESULTS).read_text(encoding="utf-8")).get("scenario_title")
            except (json.JSONDecodeError, UnicodeDecodeError):
                continue
            if fitted is not None and fitted in (title, title.removesuffix(" (calibrated)")):
                found.append(sibling)
    return found


def overlap_with_fit(existing: pd.DataFrame, fit: FitStart) -> int | None:
    """The index of the first existing instrument whose reading the fit already used, or None."""
    if fit.observations is None or existing is None or not len(existing):
        return None
    used = fit.observations
    for i, row in enumerate(existing.itertuples(index=False)):
        same = ((used["kind"] == row.kind) & np.isclose(used["x"], row.x, rtol=0, atol=1e-9)
                & np.isclose(used["depth"], row.depth, rtol=0, atol=1e-9)
                & np.isclose(used["value"], row.value, rtol=1e-9, atol=0))
        if same.any():
            return i
    return None
