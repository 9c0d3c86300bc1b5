"""The whole reduction on the invented demo campaign and on small hand-checked sheets."""
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bedflux.field import run_field



def test_demo_writes_everything(demo):
    out, summary = demo
    for name in ["observations.csv", "seepage_readings.csv", "seepage_meters.csv", "seepage_transects.csv",
                 "manometer_readings.csv", "piezometers.csv", "slug_tests.csv", "permeameter_tests.csv",
                 "velocity_readings.csv", "consistency.csv", "flags.csv", "rejected.csv",
                 "flagged_observations.csv", "field_summary.json", "transect_profiles.png", "bed_flux_map.png", "gradient_vs_flux.png",
                 "logger_readings.csv"]:
        assert (out / name).stat().st_size > 0, name
    assert json.loads((out / "field_summary.json").read_text()) == json.loads(json.dumps(summary))


def test_demo_observation_table(demo):
    out, _ = demo
    obs = pd.read_csv(out / "observations.csv")
    assert list(obs.columns) == ["kind", "x", "depth", "time", "value", "sigma"]
    assert set(obs["kind"]) <= {"seepage", "vhg", "head", "thermal_flux", "temperature"}
    assert (obs["sigma"] > 0).all()
    assert (obs.loc[obs["kind"] == "seepage", "depth"] == 0).all()


def test_demo_rejected_rows_are_listed(demo):
    out, summary = demo
    rej = pd.read_csv(out / "rejected.csv")
    assert summary["rejected_rows"] == len(rej) == 5
    assert set(rej["file"].map(lambda p: Path(p).name)) == {"seepage.csv", "manometer.csv"}


def test_demo_reach_total(demo):
    _, summary = demo
    reach = summary["reach"]
    lo, hi = reach["total_ci95 [m^3/s]"]
    assert lo < reach["total [m^3/s]"] < hi
    assert reach["total [m^3/s]"] > 0  # every meter of the demo gains


def test_observations_carry_hand_computed_values(campaign, tmp_path):
    campaign("manometer.csv", "site,time [h],depth [cm],reading [cm],fluid_density [kg/m^3],resolution [mm],stage [m]\n"
                              "A1,1,30,10,900,1,100.5\nA1,2,30,12,900,1,100.5\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    obs = pd.read_csv(out / "observations.csv")
    vhg = obs[obs["kind"] == "vhg"].iloc[0]
    # Hydrostatics: SG 0.9 oil amplifies 10 times; mean reading 11 cm -> 1.1 cm of head over 0.30 m.
    assert vhg["value"] == pytest.approx(0.011 / 0.30, rel=1e-9)
    assert vhg["x"] == 10 and vhg["depth"] == pytest.approx(0.30) and vhg["time"] == pytest.approx(5400)
    # sigma: standard error of the two readings, the resolution term 0.1 mm of head / sqrt(12)
    # / 0.30 m (GUM, F.2.2.1) and the between-piezometer term: the opening depth known to 1 cm
    # (common practice), i.e. |vhg| x 0.01 m / 0.30 m, all in quadrature.
    g = np.array([0.010, 0.012]) / 0.30
    se = np.std(g, ddof=1) / np.sqrt(2)
    depth_term = (0.011 / 0.30) * 0.01 / 0.30
    assert vhg["sigma"] == pytest.approx(np.sqrt(se**2 + (1e-4 / np.sqrt(12) / 0.30) ** 2 + depth_term**2), rel=1e-9)
    head = obs[obs["kind"] == "head"].iloc[0]
    assert head["value"] == pytest.approx(100.511, rel=1e-12)
    # The head carries the same depth term in metres: the head changes by vhg x 1 cm.
    h = 100.5 + np.array([0.010, 0.012])
    se_h = np.std(h, ddof=1) / np.sqrt(2)
    assert head["sigma"] == pytest.approx(
        np.sqrt(se_h**2 + (1e-4 / np.sqrt(12)) ** 2 + ((0.011 / 0.30) * 0.01) ** 2), rel=1e-9)


def test_scatter_detection_and_fill_flags(campaign, tmp_path):
    rows = ["site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [m^2],bag_capacity [mL]",
            "A1,1,60,1000,1100,0.25,4000",   # 100 mL net: below 150 mL (Cable et al. 1997)
            "A1,2,60,1000,1900,0.25,4000",   # with the first: CV far above 0.30 (common practice)
            "A2,1,60,1000,3000,0.25,4000",   # 75 % full: above 65 % (Rosenberry et al. 2020)
            "A2,2,60,1000,2600,0.25,4000",   # 65 % full: on the limit, not flagged
            "A3,1,60,600,400,0.25,4000"]     # 10 % full and losing: below 20 %
    campaign("seepage.csv", "\n".join(rows) + "\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    flags = pd.read_csv(out / "flags.csv")
    got = set(zip(flags["flag"], flags["item"]))
    assert ("near_detection_floor", "A1 line 2") in got
    assert ("repeat_scatter", "A1") in got
    assert ("bag_fill", "A2 line 4") in got and ("bag_fill", "A2 line 5") not in got
    assert ("bag_fill", "A3 line 6") in got
    m = pd.read_csv(out / "seepage_meters.csv").set_index("site")
    assert m.loc["A3", "mean [m/s]"] < 0  # the bag lost water: recharge


def test_velocity_head_and_sign_flags(campaign, tmp_path):
    # Sickbert & Peterson (2014): flow over the bed lowers the pressure the stream leg sees, so a
    # head difference smaller than the velocity head does not resolve the gradient's sign.
    # A1: 2 mm of head (0.3 cm reading on air ~ 3 mm), velocity head 10 mm.
    campaign("manometer.csv", "site,time [h],depth [cm],reading [cm],fluid_density [kg/m^3],resolution [mm]\n"
                              "A1,1,30,0.3,1.2,0.1\nA2,1,30,-5,820,0.1\n")
    campaign("velocity.csv", "site,time [h],head_difference [mm]\nA1,1,10\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    flags = pd.read_csv(out / "flags.csv")
    got = set(zip(flags["flag"], flags["item"]))
    assert ("velocity_head", "A1 at 0.3 m") in got
    # A2's meter gains while its gradient points down: the signs disagree.
    assert ("sign_disagrees", "A2 at 0.3 m") in got
    v = pd.read_csv(out / "velocity_readings.csv")
    assert v["velocity [m/s]"].iloc[0] == pytest.approx(np.sqrt(2 * 9.80665 * 0.010), rel=1e-9)


def test_too_few_meters_for_a_map(campaign, tmp_path):
    rows = ["site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [m^2]",
            "A1,1,60,1000,1400,0.25", "A2,1,60,1000,1500,0.25", "B1,1,60,1000,1300,0.25"]
    campaign("seepage.csv", "\n".join(rows) + "\n")
    out = tmp_path / "out"
    summary = run_field(campaign.folder, out, quiet=True)
    assert "no map" in summary["reach"]["note"]
    assert not (out / "bed_flux_map.png").exists()
