"""The findings text, from constructed (invented) summaries."""
from __future__ import annotations

import pandas as pd
import pytest

from bedflux.report import findings

from .conftest import fit_results, steady_summary, transient_summary


@pytest.mark.parametrize("value, text", [
    (0.906317, "0.906"), (20.37, "20.4"), (120.0, "120"), (9.0, "9.00"), (0.0706, "0.0706"),
    (-37.42, "-37.4"), (1234.5, "1234"), (1.5e-5, "1.50e-05"), (0.0, "0"), (float("nan"), "n/a"),
    (None, "n/a"), (3.2e7, "3.20e+07"),
])
def test_number_format(value, text):
    assert findings.number(value) == text


def test_gaining_reach_wording():
    s = steady_summary(exchange=2.0e-4, gaining=100.0, losing=20.0)
    f = findings.exchange_finding(s, "reach")
    assert "reach is gaining" in f.text
    assert "losing:" not in f.text
    assert "17.3 m³/d per metre of channel" in f.text  # 2e-4 m2/s * 86400 s/d
    assert "Of 120 m of submerged bed, 100 m is gaining and 20.0 m losing." in f.text
    assert "from -0.0864 m/d to 0.259 m/d" in f.text


def test_losing_reach_wording():
    s = steady_summary(exchange=-5.0e-5, gaining=0.0, losing=30.0, lo=-2e-6, hi=-1e-7)
    f = findings.exchange_finding(s, "reach")
    assert "reach is losing: stream water flows into the aquifer" in f.text
    assert "4.32 m³/d per metre of channel" in f.text
    assert "All 30.0 m of submerged bed is losing" in f.text
    assert "gaining:" not in f.text


def test_neutral_and_dry_reach():
    s = steady_summary(exchange=0.0, gaining=0.0, losing=0.0)
    s["submerged_length_m"] = 0.0
    f = findings.exchange_finding(s)
    assert "about zero" in f.text
    assert "No part of the bed is under water" in f.text


def test_display_unit_changes_flux_text():
    s = steady_summary(lo=-1e-6, hi=3e-6)
    assert "from -8.64 cm/d to 25.9 cm/d" in findings.exchange_finding(s, unit="cm/d").text


def test_transient_exchange_mentions_end_and_start():
    f = findings.exchange_finding(transient_summary())
    assert f.text.startswith("At the end of the run (120.0 h) the reach is gaining")
    assert "At the start it gained 0.691 m³/d per metre of channel." in f.text


def test_pulse_reverses():
    f = findings.pulse_finding(transient_summary(), source="pulse")
    assert f.text.startswith("Yes: the net exchange turns from gaining to losing from 7.2 h to 15.5 h (8.3 h in all).")
    assert "At the peak the stream loses 37.2 m³/d per metre of channel" in f.text
    assert "Bank storage takes in 5.68 m³ per metre of channel; 4.77 m³ (84 %) has come back" in f.text
    assert "0.782 m below the bed" in f.text


def test_pulse_reversal_to_the_end_and_from_losing():
    s = transient_summary(reversals=((10 * 3600.0, None),), initial=-2e-6)
    f = findings.pulse_finding(s)
    assert "turns from losing to gaining from 10.0 h until the end of the run" in f.text
    assert "At the peak" not in f.text


def test_pulse_without_reversal():
    s = transient_summary(reversals=())
    s["exchange_min_m2_per_s"], s["exchange_max_m2_per_s"] = 2e-6, 4e-5
    f = findings.pulse_finding(s)
    assert f.text.startswith("No: the net exchange stays gaining throughout the run "
                             "(between 0.173 m³/d per metre and 3.46 m³/d per metre).")


