"""The temperature finding, from constructed (invented) field summaries."""
from __future__ import annotations

from bedflux.report.temperature_findings import temperature_finding

DAY = 86400.0


def _pair(site, reversals=(), meter_agree=True):
    return {
        "site": site, "shallow_depth [m]": 0.05, "deep_depth [m]": 0.15, "x [m]": 10.0, "windows": 20,
        "read": 20, "flagged": {"methods_disagree": 1}, "reversals": list(reversals),
        "meter": {"meter": site, "thermal_flux [m/s]": 2e-6, "thermal_sd [m/s]": 5e-7,
                  "meter_flux [m/s]": 1.5e-6, "agree": meter_agree},
    }


def _summary(pairs, origin=None):
    return {"temperature": {"method": "amplitude ratio of the daily wave", "time_origin": origin,
                            "resolved_at_sd": 2.0, "pairs": pairs}}


REVERSAL = {"from": "gaining", "to": "losing", "start [s]": 8.25 * DAY, "end [s]": 13.5 * DAY,
            "extreme_flux [m/s]": -4e-6}


def test_reversal_with_days_and_meter_comparison():
    f = temperature_finding(_summary([_pair("R1", [REVERSAL]), _pair("R2", meter_agree=False)]))
    text = f.text
    # 2e-6 m/s = 0.1728 m/d; 4e-6 m/s = 0.3456 m/d
    assert "R1 (5-15 cm) 0.173 m/d +/- 0.0432 m/d against meter R1 0.130 m/d" in text
    assert "1 of 2 agree within two combined standard deviations; R2 (5-15 cm) do not." in text
    assert "R1 (5-15 cm) from gaining to losing from day 8.2 to day 13.5 (at most 0.346 m/d downward)" in text
    assert "At R2 the flux keeps its direction." in text
    assert "methods disagree 2" in text


def test_dates_when_the_sheet_gave_date_times_and_a_reversal_to_the_end():
    rev = dict(REVERSAL, **{"end [s]": None})
    f = temperature_finding(_summary([_pair("R1", [rev])], origin="2026-07-01T00:00:00"))
    assert "from 09 Jul 2026 06:00 to the end of the record" in f.text


def test_no_reversal_and_no_temperature():
    f = temperature_finding(_summary([_pair("R1")]))
    assert "shows no reversal" in f.text
    assert temperature_finding({"meters": 3}) is None
