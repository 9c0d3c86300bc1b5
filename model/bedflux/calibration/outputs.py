"""Writing the results of a calibration: tables, figures and the calibrated scenario."""
from __future__ import annotations

import copy
import json
import shutil
from pathlib import Path

import numpy as np
import tomli_w

from bedflux.outputs.atomic import write_text, write_with
from bedflux.outputs.files import referenced_files
from bedflux.scenario.spec import Scenario
from bedflux.calibration.display import display_unit, with_unit
from bedflux.calibration.estimate import FitResult


def _finite_or_none(a: np.ndarray) -> list:
    """A matrix as nested lists with null where it is not finite (JSON has no NaN or infinity)."""
    return [[float(v) if np.isfinite(v) else None for v in row] for row in np.asarray(a, dtype=float)]


def result_dict(result: FitResult, scenario: Scenario | None = None) -> dict:
    """The results file content (SI), with what ``bedflux plan`` needs to start from the fit:
    the calibrated values, the free parameters (bounds, transform), the covariance behind the
    intervals and the reduced chi-square."""
    return {
        "best": result.best,
        "ci95": {k: list(v) for k, v in result.ci95.items()},
        "standard_deviation": result.standard_deviation,
        "parameters": result.paths,
        "free": [{"path": q.path, "low": q.low, "high": q.high, "log": q.log} for q in result.free],
        "at_bound": result.at_bound,
        "covariance_estimation_space": _finite_or_none(result.covariance),
        "correlation": np.round(result.correlation, 6).tolist(),
        "standard_error_estimation_space": np.sqrt(np.clip(np.diag(result.covariance), 0, None)).tolist(),
        "composite_scaled_sensitivity": result.scaled_sensitivity,
        "singular_values": result.singular_values.tolist(),
        "singular_vectors": np.round(result.singular_vectors, 6).tolist(),
        "verdicts": result.verdicts,
        "statistics": result.statistics,
        "starts": result.starts,
        "n_forward_runs": result.n_forward_runs,
        "posterior": result.posterior,
        "bound_notes": result.bound_notes,
        "scenario_title": None if scenario is None else scenario.title,
        "transient": result.transient,
        "notes": {
            "estimation_space": "log10 of the value for log parameters",
            "intervals": "linearised, t-based with the residual variance (Hill & Tiedeman 2007)",
            "covariance": "s^2 (J_w^T J_w + P)^-1 in the estimation space with s^2 = reduced_chi_square: the "
                          "covariance behind the intervals (null: unbounded, the data do not see it)",
            "standard_deviation": "first order, SI: sqrt(C_jj) times d(value)/d(estimation-space value)",
            "aic_bic": "n ln(S/n) + 2p and n ln(S/n) + p ln n, S the weighted sum of squares",
        },
    }


def _spread(path: str, sd: float) -> str:
    """A standard deviation in the display unit of ``path``."""
    factor, unit = display_unit(path)
    return f"{sd * factor:.3g} {unit}".rstrip() if np.isfinite(sd) else "unbounded"


def fit_summary_text(result: FitResult) -> str:
    """Plain lines: best values with intervals and standard deviations in display units,
    verdicts (a parameter stopped on a bound says so), fit statistics."""
    st = result.statistics
    rchi = st["reduced_chi_square"]
    lines = [f"calibration: {st['n_observations']} observations, {st['n_parameters']} parameters",
             f"weighted sum of squares {st['weighted_sum_of_squares']:.4g}, reduced chi-square {rchi:.3g} "
             f"(the intervals are scaled by its square root, {np.sqrt(rchi):.3g}), "
             f"AIC {st['aic']:.4g}, BIC {st['bic']:.4g}"]
    for p in result.paths:
        lo, hi = result.ci95[p]
        sd = result.standard_deviation.get(p, float("nan"))
        lines.append(f"  {p} = {with_unit(p, result.best[p])} (95 %: {with_unit(p, lo)} to {with_unit(p, hi)}; "
                     f"standard deviation {_spread(p, sd)}) -- {result.verdicts[p]}")
    for note in result.at_bound.values():
        lines.append(f"  note: {note}")
    lines.append(f"forward runs: {result.n_forward_runs}")
    return "\n".join(lines) + "\n"


def _differing_key(a, b) -> list | None:
    """The key path (keys and list indices) of the scalar where two raw scenarios differ."""
    if isinstance(a, dict) and isinstance(b, dict):
        for key in a:
            sub = _differing_key(a[key], b.get(key))
            if sub is not None:
                return [key] + sub
        return None
    if isinstance(a, list) and isinstance(b, list) and len(a) == len(b):
        for i, (x, y) in enumerate(zip(a, b)):
            sub = _differing_key(x, y)
            if sub is not None:
                return [i] + sub
        return None
    return None if a == b else []


def _commented_toml(raw: dict, scenario: Scenario, result: FitResult) -> str:
    """TOML of ``raw`` with a comment beside each value that stopped on a bound."""
    raw = copy.deepcopy(raw)
    marks = {}
    for q in result.free:
        note = result.at_bound.get(q.path)
        if not note:
            continue
        # where the path lives in the raw tables: the one value that differs between two settings
        where = _differing_key(scenario.with_values({q.path: q.low}).raw, scenario.with_values({q.path: q.high}).raw)
        node = raw
        for key in where[:-1]:
            node = node[key]
        mark = f"@bedflux-bound-{len(marks)}@"
        marks['"' + mark + '"'] = (node[where[-1]], note)
        node[where[-1]] = mark
    lines = tomli_w.dumps(raw).splitlines()
    for quoted, (value, note) in marks.items():
        literal = tomli_w.dumps({"v": value}).split("=", 1)[1].strip()
        # a line ends after a key-value pair or after an element of a multi-line array (an
        # inline table is one line): a comment is allowed there
        lines = [f"{line.replace(quoted, literal)}  # {note}" if quoted in line else line for line in lines]
    return "\n".join(lines) + "\n"


def calibrated_scenario(scenario: Scenario, result: FitResult, outdir: Path) -> Path:
    """Write the scenario with the best values as ``calibrated.toml`` (with its CSV inputs); a
    value that stopped on a bound carries its note beside it (a TOML comment) and at the top."""
    best = scenario.with_values(result.best)
    raw = dict(best.raw)
    raw["title"] = f"{scenario.title} (calibrated)"
    base = Path(scenario.base_dir)
    for name in referenced_files(scenario):
        dest = outdir / name
        dest.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(base / name, dest)
    target = outdir / "calibrated.toml"
    head = "# written by bedflux fit: the scenario with the calibrated values\n"
    head += "".join(f"# NOTE {note}\n" for note in result.at_bound.values())
    write_text(target, head + _commented_toml(raw, scenario, result))
    return target


def write_fit(result: FitResult, scenario: Scenario, outdir: Path) -> None:
    """All outputs of ``bedflux fit`` into ``outdir`` (a staging folder)."""
    from bedflux.outputs import figures as plots

    write_text(outdir / "fit_results.json",
               json.dumps(result_dict(result, scenario), indent=2, allow_nan=True) + "\n")
    write_with(outdir / "residuals.csv", lambda tmp: result.residuals.to_csv(tmp, index=False))
    write_text(outdir / "fit_summary.txt", fit_summary_text(result))
    calibrated_scenario(scenario, result, outdir)
    plots.observed_vs_simulated(result.residuals, outdir / "observed_vs_simulated.png")
    plots.residual_figure(result.residuals, outdir / "residuals.png", steady=not scenario.transient)
    plots.parameter_intervals(result, outdir / "parameter_intervals.png")
