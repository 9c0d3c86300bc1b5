"""Planning with temperature logger pairs beside seepage meters and piezometers.

Sources:
- Stallman (1965) periodic solution with steady vertical flow, written as in Hatch et al. (2006,
  eq. 3 and 6 with the thermal front velocity v = q rho_w c_w / (rho c), positive downward):
  T(z, t) = T0 + A exp(-a z) cos(w t - b z), a = (sqrt((alpha + v^2)/2) - v) / (2 k),
  b = sqrt((alpha - v^2)/2) / (2 k), alpha = sqrt(v^4 + (8 pi k / P)^2). Coded here again, apart
  from the package, to make the record the field estimator reduces.
- Monte Carlo spread: the field estimator reports half the central 68 % range of N samples; for a
  normal spread its relative standard error is about 0.96 / sqrt(N) (asymptotic variance of
  sample quantiles, p (1 - p) / (N f(x_p)^2), and their covariance; e.g. Stuart & Ord, Kendall's
  Advanced Theory of Statistics, vol. 1, ch. 10; from memory). The planning table uses N = 2000
  (2.1 %), the check here N = 20000 (0.7 %): 3 combined standard errors are 7 %.
- Linear-Gaussian posterior in the information form, C' = (G^T C_D^-1 G + C_M^-1)^-1 (Tarantola
  2005, Inverse Problem Theory, eq. 3.38, from memory), with G by central differences of the
  forward model's predictions in the test, independent of the analytic sensitivities.
- Instrument defaults of docs/planning.md (common practice): meter max(30 % |q|, 0.01 m/d),
  piezometer 0.1 mm / depth.
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.cli import main
from bedflux.field.thermal import flux_from_temperature
from bedflux.field.thermal_properties import SEDIMENTS
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.planning import plan
from bedflux.planning.candidates import Instruments, as_observations, check_candidates
from bedflux.field.logger_pair_spread import logger_flux_sd
from bedflux.report.findings import pick_text

DAY = 86400.0
RHO_C_WATER = 1000.0 * 4186.0       # J m-3 K-1 (CRC Handbook, water near 15 degC; from memory)


def stallman(t, z, q_up, k, rc, period=DAY, amplitude=2.0, mean=15.0):
    """Temperature at depth z (m, down) for an upward Darcy flux q_up (Hatch et al. 2006)."""
    v = -q_up * RHO_C_WATER / rc
    alpha = np.sqrt(v**4 + (8 * np.pi * k / period) ** 2)
    a = (np.sqrt((alpha + v * v) / 2) - v) / (2 * k)
    b = np.sqrt((alpha - v * v) / 2) / (2 * k)
    return mean + amplitude * np.exp(-a * z) * np.cos(2 * np.pi * t / period - b * z)


@pytest.mark.parametrize("q_md", [-0.3, 0.0, 0.4])
def test_sigma_is_the_field_estimators_spread_on_a_stallman_record(q_md):
    """Down, zero and up: the plan's sigma of a 5/15 cm pair equals the amplitude method's flux_sd
    for one day of the record the pair would show at that flux (15 min readings, 0.1 degC sensors,
    sand properties and ranges of the field reduction)."""
    sand = SEDIMENTS["sand"]
    q = q_md / DAY
    t = np.arange(0.0, DAY, 900.0)
    k = sand.thermal_conductivity / sand.heat_capacity
    est = flux_from_temperature(t, stallman(t, 0.05, q, k, sand.heat_capacity),
                                stallman(t, 0.15, q, k, sand.heat_capacity), 0.10, sand.thermal_conductivity,
                                sand.heat_capacity, method="amplitude", accuracy=0.1,
                                conductivity_range=sand.conductivity_range,
                                heat_capacity_range=sand.heat_capacity_range, samples=20000, seed=11)
    assert len(est) == 1 and est["flag"].iloc[0] == ""
    assert est["flux"].iloc[0] == pytest.approx(q, abs=1e-6 / DAY)   # the record is the flux asked for
    sd = logger_flux_sd(np.array([q]), 0.05, 0.15)[0]
    assert sd == pytest.approx(est["flux_sd"].iloc[0], rel=0.07)


def test_strong_upflow_damps_the_wave_beyond_reading():
    """At 3 m/d upward the deep (15 cm) wave of a 2 degC day is below 3 standard errors of a
    0.1 degC sensor's fit (the field flag too_damped): the pair measures nothing there."""
    sand = SEDIMENTS["sand"]
    q = 3.0 / DAY
    t = np.arange(0.0, DAY, 900.0)
    k = sand.thermal_conductivity / sand.heat_capacity
    est = flux_from_temperature(t, stallman(t, 0.05, q, k, sand.heat_capacity),
                                stallman(t, 0.15, q, k, sand.heat_capacity), 0.10, sand.thermal_conductivity,
                                sand.heat_capacity, accuracy=0.1)
    assert "too_damped" in est["flag"].iloc[0]
    assert np.isinf(logger_flux_sd(np.array([q]), 0.05, 0.15)[0])


