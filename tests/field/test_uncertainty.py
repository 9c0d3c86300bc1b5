"""Observation sigmas with a between-instrument term; flagged meters left out by default."""
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from bedflux.cli import main
from bedflux.field import run_field
from bedflux.field.seepage import between_meter_scatter

SCENARIOS = Path(__file__).resolve().parents[2] / "scenarios"
DEMO = SCENARIOS / "field"


def test_between_meter_estimate_recovers_a_known_scatter():
    # One-way random-effects model: meter mean = mu_t (1 + tau e1) + s e2 with tau = 0.25 and a
    # within-meter error s = 0.15 mu; the method-of-moments estimate of tau^2 (DerSimonian &
    # Laird 1986) is unbiased, with variance about 2 (tau^2 + s^2/mu^2)^2 / dof. 100 transects
    # of 20 meters give 1900 degrees of freedom: three standard errors of tau are 6.6 %.
    rng = np.random.default_rng(11)
    mu = np.repeat(rng.uniform(1e-6, 3e-6, 100), 20)
    s = 0.15 * mu
    q = mu * (1 + 0.25 * rng.standard_normal(mu.size)) + s * rng.standard_normal(mu.size)
    label = np.repeat(np.arange(100).astype(str), 20)
    est = between_meter_scatter(q, s, label)
    assert est.source == "estimated" and est.dof == 1900
    three_se = 3 * np.sqrt(2 / est.dof) * (0.25**2 + 0.15**2) / (2 * 0.25**2)
    assert est.value == pytest.approx(0.25, rel=three_se)


def test_too_few_meters_fall_back_to_the_practice_figure():
    # Two transects of two meters: 2 degrees of freedom, too few; about 30 % between meters is
    # the common-practice figure.
    est = between_meter_scatter([1e-6, 1.2e-6, 2e-6, 2.1e-6], [1e-8] * 4, ["A", "A", "B", "B"])
    assert est.source == "default" and est.value == pytest.approx(0.30)


def test_meter_sigma_carries_the_between_meter_scatter(campaign, tmp_path):
    # Repeats agree exactly (standard error 0), bags read to 0.001 mL: the old sigma was the
    # repeat error alone, near zero. Meter means (x 400 mL per hour over 0.25 m^2) are 0.8, 1.0,
    # 1.2 in transect A and 1.6, 2.0, 2.4 in B: relative deviations -0.2, 0, +0.2 in each, so
    # sum r^2 = 0.16 over 6 - 2 = 4 degrees of freedom: tau^2 = 0.04, tau = 0.20 (method of
    # moments, DerSimonian & Laird 1986).
    rows = ["site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [m^2],efficiency,"
            "volume_resolution [mL]"]
    for site, factor in zip(["A1", "A2", "A3", "B1", "B2", "B3"], [0.8, 1.0, 1.2, 1.6, 2.0, 2.4]):
        for hour in (1, 3):
            rows.append(f"{site},{hour},60,1000,{1000 + 400 * factor},0.25,1,0.001")
    campaign("seepage.csv", "\n".join(rows) + "\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    obs = pd.read_csv(out / "observations.csv")
    seep = obs[obs["kind"] == "seepage"]
    assert len(seep) == 6
    np.testing.assert_allclose(seep["sigma"] / seep["value"].abs(), 0.20, rtol=1e-4)


def test_flagged_meter_is_left_out_and_listed(demo):
    out, summary = demo
    obs = pd.read_csv(out / "observations.csv")
    flagged = pd.read_csv(out / "flagged_observations.csv")
    # B3 (x = 59.07 m) reads four times its neighbours: a robust outlier (Iglewicz & Hoaglin 1993).
    assert not ((obs["kind"] == "seepage") & (obs["x"] == 59.07)).any()
    row = flagged.set_index("site").loc["B3"]
    assert row["kind"] == "seepage" and not row["in_observations"] and "Iglewicz" in row["reason"]
    assert [r["site"] for r in summary["flagged_observations"]["rows"]] == ["B3"]


def test_keep_flagged_keeps_them(tmp_path):
    out = tmp_path / "out"
    assert main(["field", str(DEMO), "-o", str(out), "--keep-flagged", "-q"]) == 0
    obs = pd.read_csv(out / "observations.csv")
    assert ((obs["kind"] == "seepage") & (obs["x"] == 59.07)).sum() == 1
    assert pd.read_csv(out / "flagged_observations.csv")["in_observations"].all()


def test_reach_total_with_and_without_flagged_meters(demo):
    _, summary = demo
    with_f, without_f = summary["reach_with_flagged_meters"], summary["reach_without_flagged_meters"]
    assert "B3" in with_f["meters"] and "B3" not in without_f["meters"]
    # B3 is a hot spot four times its neighbours: leaving it out lowers the total.
    assert without_f["total [m^3/s]"] < with_f["total [m^3/s]"]
    assert summary["reach"] == without_f


def test_every_observation_kind_carries_a_between_instrument_term(demo):
    out, _ = demo
    m = pd.read_csv(out / "seepage_meters.csv")
    assert (m["between_sigma [m/s]"] > 0).all()
    np.testing.assert_allclose(m["sigma [m/s]"], np.hypot(m["within_sigma [m/s]"], m["between_sigma [m/s]"]))
    p = pd.read_csv(out / "piezometers.csv")
    # the opening depth known to 1 cm (common practice): |vhg| x 0.01 m of head
    np.testing.assert_allclose(p["head_between_sigma [m]"], p["vhg [1]"].abs() * 0.01)
    for name in ("slug_tests.csv", "permeameter_tests.csv"):
        t = pd.read_csv(out / name)
        # fewer than 5 unflagged tests: the between-test spread of ln K is sqrt(1.88)
        # (Genereux et al. 2008, smallest run variance of ln Kv in a sandy streambed).
        np.testing.assert_allclose(t["ln_k_between_sigma [1]"], np.sqrt(1.88))
        assert (t["ln_k_sigma [1]"] >= t["ln_k_between_sigma [1]"]).all()


def test_worked_fit_misfit_is_what_its_errors_explain(worked_example):
    # With sigmas that describe the errors, the weighted sum of squares of a least-squares fit
    # follows a chi-square distribution with n - p degrees of freedom (e.g. Aster, Borchers &
    # Thurber 2013, ch. 2); the worked fit of the README must lie inside its 99 % interval.
    # (bedflux fit on scenarios/reach_fit.toml, run once per session: tests/conftest.py)
    assert worked_example.status["fit"] == 0
    out = worked_example.root / "fit"
    st = json.loads((out / "fit_results.json").read_text())["statistics"]
    dof = st["degrees_of_freedom"]
    lo, hi = stats.chi2.ppf([0.005, 0.995], dof)
    assert lo <= st["weighted_sum_of_squares"] <= hi


def test_report_says_which_observations_were_left_out(demo):
    from bedflux.report.findings import field_finding

    _, summary = demo
    sentences = field_finding(summary).sentences
    assert any("B3" in s and "left out of the calibration" in s for s in sentences)
    assert any(s.startswith("With the flagged meters the reach would give") for s in sentences)
