"""The logger sheet through `bedflux field` and a fit file: single temperature loggers become
``temperature`` observation rows in SI (units converted by pint, the time origin of date-times,
the sigma of a stated accuracy read as a uniform error, GUM JCGM 100:2008 F.2.2.1: sigma =
a / sqrt(3)), the fit file's window and kinds pick them, and bad sheets exit 2 naming file and
row. Invented sites and readings."""
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bedflux import InputError
from bedflux.calibration.spec import load_fit
from bedflux.field import reduce_field

SCENARIOS = Path(__file__).resolve().parents[2] / "scenarios"
SITES = """site,x [m],y [m],bed_elevation [m],transect
L1,19.5,7,98.33,A
L2,60.1,7,98.25,B
"""
SEEPAGE = """site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_diameter [cm]
L1,10,60,1000,1900,57
L2,10,60,1000,2100,57
"""


def _folder(tmp_path, logger: str, seepage: bool = False) -> Path:
    folder = tmp_path / "sheets"
    folder.mkdir(exist_ok=True)
    (folder / "sites.csv").write_text(SITES)
    (folder / "logger.csv").write_text(logger)
    if seepage:
        (folder / "seepage.csv").write_text(SEEPAGE)
    return folder


def _temperature_rows(table: pd.DataFrame) -> pd.DataFrame:
    return table[table["kind"] == "temperature"].reset_index(drop=True)


def test_readings_become_temperature_rows_in_si(tmp_path):
    sheet = ("site,time [min],depth [mm],temperature [degC],accuracy [K]\n"
             "L1,90,100,14.25,0.2\n"
             "L1,210,100,14.75,0.2\n"
             "L2,90,250,11.5,\n")
    rows = _temperature_rows(reduce_field(_folder(tmp_path, sheet)).observations)
    assert len(rows) == 3
    l1 = rows[rows["x"] == 19.5]
    # 90 and 210 minutes are 5400 and 12600 s; 100 mm is 0.1 m
    assert np.allclose(l1["time"], [5400.0, 12600.0]) and np.allclose(l1["depth"], 0.1)
    assert np.allclose(l1["value"], [14.25, 14.75])
    # a +/- 0.2 K accuracy is a uniform error of sd 0.2 / sqrt(3); an empty cell takes 0.1 degC
    assert np.allclose(l1["sigma"], 0.2 / np.sqrt(3.0))
    l2 = rows[rows["x"] == 60.1]
    assert np.allclose(l2["depth"], 0.25) and np.allclose(l2["sigma"], 0.1 / np.sqrt(3.0))


def test_date_times_count_from_the_first_midnight(tmp_path):
    sheet = ("site,datetime,depth [cm],temperature [degC]\n"
             "L1,2026-07-01 06:00,10,13.0\n"
             "L1,2026-07-02 18:30,10,15.0\n")
    rows = _temperature_rows(reduce_field(_folder(tmp_path, sheet)).observations)
    assert np.allclose(rows["time"], [6 * 3600.0, 86400.0 + 18.5 * 3600.0])


def test_date_times_share_the_temperature_sheets_clock(tmp_path):
    # the rods' sheet starts a day before the loggers: both count from the rods' first midnight
    # (one campaign clock), and the summary says which
    sheet = ("site,datetime,depth [cm],temperature [degC]\n"
             "L1,2026-07-02 06:00,10,13.0\n")
    folder = _folder(tmp_path, sheet)
    rods = ["site,datetime,depth [cm],temperature [degC]"]
    for hour in range(0, 72):
        day, h = divmod(hour, 24)
        for depth, amp in ((5, 3.0), (15, 1.5)):
            value = 14.0 + amp * np.sin(2 * np.pi * (hour - 2 * (depth == 15)) / 24.0)
            rods.append(f"L1,2026-07-{1 + day:02d} {h:02d}:00,{depth},{value:.2f}")
    (folder / "temperature.csv").write_text("\n".join(rods) + "\n")
    r = reduce_field(folder)
    rows = _temperature_rows(r.observations)
    assert np.allclose(rows["time"], [86400.0 + 6 * 3600.0])
    assert r.summary["logger_time_origin"] == r.temperature.origin == "2026-07-01T00:00:00"


def test_bad_rows_are_rejected_and_listed(tmp_path):
    sheet = ("site,time [h],depth [cm],temperature [degC]\n"
             "L1,1,10,14.0\n"
             "L1,2,10,14.1\n"
             "L1,,10,14.2\n"          # line 4: no time
             "L1,2,10,14.3\n"         # line 5: repeats line 3
             "L2,1,10,warm\n"         # line 6: text
             "L1,3,10,14.4\n"
             "L2,2,10,12.0\n"
             "L2,3,10,12.1\n")
    r = reduce_field(_folder(tmp_path, sheet))
    assert len(_temperature_rows(r.observations)) == 5
    rejected = r.rejected.rows
    assert {Path(row[0]).name for row in rejected} == {"logger.csv"} and sorted(row[1] for row in rejected) == [4, 5, 6]