# ------------------------------------------------------------------------------------- the plan

def small_section() -> dict:
    return {
        "grid": {"x": [-6.0, 6.0], "bottom": -3.0, "dx": 0.5, "dz": 0.05},
        "ground": {"profile": [[-6, 1.0], [-3, 1.0], [-2, 0.0], [2, 0.0], [3, 1.0], [6, 1.0]]},
        "zone": [{"name": "aquifer", "kh": "8 m/d", "kv": "3 m/d"},
                 {"name": "bed", "kh": "2 m/d", "kv": "0.5 m/d", "depth": 0.4, "x": [-3, 3]},
                 {"name": "patch", "kh": "0.2 m/d", "kv": "0.05 m/d", "depth": 0.4, "x": [0.5, 1.5]}],
        "stream": {"stage": 0.4},
        "sides": {"left": {"head": 0.9}, "right": {"head": 0.7}},
    }


FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}, {"path": "aquifer.kh", "low": 1e-6, "high": 1e-2},
        {"path": "patch.kv", "low": 1e-8, "high": 1e-4}]


def mixed_candidates() -> pd.DataFrame:
    xs = np.arange(-1.75, 1.8, 0.5)
    rows = ([("seepage", x, 0.0) for x in xs] + [("piezometer", x, d) for x in xs for d in (0.1, 0.3)]
            + [("logger_pair", x, np.nan) for x in xs])
    return pd.DataFrame(rows, columns=["kind", "x", "depth"])


@pytest.fixture(scope="module")
def brute_force():
    """Everything a plan for bed.kv needs, computed in the test: predictions and central-difference
    sensitivities in the estimation space (log10 of each conductivity), the documented sigmas, and
    every candidate's posterior spread of bed.kv by the information form."""
    s = bedflux.Scenario.from_dict(small_section())
    fp = free_parameters(s, FREE)
    cand = check_candidates(mixed_candidates())
    fw = Forward(s, as_observations(cand, 0.0), fp)
    m = fw.start()
    d = fw.predict(m)
    h = 1e-3
    G = np.column_stack([(fw.predict(m + h * e) - fw.predict(m - h * e)) / (2 * h) for e in np.eye(len(fp))])
    kind = cand["kind"].to_numpy()
    sigma = np.where(kind == "seepage", np.maximum(0.3 * np.abs(d), 0.01 / DAY),
                     1e-4 / np.maximum(cand["depth"].to_numpy(), 1e-9))
    pairs = kind == "logger_pair"
    sigma[pairs] = logger_flux_sd(d[pairs], 0.05, 0.15)
    # prior: the bounds read as a 95 % range in log10 (docs/planning.md, Method)
    prior_sd = np.array([(np.log10(f["high"]) - np.log10(f["low"])) / 4 for f in FREE])
    Cm_inv = np.diag(1 / prior_sd**2)
    kv = 0.5 / DAY
    spreads = []
    for i in range(len(cand)):
        post = np.linalg.inv(G[i][:, None] @ G[i][None, :] / sigma[i] ** 2 + Cm_inv)
        spreads.append(np.sqrt(post[0, 0]) * kv * np.log(10))   # first order: d kv = kv ln10 d log10 kv
    return s, cand, np.array(spreads), kv * np.log(10) * prior_sd[0], sigma, d


def test_worth_of_a_logger_pair_is_the_linear_gaussian_posterior(brute_force):
    s, cand, spreads, before, sigma, d = brute_force
    table = plan(s, FREE, mixed_candidates(), 2, target="bed.kv")
    a = table.attrs
    assert a["prior_sd"] == pytest.approx(before, rel=1e-10)
    kinds = np.array(a["single_kind"])
    pairs = kinds == "logger_pair"
    assert pairs.sum() == 8 and np.all(np.isfinite(sigma[pairs]))
    np.testing.assert_allclose(np.array(a["single_sd"])[pairs], spreads[pairs], rtol=1e-5)
    np.testing.assert_allclose(np.array(a["single_sd"]), spreads, rtol=1e-5)
    best = int(np.argmin(spreads))
    assert cand["kind"].iloc[best] == "logger_pair"      # so that the first pick is one of the new kind
    first = table.iloc[0]
    assert (first["kind"], first["x"]) == ("logger_pair", pytest.approx(cand["x"].iloc[best]))
    assert (first["shallow_depth"], first["depth"], first["deep_depth"]) == pytest.approx((0.05, 0.10, 0.15))
    assert first["expected_sd"] == pytest.approx(spreads[best], rel=1e-5)
    assert first["reduction"] == pytest.approx(1 - spreads[best] / before, rel=1e-5)
    assert first["sigma"] == pytest.approx(sigma[best], rel=1e-12)
    assert first["simulated"] == pytest.approx(d[best], rel=1e-12)


