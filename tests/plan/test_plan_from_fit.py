"""A plan that starts from a fit agrees with it.

- The spread before any new instrument equals the fit's: the standard deviation of a log
  parameter rebuilt here from the fit's reported 95 % interval, ``value ln(10) (log10(hi) -
  log10(lo)) / (2 t(0.975, dof))`` (first order; the linearised t interval of Hill & Tiedeman 2007,
  ch. 8, from memory), whatever transform the plan itself uses for the parameter.
- A new instrument carries the fit's misfit: the spread after it is the fit's covariance had the
  instrument been among the fitted data with the same reduced chi-square,
  ``s^2 (J_w^T J_w + j j^T / sigma^2)^-1`` (Hill & Tiedeman 2007, eq. 7-1, from memory), with the
  new datum's sensitivity taken here by central differences of the simulated bed flux.
- The command line finds the fit beside the plan's output, prints every spread with its unit and
  the same standard deviation as the fit's summary, refuses existing instruments the fit already
  used, and ``fit = false`` starts from the scenario's values.
"""
from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import bedflux
from bedflux.cli import main
from bedflux.calibration import fit
from bedflux.calibration.outputs import write_fit
from bedflux.planning import plan
from bedflux.forward.sensitivity import Forward, free_parameters

SCENARIO = {
    "title": "plan column (invented)",
    "grid": {"x": [0.0, 1.0], "bottom": -3.0, "dx": 1.0, "dz": 0.1},
    "ground": {"elevation": 0.0},
    "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 5e-5}, {"name": "bed", "kh": 3e-5, "kv": 1e-5, "depth": 0.4}],
    "stream": {"stage": 0.2}, "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": 0.6}}}
FREE = [{"path": "bed.kv", "low": 1e-8, "high": 1e-3, "start": 2e-5},
        {"path": "sides.bottom.head", "low": -1.0, "high": 3.0, "start": 0.8}]
CANDIDATES = pd.DataFrame({"kind": ["seepage", "piezometer", "piezometer"], "x": 0.5, "depth": [0.0, 0.1, 0.3]})


def observations() -> pd.DataFrame:
    """A metered flux, two gradients and a head, with a fixed invented scatter."""
    s = bedflux.Scenario.from_dict(SCENARIO)
    obs = pd.DataFrame({"kind": ["seepage", "vhg", "vhg", "head"], "x": 0.5, "depth": [0.0, 0.15, 0.25, 0.7],
                        "time": 0.0, "value": 0.0, "sigma": 1.0})
    d = Forward(s, obs, free_parameters(s, FREE[:1])).predict(np.array([math.log10(1e-5)]))
    obs["value"] = d * np.array([1.1, 0.95, 1.05, 1.0]) + np.array([0.0, 0.0, 0.0, 0.01])
    obs["sigma"] = np.array([0.05 * abs(d[0]), 0.05 * abs(d[1]), 0.05 * abs(d[2]), 0.005])
    return obs


@pytest.fixture(scope="module")
def fitted(tmp_path_factory):
    """A fit of the invented data, written to a folder."""
    s = bedflux.Scenario.from_dict(SCENARIO)
    res = fit(s, observations(), FREE)
    folder = tmp_path_factory.mktemp("fit")
    write_fit(res, s, folder)
    return {"fit": (res, folder)}


def fit_sd_from_interval(folder: Path, path: str) -> float:
    d = json.loads((folder / "fit_results.json").read_text())
    lo, hi = d["ci95"][path]
    t = stats.t.ppf(0.975, d["statistics"]["degrees_of_freedom"])
    return d["best"][path] * math.log(10.0) * (math.log10(hi) - math.log10(lo)) / (2.0 * t)


def test_spread_before_equals_the_fits_spread(fitted):
    res, folder = fitted["fit"]
    assert res.statistics["reduced_chi_square"] > 1.0      # the fit's covariance carries its misfit
    lo, hi = res.ci95["bed.kv"]
    assert 1e-8 < lo and hi < 1e-3                          # not clipped by the bounds
    table = plan(bedflux.Scenario.from_dict(SCENARIO), None, CANDIDATES, 2, target="bed.kv", fit=folder)
    assert table.attrs["prior_sd"] == pytest.approx(fit_sd_from_interval(folder, "bed.kv"), rel=1e-9)
    assert table.attrs["unit"] == "m/s" and table.attrs["display_unit"] == "m/d"


def test_spread_before_does_not_depend_on_the_plans_transform(fitted):
    _, folder = fitted["fit"]
    linear = [dict(FREE[0], log=False), FREE[1]]
    table = plan(bedflux.Scenario.from_dict(SCENARIO), linear, CANDIDATES, 1, target="bed.kv", fit=folder)
    assert table.attrs["prior_sd"] == pytest.approx(fit_sd_from_interval(folder, "bed.kv"), rel=1e-9)