@pytest.mark.parametrize("header, row, message", [
    ("site,time [h],depth [cm],temperature [degF]", "L1,1,10,57", "degC"),
    ("site,time [h],depth [cm],temperature [degC]", "L1,1,10,288.4", r"line 2, column 'temperature'"),
    ("site,time [h],temperature [degC]", "L1,1,14", "required column 'depth' is missing"),
])
def test_a_bad_sheet_is_refused_naming_the_file(tmp_path, header, row, message):
    with pytest.raises(InputError, match=message) as err:
        reduce_field(_folder(tmp_path, f"{header}\n{row}\n"))
    assert "logger.csv" in str(err.value)


def test_the_cli_exits_2_on_a_bad_logger_sheet(tmp_path):
    folder = _folder(tmp_path, "site,time [h],depth [cm],temperature [degC]\nL1,1,10,288.4\n")
    out = tmp_path / "out"
    run = subprocess.run([sys.executable, "-m", "bedflux.cli", "field", str(folder), "-o", str(out)],
                         capture_output=True, text=True)
    assert run.returncode == 2 and "logger.csv" in run.stderr and "line 2" in run.stderr
    assert "Traceback" not in run.stderr
    assert not out.exists()


def _fit_file(tmp_path, folder, scenario: str, extra: str = "") -> Path:
    path = tmp_path / "fit.toml"
    path.write_text(f'scenario = "{(SCENARIOS / scenario).as_posix()}"\nobservations = "{folder.as_posix()}"\n'
                    f'{extra}\n[[free]]\npath = "bed.kv"\nlow = "0.01 m/d"\nhigh = "50 m/d"\n')
    return path


def _logger_sheet(hours) -> str:
    return "site,time [h],depth [cm],temperature [degC]\n" + "".join(
        f"{s},{h:g},10,{14 + 0.01 * h:.2f}\n" for s in ("L1", "L2") for h in hours)


def test_the_fit_window_and_kinds_pick_logger_rows(tmp_path):
    folder = _folder(tmp_path, _logger_sheet(np.arange(0, 100, 2)), seepage=True)
    spec = load_fit(_fit_file(tmp_path, folder, "reach_heat.toml", 'observation_times = ["1 d", "2 d"]'))
    rows = _temperature_rows(spec.observations)
    # every 2 h from 24 h to 48 h at two loggers, ends included; the meters (10.5 h) are outside
    assert len(rows) == 2 * 13 and rows["time"].between(86400.0, 172800.0).all()
    assert set(spec.observations["kind"]) == {"temperature"}
    spec = load_fit(_fit_file(tmp_path, folder, "reach_heat.toml", 'kinds = ["seepage"]'))
    assert set(spec.observations["kind"]) == {"seepage"} and len(spec.observations) == 2


def test_a_scenario_without_heat_leaves_the_logger_rows_out(tmp_path):
    folder = _folder(tmp_path, _logger_sheet([1, 2, 3]), seepage=True)
    spec = load_fit(_fit_file(tmp_path, folder, "reach_long.toml"))
    assert set(spec.observations["kind"]) == {"seepage"}
    with pytest.raises(InputError, match=r"only for a scenario with a \[heat\] table"):
        load_fit(_fit_file(tmp_path, folder, "reach_long.toml", 'kinds = ["temperature"]'))


@pytest.mark.parametrize("kinds, message", [('["seepage", "flux"]', "kinds must be a list of observation kinds"),
                                            ('"temperature"', "kinds must be a list"),
                                            ('["head"]', "no observation of the kinds head")])
def test_bad_kinds_are_refused_naming_the_key(tmp_path, kinds, message):
    folder = _folder(tmp_path, _logger_sheet([1, 2, 3]), seepage=True)
    with pytest.raises(InputError, match=message) as err:
        load_fit(_fit_file(tmp_path, folder, "reach_heat.toml", f"kinds = {kinds}"))
    assert "fit.toml" in str(err.value) and "kinds" in str(err.value)


def test_the_cli_exits_2_on_bad_kinds(tmp_path):
    folder = _folder(tmp_path, _logger_sheet([1, 2, 3]), seepage=True)
    path = _fit_file(tmp_path, folder, "reach_heat.toml", 'kinds = ["flux"]')
    out = tmp_path / "out"
    run = subprocess.run([sys.executable, "-m", "bedflux.cli", "fit", str(path), "-o", str(out)],
                         capture_output=True, text=True)
    assert run.returncode == 2 and "kinds" in run.stderr and "Traceback" not in run.stderr
    assert not out.exists()
