"""Writing the results of a calibration: tables, figures and the calibrated scenario."""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import tomli_w

from ..atomic import write_text, write_with
from ..io import referenced_files
from ..scenario import Scenario
from .estimate import FitResult


def result_dict(result: FitResult) -> dict:
    """The results file content (SI)."""
    return {
        "best": result.best,
        "ci95": {k: list(v) for k, v in result.ci95.items()},
        "parameters": result.paths,
        "correlation": np.round(result.correlation, 6).tolist(),
        "standard_error_estimation_space": np.sqrt(np.clip(np.diag(result.covariance), 0, None)).tolist(),
        "composite_scaled_sensitivity": result.css,
        "singular_values": result.singular_values.tolist(),
        "singular_vectors": np.round(result.singular_vectors, 6).tolist(),
        "verdicts": result.verdicts,
        "statistics": result.statistics,
        "starts": result.starts,
        "n_forward_runs": result.n_forward_runs,
        "posterior": result.posterior,
        "bound_notes": result.bound_notes,
        "notes": {
            "estimation_space": "log10 of the value for log parameters",
            "intervals": "linearised, t-based with the residual variance (Hill & Tiedeman 2007)",
            "aic_bic": "n ln(S/n) + 2p and n ln(S/n) + p ln n, S the weighted sum of squares",
        },
    }


def summary_text(result: FitResult) -> str:
    """Plain lines: best values with intervals, verdicts, fit statistics."""
    st = result.statistics
    lines = [f"calibration: {st['n_observations']} observations, {st['n_parameters']} parameters",
             f"weighted sum of squares {st['weighted_sum_of_squares']:.4g}, reduced {st['reduced_chi_square']:.3g}, "
             f"AIC {st['aic']:.4g}, BIC {st['bic']:.4g}"]
    for p in result.paths:
        lo, hi = result.ci95[p]
        lines.append(f"  {p} = {result.best[p]:.4g} (95 %: {lo:.3g} to {hi:.3g}) -- {result.verdicts[p]}")
    lines.append(f"forward runs: {result.n_forward_runs}")
    return "\n".join(lines) + "\n"


def calibrated_scenario(scenario: Scenario, result: FitResult, outdir: Path) -> Path:
    """Write the scenario with the best values as ``calibrated.toml`` (with its CSV inputs)."""
    best = scenario.with_values(result.best)
    raw = dict(best.raw)
    raw["title"] = f"{scenario.title} (calibrated)"
    base = Path(scenario.base_dir)
    for name in referenced_files(scenario):
        dest = outdir / name
        dest.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(base / name, dest)
    target = outdir / "calibrated.toml"
    text = "# written by bedflux fit: the scenario with the calibrated values\n" + tomli_w.dumps(raw)
    write_text(target, text)
    return target


def write_fit(result: FitResult, scenario: Scenario, outdir: Path) -> None:
    """All outputs of ``bedflux fit`` into ``outdir`` (a staging folder)."""
    from .. import plots

    write_text(outdir / "fit_results.json", json.dumps(result_dict(result), indent=2, allow_nan=True) + "\n")
    write_with(outdir / "residuals.csv", lambda tmp: result.residuals.to_csv(tmp, index=False))
    write_text(outdir / "fit_summary.txt", summary_text(result))
    calibrated_scenario(scenario, result, outdir)
    plots.observed_vs_simulated(result.residuals, outdir / "observed_vs_simulated.png")
    plots.residual_figure(result.residuals, outdir / "residuals.png")
    plots.parameter_intervals(result, outdir / "parameter_intervals.png")