def test_new_instrument_carries_the_misfit(fitted):
    """After one seepage meter the plan's spread is the fit's own, had the meter been in the fit
    with its stated sigma and the same reduced chi-square: sqrt(s^2 [(J_w^T J_w + j j^T / sigma^2)^-1]),
    j by central differences of the simulated bed flux (Hill & Tiedeman 2007, eq. 7-1, from memory)."""
    res, folder = fitted["fit"]
    s2 = res.statistics["reduced_chi_square"]
    assert s2 > 1.0
    base = bedflux.Scenario.from_dict(SCENARIO).with_values(res.best)
    kv, head = res.best["bed.kv"], res.best["sides.bottom.head"]
    h = 1e-4

    def flux(**v):
        return float(bedflux.simulate(base.with_values(v))["bed_flux"].values[0])

    j = np.array([(flux(**{"bed.kv": kv * 10**h}) - flux(**{"bed.kv": kv * 10**-h})) / (2 * h),
                  (flux(**{"sides.bottom.head": head + h}) - flux(**{"sides.bottom.head": head - h})) / (2 * h)])
    sigma = 0.3 * abs(flux())                               # the documented meter default, 30 %
    sig_obs = res.residuals["sigma"].to_numpy()
    Jw = res.jacobian / sig_obs[:, None]
    C = s2 * np.linalg.inv(Jw.T @ Jw + np.outer(j, j) / sigma**2)
    expected = math.sqrt(C[0, 0]) * kv * math.log(10.0)
    meter = pd.DataFrame({"kind": ["seepage"], "x": [0.5], "depth": [0.0]})
    table = plan(bedflux.Scenario.from_dict(SCENARIO), None, meter, 1, target="bed.kv", fit=folder)
    assert table["expected_sd"].iloc[0] == pytest.approx(expected, rel=1e-5)
    assert table.attrs["misfit_factor"] == pytest.approx(math.sqrt(s2), rel=1e-12)


SCENARIO_TOML = """title = "plan column (invented)"
[grid]
x = [0.0, 1.0]
bottom = -3.0
dx = 1.0
dz = 0.1
[ground]
elevation = 0.0
[[zone]]
name = "aquifer"
kh = 1e-4
kv = 5e-5
[[zone]]
name = "bed"
kh = 3e-5
kv = 1e-5
depth = 0.4
[stream]
stage = 0.2
[sides]
left = "no-flow"
right = "no-flow"
bottom = {head = 0.6}
"""
FIT_TOML = """scenario = "column.toml"
observations = "obs.csv"
[[free]]
path = "bed.kv"
low = 1e-8
high = 1e-3
start = 2e-5
[[free]]
path = "sides.bottom.head"
low = -1.0
high = 3.0
start = 0.8
"""
PLAN_TOML = """scenario = "column.toml"
n = 2
target = "bed.kv"
{extra}
[candidates]
table = "candidates.csv"
"""


@pytest.fixture(scope="module")
def project(tmp_path_factory):
    root = tmp_path_factory.mktemp("project")
    (root / "column.toml").write_text(SCENARIO_TOML)
    observations().to_csv(root / "obs.csv", index=False)
    (root / "fit.toml").write_text(FIT_TOML)
    CANDIDATES.to_csv(root / "candidates.csv", index=False)
    assert main(["fit", str(root / "fit.toml"), "-o", str(root / "out" / "fit"), "-q"]) == 0
    return root


def run_plan(project: Path, extra: str = "", name: str = "plan") -> tuple[int, Path]:
    (project / "plan.toml").write_text(PLAN_TOML.format(extra=extra))
    out = project / "out" / name
    if out.exists():
        shutil.rmtree(out)
    return main(["plan", str(project / "plan.toml"), "-o", str(out), "-q"]), out


def test_cli_finds_the_fit_beside_and_prints_spreads_with_units(project):
    status, out = run_plan(project)
    assert status == 0
    summary = json.loads((out / "plan_summary.json").read_text())
    assert Path(summary["fit"]) == project / "out" / "fit"
    fit_sd = json.loads((project / "out" / "fit" / "fit_results.json").read_text())["standard_deviation"]["bed.kv"]
    assert summary["prior_sd"] == pytest.approx(fit_sd, rel=1e-9)
    text = (out / "plan_summary.txt").read_text()
    shown = f"{fit_sd * 86400:.3g} m/d"
    assert f"spread before: {shown}" in text
    assert f"standard deviation {shown}" in (project / "out" / "fit" / "fit_summary.txt").read_text()
    picks = [line for line in text.splitlines() if line.startswith("  ") and "spread" in line]
    assert len(picks) == 2 and all(" m/d (" in line for line in picks)


def test_cli_fit_key_and_fit_false(project):
    status, out = run_plan(project, 'fit = "out/fit"', "named")
    assert status == 0 and Path(json.loads((out / "plan_summary.json").read_text())["fit"]) == project / "out" / "fit"
    status, out = run_plan(project, "fit = false\n[[free]]\npath = \"bed.kv\"\nlow = 1e-8\nhigh = 1e-3", "none")
    assert status == 0
    summary = json.loads((out / "plan_summary.json").read_text())
    assert "fit" not in summary and "no fit" in summary["start"]


def test_cli_refuses_existing_instruments_the_fit_used(project, capsys):
    status, out = run_plan(project, 'existing = "obs.csv"', "twice")
    err = capsys.readouterr().err
    assert status == 2 and "plan.toml" in err and "existing" in err and "already in the fit" in err
    assert not out.exists()
