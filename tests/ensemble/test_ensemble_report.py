"""The report shows an ensemble's ranges beside the deterministic run.

The check: the deterministic answer the ensemble prints is the net exchange ``bedflux run``
writes for the same scenario, and that is Darcy's law for the column (Freeze & Cherry 1979, ch. 2);
the ensemble's median lies within its 5-95 % range; the report carries both.
"""
from __future__ import annotations

import json
import re

import pytest
import tomli_w

from bedflux.cli import main

from ensemble_columns import column, series_flux


def test_report_shows_ranges_beside_the_run(tmp_path):
    (tmp_path / "column.toml").write_text(tomli_w.dumps(dict(column().raw)))
    (tmp_path / "ens.toml").write_text('scenario = "column.toml"\nmembers = 40\nseed = 2\n[[uncertain]]\n'
                                       'path = "bed.kv"\ndistribution = "lognormal"\nmedian = 1e-6\nsd_log10 = 0.3\n')
    project = tmp_path / "project"
    assert main(["run", str(tmp_path / "column.toml"), "-o", str(project / "run"), "-q"]) == 0
    assert main(["ensemble", str(tmp_path / "ens.toml"), "-o", str(project / "ensemble"), "-q", "--workers", "0"]) == 0
    run = json.loads((project / "run" / "summary.json").read_text())
    ens = json.loads((project / "ensemble" / "ensemble_summary.json").read_text())
    det = ens["deterministic"]["net_exchange"]
    assert det == pytest.approx(run["exchange_m2_per_s"], rel=1e-12)
    assert det == pytest.approx(series_flux(1e-6), rel=1e-10)
    r = ens["answers"]["net_exchange"]
    assert r["p5"] < r["median"] < r["p95"] and r["members"] == 40
    assert main(["report", str(project), "-q"]) == 0
    text = re.sub(r"<[^>]+>", " ", (project / "report.html").read_text())
    assert "How sure are these answers?" in text
    assert "Over 40 members of an ensemble (40 ran)" in text
    assert "the deterministic run gives" in text
    assert "ensemble_losing.png" in (project / "report.html").read_text()
