"""The report puts what should not be believed first, and the places of the extremes beside them.

Summaries here are invented numbers in the layout ``bedflux run`` writes.
"""
from __future__ import annotations

import html

from bedflux.report import build_report
from bedflux.report import findings

from .conftest import steady_summary, write_run


def _summary_with_places() -> dict:
    s = steady_summary(exchange=-5e-5, gaining=0.0, losing=30.0, lo=-2e-6, hi=-1e-7)
    s["bed_flux_min_m_per_s"], s["bed_flux_max_m_per_s"] = -2e-6, -1e-7
    s["max_gaining_flux_m_per_s"] = None
    s["bed"] = {"channel": {"length_m": 30.0, "stretches_m": [[10.0, 40.0]], "gaining": None,
                            "losing": {"peak_m_per_s": -2e-6, "x_m": 10.25, "p05_m_per_s": -1.1e-6}},
                "floodplain": None}
    s["warnings"] = ["the stream may be disconnected from the aquifer: under the submerged bed ..."]
    return s


def test_warnings_come_first_in_the_findings(tmp_path):
    write_run(tmp_path / "p" / "run", _summary_with_places())
    page = build_report(tmp_path / "p").read_text()
    first = page.index("What should not be believed as it stands")
    assert first < page.index("Is the reach gaining or losing?")
    assert "The stream may be disconnected from the aquifer" in html.unescape(page)


def test_extremes_have_places_in_findings_and_tables(tmp_path):
    s = _summary_with_places()
    f = findings.exchange_finding(s, "run")
    assert "On the channel bed (x = 10.0 to 40.0 m) no part gains (no gaining reach)" in f.text
    assert (f"the strongest downward flux is {findings.flux(-2e-6)} at x = 10.2 m, while over 95 % of the wetted "
            f"bed it stays above {findings.flux(-1.1e-6)}") in f.text
    write_run(tmp_path / "p" / "run", s)
    page = html.unescape(build_report(tmp_path / "p").read_text())
    assert "Where the bed flux is strongest" in page
    assert "5th percentile " + findings.flux(-1.1e-6) in page
    assert "none (no gaining reach)" in page