def test_a_sigma_column_overrides_the_rule(brute_force):
    s, *_ = brute_force
    cand = pd.DataFrame({"kind": ["logger_pair", "seepage"], "x": [-1.25, -1.25], "depth": [np.nan, 0.0],
                         "sigma": [2e-7, np.nan]})
    table = plan(s, FREE, cand, 2, target="bed.kv")
    assert table.set_index("kind").loc["logger_pair", "sigma"] == 2e-7


def test_the_scenarios_stream_temperature_wave_and_the_sensor_accuracy_are_used():
    """With a [heat] stream wave of 4 degC amplitude and 0.5 degC sensors the pair's sigma is the
    field estimator's on a Stallman record of that amplitude at the predicted flux (same Monte
    Carlo tolerance as above), and not the one of the default 2 degC wave."""
    d = small_section()
    d["heat"] = {"stream_temperature": {"mean": "16 degC", "amplitude": "4 K", "period": "1 d"},
                 "groundwater_temperature": "11 degC"}
    s = bedflux.Scenario.from_dict(d)
    cand = pd.DataFrame({"kind": ["logger_pair"], "x": [-1.25], "depth": [np.nan]})
    first = plan(s, FREE, cand, 1, target="bed.kv", instruments=Instruments(logger_accuracy=0.5)).iloc[0]
    sand = SEDIMENTS["sand"]
    t = np.arange(0.0, DAY, 900.0)
    k = sand.thermal_conductivity / sand.heat_capacity
    q = first["simulated"]

    def field_sd(amplitude):
        est = flux_from_temperature(t, stallman(t, 0.05, q, k, sand.heat_capacity, amplitude=amplitude),
                                    stallman(t, 0.15, q, k, sand.heat_capacity, amplitude=amplitude), 0.10,
                                    sand.thermal_conductivity, sand.heat_capacity, accuracy=0.5,
                                    conductivity_range=sand.conductivity_range,
                                    heat_capacity_range=sand.heat_capacity_range, samples=20000, seed=5)
        return est["flux_sd"].iloc[0]

    assert first["sigma"] == pytest.approx(field_sd(4.0), rel=0.07)
    assert abs(first["sigma"] / field_sd(2.0) - 1) > 0.15


def test_a_pair_that_cannot_read_the_flux_is_left_out_with_a_warning():
    """A uniform sand column with head 4.0 m at its base (4 m down) under a 0.3 m stage carries
    q = K (4.0 - 0.3) / 4 upward (Darcy); with K = 2e-5 m/s that is 1.6 m/d, at which the field
    estimator flags a 5/15 cm pair's record too damped: the plan picks the meter only and warns."""
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -4.0, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 2e-5, "kv": 2e-5}],
        "stream": {"stage": 0.3},
        "sides": {"bottom": {"head": 4.0}},
    })
    q = 2e-5 * (4.0 - 0.3) / 4.0
    sand = SEDIMENTS["sand"]
    t = np.arange(0.0, DAY, 900.0)
    k = sand.thermal_conductivity / sand.heat_capacity
    est = flux_from_temperature(t, stallman(t, 0.05, q, k, sand.heat_capacity),
                                stallman(t, 0.15, q, k, sand.heat_capacity), 0.10, sand.thermal_conductivity,
                                sand.heat_capacity, accuracy=0.1)
    assert "too_damped" in est["flag"].iloc[0]
    cand = pd.DataFrame({"kind": ["logger_pair", "seepage"], "x": [0.5, 0.5], "depth": [np.nan, 0.0]})
    table = plan(s, [{"path": "sand.kv", "low": 1e-7, "high": 1e-3}], cand, 2, target="sand.kv")
    assert list(table["kind"]) == ["seepage"]
    assert table["simulated"].iloc[0] == pytest.approx(q, rel=1e-6)
    assert any("1 logger-pair candidate(s) left out" in w for w in table.attrs["warnings"])


# -------------------------------------------------------------------------------- command line

SCENARIO = """title = "Small section for logger pairs (invented)"
[grid]
x = [-6.0, 6.0]
bottom = -3.0
dx = 0.5
dz = 0.05
[ground]
profile = [[-6, 1.0], [-3, 1.0], [-2, 0.0], [2, 0.0], [3, 1.0], [6, 1.0]]
[[zone]]
name = "aquifer"
kh = "8 m/d"
kv = "3 m/d"
[[zone]]
name = "bed"
kh = "2 m/d"
kv = "0.5 m/d"
depth = 0.4
x = [-3, 3]
[stream]
stage = 0.4
[sides]
left = { head = 0.9 }
right = { head = 0.7 }
"""

