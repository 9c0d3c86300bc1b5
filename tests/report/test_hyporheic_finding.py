"""The report's finding on how long stream water stays in the bed, from a summary's hyporheic
block (invented numbers; the numbers themselves are checked in tests/flowpaths)."""
from __future__ import annotations

from bedflux.report.findings import hyporheic_finding, number

from tests.report.conftest import steady_summary, transient_summary

BLOCK = {"paths": 360, "exchange_flux_m_per_s": 1.157e-6, "median_residence_time_s": 14668.0,
         "residence_time_quantiles_s": {"10": 4072.0, "25": 7500.0, "50": 14668.0, "75": 29326.0, "90": 53920.0},
         "depth_holding_90_percent_m": 0.0944, "horizon_s": 3.15576e10,
         "fate": {"returns_to_stream": 0.8, "to_aquifer": 0.2, "seepage_face": 0.0, "taken_up_in_cells": 0.0,
                  "not_out_within_horizon": 0.0},
         "bedform_exchange_flux_closed_form_m_per_s": 1.435e-6}


def test_no_block_no_finding():
    assert hyporheic_finding(steady_summary()) is None


def test_steady_finding_names_the_times_depth_and_fate():
    s = steady_summary()
    s["hyporheic"] = BLOCK
    f = hyporheic_finding(s)
    assert f.topic == "hyporheic"
    assert "less than 4.1 h" in f.text and "within 1.1 h" in f.text and "longer than 15.0 h" in f.text
    assert f"{number(1.157e-6 * 86400)} m/d" in f.text and "Elliott & Brooks" in f.text
    assert "80 % returns to the stream" in f.text and "20 % goes on into the aquifer" in f.text
    assert "0.0944 m" in f.text


def test_transient_finding_says_what_came_back_and_what_is_beyond_the_run():
    s = transient_summary()
    block = dict(BLOCK, horizon_s=432000.0, water_entered_m2=5.41, water_returned_m2=0.851, returned_fraction=0.157,
                 residence_time_quantiles_s={"10": 49700.0, "25": 66000.0, "50": None, "75": None, "90": None},
                 return_time_quantiles_s={"10": 49700.0, "25": None, "50": None, "75": None, "90": None})
    block.pop("bedform_exchange_flux_closed_form_m_per_s")
    s["hyporheic"] = block
    f = hyporheic_finding(s)
    assert "More than half of it is still in the ground after 120.0 h" in f.text
    assert "5.41 m³ per metre" in f.text and "0.851 m³ (16 %)" in f.text
    assert "Elliott" not in f.text