def test_pulse_column_counts_from_events_table():
    table = pd.DataFrame({"x": [-10.0, -1.0, 0.0, 1.0, 10.0], "wet_at_start": [False, True, True, True, False],
                          "submerged_duration": [3600.0 * 5, 0, 0, 0, 0.0], "reversals": [0, 1, 1, 0, 0],
                          "reversed_duration": [0, 3600.0 * 2, 3600.0 * 3, 0, 0]})
    f = findings.pulse_finding(transient_summary(), table)
    assert "reverses at 2 of 3 columns of the channel bed, for up to 3.0 h" in f.text
    assert "floods 1 floodplain columns, for up to 5.0 h" in f.text


def test_steady_run_has_no_pulse_finding():
    assert findings.pulse_finding(steady_summary()) is None


def test_conductivity_well_determined():
    f = findings.conductivity_finding(fit_results(), "fit")
    assert "bed.kv (vertical conductivity of zone 'bed') = 1.54 m/d" in f.text
    assert "95 % interval 1.29 to 1.85 m/d" in f.text
    assert "within a factor of 1.20 of the best value: well determined." in f.text
    assert "sides.bottom.head" not in f.text        # only conductivities in the finding
    assert "in line with the stated measurement errors" in f.text


def test_conductivity_poorly_determined_and_misfit():
    r = fit_results(verdict="poorly determined: the data barely constrain it", rchi=40.0)
    f = findings.conductivity_finding(r)
    assert ": poorly determined: the data barely constrain it." in f.text
    assert "The weighted misfit is 40.0 times" in f.text


def test_no_conductivity_in_fit():
    r = fit_results()
    r["best"] = {"recharge.rate": 1e-9}
    r["ci95"] = {"recharge.rate": [5e-10, 2e-9]}
    r["parameters"] = ["recharge.rate"]
    f = findings.conductivity_finding(r)
    assert "estimated no conductivity" in f.text and "recharge.rate" in f.text


def test_plan_picks_in_order():
    table = pd.DataFrame({"rank": [2, 1, 3], "kind": ["vhg", "seepage", "head"], "x": [60.0, 20.0, 100.0],
                          "depth": [0.5, 0.0, 3.0], "expected_sd": [0.15, 0.2, 0.12],
                          "reduction": [0.1, 0.2, 0.05]})
    summary = {"target": "bed.kv", "prior_sd": 1.0e-5, "final_sd": 4.8e-6}     # m/s
    f = findings.next_finding([("plan", summary, table)])
    assert ("To narrow bed.kv, place the next instruments in this order: 1) a seepage meter at x = 20.0 m "
            "(spread 20 % less); 2) a mini-piezometer (vertical gradient) at x = 60.0 m, 0.500 m below the bed "
            "(spread 10 % less); 3) a piezometer (head) at x = 100 m, 3.00 m below the bed (spread 5 % less).") \
        in f.text
    assert "cut the standard deviation of bed.kv from 0.864 m/d to 0.415 m/d (52 % less)" in f.text
    g = findings.next_finding([("plan", {"target": "D-optimal", "prior_sd": 0.3, "final_sd": 0.2},
                          table.assign(reduction=0.001))])
    assert "from 0.300 to 0.200 (33 % less)" in g.text and "(spread under 1 % less)" in g.text


def test_plan_from_summary_picks_only_and_many_picks():
    picks = [{"rank": i + 1, "kind": "seepage", "x": float(i), "depth": 0.0, "expected_sd": 0.1} for i in range(8)]
    f = findings.next_finding([("plan", {"target": "bed.kv", "picks": picks}, None)])
    assert "5) a seepage meter at x = 4.00 m (and 3 more in the plan table)" in f.text
    assert "After the first pick the expected standard deviation of bed.kv is 8640 m/d" in f.text


def test_no_plan_falls_back_to_fit_hint():
    r = fit_results(verdict="correlated with x: fix one or add a piezometer at x = 114 m, 3 m below the bed")
    f = findings.next_finding([], [("fit", r)])
    assert "no plan in this folder; the calibration suggests: add a piezometer at x = 114 m" in f.text
    assert f.source == "fit"
    g = findings.next_finding([], [])
    assert "run bedflux plan" in g.text