PLAN = """scenario = "section.toml"
n = {n}
target = "bed.kv"
min_spacing = "1 m"
[candidates]
{candidates}
[[free]]
path = "bed.kv"
low = "0.01 m/d"
high = "50 m/d"
[[free]]
path = "aquifer.kh"
low = "0.1 m/d"
high = "500 m/d"
"""


def write_plan(folder: Path, candidates: str, n: int = 3) -> Path:
    (folder / "section.toml").write_text(SCENARIO)
    (folder / "plan.toml").write_text(PLAN.format(n=n, candidates=candidates))
    return folder / "plan.toml"


def test_cli_writes_logger_pairs_in_the_plan_table(tmp_path, capsys):
    planfile = write_plan(tmp_path, 'seepage_spacing = "1 m"\npiezometer_spacing = "1 m"\nlogger_spacing = "1 m"\n'
                                    'logger_depths = ["5 cm", "25 cm"]', n=8)
    status = main(["plan", str(planfile), "-o", str(tmp_path / "out")])
    out = capsys.readouterr()
    assert status == 0, out.err
    table = pd.read_csv(tmp_path / "out" / "plan_table.csv")
    assert {"shallow_depth", "deep_depth"} <= set(table.columns)
    pairs = table[table["kind"] == "logger_pair"]
    assert len(pairs) >= 1
    assert np.allclose(pairs["shallow_depth"], 0.05) and np.allclose(pairs["deep_depth"], 0.25)
    assert np.allclose(pairs["depth"], 0.15)                              # the mid-depth
    assert table[table["kind"] != "logger_pair"]["shallow_depth"].isna().all()
    assert "sensors 0.05 and 0.25 m deep" in out.out
    summary = json.loads((tmp_path / "out" / "plan_summary.json").read_text())
    assert any(p["kind"] == "logger_pair" and p["deep_depth"] == pytest.approx(0.25) for p in summary["picks"])
    assert (tmp_path / "out" / "plan_map.png").stat().st_size > 0
    # the report's "where to measure next" names the instrument and both sensors
    text = pick_text(pairs.iloc[0].to_dict())
    assert text.startswith("a temperature logger pair") and "sensors 0.0500 m and 0.250 m below the bed" in text


def check_refused(tmp_path, capsys, planfile: Path, *words: str) -> None:
    status = main(["plan", str(planfile), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err
    assert status == 2, err
    assert "Traceback" not in err
    for w in words:
        assert w in err, (w, err)
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("depths, words", [
    ('["15 cm", "5 cm"]', ("must increase",)),
    ('["0 cm", "10 cm"]', ("must be > 0", "below the bed")),
    ('["10 cm", "80 cm"]', ("deeper than a logger rod", "0.5 m", "logger_max_depth")),
    ('["10 cm", "11 cm"]', ("too close", "0.02 m")),
    ('["10 cm"]', ("two sensor depths",)),
])
def test_bad_logger_depths_in_the_plan_file(tmp_path, capsys, depths, words):
    planfile = write_plan(tmp_path, f'logger_spacing = "1 m"\nlogger_depths = {depths}')
    check_refused(tmp_path, capsys, planfile, "plan.toml", "[candidates]", "logger_depths", *words)


def test_zero_logger_spacing_is_refused(tmp_path, capsys):
    planfile = write_plan(tmp_path, 'logger_spacing = 0\nseepage_spacing = "1 m"')
    check_refused(tmp_path, capsys, planfile, "plan.toml", "[candidates]: logger_spacing", "> 0",
                  "leave the key out")


@pytest.mark.parametrize("row, words", [
    ("logger_pair,0.5,,0.15,0.05", ("row 3", "must increase")),
    ("logger_pair,0.5,,0.0,0.10", ("row 3", "must be > 0")),
    ("logger_pair,0.5,,0.10,0.70", ("row 3", "deeper than a logger rod", "0.5 m")),
    ("logger_pair,0.5,0.3,0.05,0.15", ("row 3", "mid-depth of its sensors, 0.1 m")),
    ("logger_pair,0.5,,0.05,", ("row 3", "both shallow_depth and deep_depth")),
    ("logger_pair,0.5,,five,0.15", ("row 3", "shallow_depth", "not a number")),
    ("logger_pair,0.5,abc,0.05,0.15", ("row 3", "'depth'", "not a number")),  # text, not an empty cell
    ("thermometer,0.5,0.1,,", ("row 3", "seepage, piezometer or logger_pair")),
])
def test_bad_logger_rows_in_a_candidate_table(tmp_path, capsys, row, words):
    (tmp_path / "candidates.csv").write_text("kind,x,depth,shallow_depth,deep_depth\n"
                                             f"seepage,0.0,0,,\n{row}\n")
    planfile = write_plan(tmp_path, 'table = "candidates.csv"')
    check_refused(tmp_path, capsys, planfile, "candidates.csv", *words)
