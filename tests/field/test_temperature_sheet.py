"""The temperature sheet through `bedflux field`: parsing, bad input, outputs, observations and
the reversal found in a record whose flux changes sign (records made from the periodic solution
of Stallman 1965 for known fluxes; invented sites)."""
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bedflux import InputError
from bedflux.field import reduce_field, run_field
from bedflux.field.periodic import wavenumbers
from bedflux.field.thermal_properties import SEDIMENTS, WATER_HEAT_CAPACITY
from bedflux.field.thermal_summary import reversals

DAY = 86400.0
SAND = SEDIMENTS["sand"]

SITES = """site,x [m],y [m],bed_elevation [m],transect
R1,10,2,100.0,A
R2,40,2,99.9,B
"""


def _rows(site, flux_up, depths_cm=(5, 15), days=6, seed=0, unit_h=True):
    """Readings every 30 min from the periodic solution; flux_up may be a function of time (s)."""
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, days * DAY, 1800.0)
    q = flux_up(t) if callable(flux_up) else np.full(t.size, flux_up)
    v = -q * WATER_HEAT_CAPACITY / SAND.heat_capacity
    a, b = wavenumbers(v, SAND.diffusivity, DAY)
    rows = []
    for z in depths_cm:
        T = 15 + 2.5 * np.exp(-a * z / 100) * np.cos(2 * np.pi * t / DAY - b * z / 100) + rng.normal(0, 0.02, t.size)
        rows += [f"{site},{ti / 3600:g},{z},{Ti:.3f}" for ti, Ti in zip(t, T)]
    return rows


def _folder(tmp_path, rows, header="site,time [h],depth [cm],temperature [degC]", sites=SITES):
    folder = tmp_path / "sheets"
    folder.mkdir(exist_ok=True)
    (folder / "sites.csv").write_text(sites)
    (folder / "temperature.csv").write_text("\n".join([header] + rows) + "\n")
    return folder


def test_fluxes_and_observations_from_a_temperature_sheet(tmp_path):
    folder = _folder(tmp_path, _rows("R1", 3e-6) + _rows("R2", -3e-6, depths_cm=(0, 10, 20), seed=1))
    out = tmp_path / "out"
    run_field(folder, out, quiet=True)
    table = pd.read_csv(out / "thermal_flux.csv")
    # one pair at R1, two at R2; six daily windows each
    assert sorted(table.groupby(["site", "mid_depth [m]"]).size().items()) == [
        (("R1", 0.10), 6), (("R2", 0.05), 6), (("R2", 0.15), 6)]
    truth = np.where(table["site"] == "R1", 3e-6, -3e-6)
    # within the stated uncertainty (2 sd) in every window: the sand defaults are the true
    # properties here, so only noise, spacing and the property ranges spread the estimate
    assert (np.abs(table["flux [m/s]"] - truth) <= 2 * table["flux_sd [m/s]"]).all()
    assert np.allclose(table["mid_elevation [m]"], np.where(table["site"] == "R1", 100.0, 99.9) - table["mid_depth [m]"])
    obs = pd.read_csv(out / "observations.csv")
    thermal = obs[obs["kind"] == "thermal_flux"]
    assert len(thermal) == 18 and (thermal["sigma"] > 0).all()
    assert set(thermal["depth"].round(6)) == {0.05, 0.10, 0.15}
    assert set(thermal["x"]) == {10.0, 40.0}
    for name in ("temperature_records.png", "thermal_flux.png"):
        assert (out / name).stat().st_size > 10_000
    summary = json.loads((out / "field_summary.json").read_text())
    assert summary["observations"]["thermal_flux"] == 18
    r1 = [p for p in summary["temperature"]["pairs"] if p["site"] == "R1"][0]
    assert r1["gaining_windows"] == 6 and r1["reversals"] == []
    assert summary["temperature"]["properties"]["R1"]["thermal_conductivity [W/(m K)]"] == SAND.thermal_conductivity


def test_a_flood_reversal_is_found_and_timed(tmp_path):
    # upward 3e-6 m/s, downward -4e-6 m/s from day 4 to day 8 (a smooth step over half a day each
    # way), then upward again; the reversal must be found, starting and ending within a day of the
    # true sign changes (the windows are a day long)
    def flux(t):
        down = 0.5 * (np.tanh((t - 4 * DAY) / (0.15 * DAY)) - np.tanh((t - 8 * DAY) / (0.15 * DAY)))
        return 3e-6 - 7e-6 * down
    folder = _folder(tmp_path, _rows("R1", flux, days=12))
    r = reduce_field(folder)
    (pair,) = r.summary["temperature"]["pairs"]
    (rev,) = pair["reversals"]
    assert (rev["from"], rev["to"]) == ("gaining", "losing")
    # true crossings: flux = 0 where down = 3/7, i.e. t = 4 d + 0.15 d atanh(2*3/7 - 1)
    start = 4 * DAY + 0.15 * DAY * np.arctanh(6 / 7 - 1)
    end = 8 * DAY - 0.15 * DAY * np.arctanh(6 / 7 - 1)
    assert abs(rev["start [s]"] - start) < DAY and abs(rev["end [s]"] - end) < DAY
    assert "reverses at R1" in r.summary["temperature"]["headline"]


def test_reversal_timing_on_a_plain_series():
    # crossings by linear interpolation between window centres
    t = np.arange(8.0)
    q = np.array([1.0, 1.0, 1.0, -1.0, -1.0, 0.02, 1.0, 1.0])
    (rev,) = reversals(t, q, np.full(8, 0.1))
    assert rev["start [s]"] == pytest.approx(2.5) and rev["end [s]"] == pytest.approx(4 + 1 / 1.02)
    assert reversals(t, np.abs(q), np.full(8, 0.1)) == []


def test_datetimes_and_sediment_column(tmp_path):
    rows = _rows("R1", 2e-6, days=3)
    as_dates = []
    for row in rows:
        site, hours, depth, temp = row.split(",")
        stamp = pd.Timestamp("2026-07-01 00:00") + pd.Timedelta(hours=float(hours))
        as_dates.append(f"{site},{stamp.isoformat()},{depth},{temp}")
    sites = "site,x [m],y [m],bed_elevation [m],sediment\nR1,10,2,100.0,sand\nR2,40,2,99.9,silt\n"
    folder = _folder(tmp_path, as_dates, header="site,datetime,depth [cm],temperature [degC]", sites=sites)
    r = reduce_field(folder)
    assert r.summary["temperature"]["time_origin"] == "2026-07-01T00:00:00"
    assert np.allclose(r.temperature.fluxes["time [s]"], [0.5 * DAY, 1.5 * DAY, 2.5 * DAY])


@pytest.mark.parametrize("header, match", [
    ("site,time [h],depth [cm],temperature [degF]", "temperatures are read in degC only"),
    ("site,time [h],depth [cm],temperature [K]", "temperatures are read in degC only"),
    ("site,time [h],depth [cm],temperature", r"needs its unit in brackets, e.g. 'temperature \[degC\]'"),
    ("site,time [h],temperature [degC]", "required column 'depth' is missing"),
    ("site,depth [cm],temperature [degC]", "exactly one of the columns time, datetime must be present"),
    ("site,time [h],depth [cm],temperature [degC],salinity [1]", "unknown column 'salinity'"),
])
def test_bad_headers_name_the_file_and_column(tmp_path, header, match):
    rows = _rows("R1", 0.0, days=2)
    if "salinity" in header:
        rows = [r + ",0" for r in rows]
    folder = _folder(tmp_path, rows, header=header)
    with pytest.raises(InputError, match=match) as err:
        run_field(folder, tmp_path / "out", quiet=True)
    assert "temperature.csv" in str(err.value)
    assert not (tmp_path / "out").exists()


def test_a_reading_in_kelvin_numbers_is_implausible(tmp_path):
    rows = _rows("R1", 0.0, days=2)
    rows[7] = "R1,3.5,5,288.4"
    with pytest.raises(InputError, match=r"line 9, column 'temperature'.*288.4 degC is outside the plausible range"):
        run_field(_folder(tmp_path, rows), tmp_path / "out", quiet=True)


def test_unknown_sediment_names_sites_line_and_column(tmp_path):
    sites = "site,x [m],y [m],bed_elevation [m],sediment\nR1,10,2,100.0,gravel\n"
    folder = _folder(tmp_path, _rows("R1", 0.0, days=2), sites=sites)
    with pytest.raises(InputError, match=r"sites.csv: line 2, column 'sediment': sediment 'gravel' of site 'R1' "
                                         r"is not one of sand, silt"):
        run_field(folder, tmp_path / "out", quiet=True)


def test_bad_rows_are_rejected_and_listed(tmp_path):
    rows = _rows("R1", 1e-6, days=3)
    rows[3] = "R1,,5,15.2"
    rows[4] = "R1,2.0,5,warm"
    rows[5] = rows[6]  # a repeated (site, depth, time)
    rejected = reduce_field(_folder(tmp_path, rows)).rejected.rows
    reasons = " | ".join(r[3] for r in rejected)
    assert len(rejected) == 3
    assert "'time' is required" in reasons and "'warm' is not a number" in reasons and "duplicates line" in reasons


def test_single_depth_is_flagged(tmp_path):
    r = reduce_field(_folder(tmp_path, _rows("R1", 1e-6, depths_cm=(5,), days=2) + _rows("R2", 1e-6, days=2)))
    flags = r.flags.frame()
    assert ((flags["item"] == "R1") & (flags["flag"] == "single_depth")).any()


def test_cli_writes_thermal_outputs_and_exits_2_on_bad_sheet(tmp_path):
    folder = _folder(tmp_path, _rows("R1", -2e-6, days=3))
    out = tmp_path / "out"
    ok = subprocess.run([sys.executable, "-m", "bedflux.cli", "field", str(folder), "-o", str(out)],
                        capture_output=True, text=True)
    assert ok.returncode == 0, ok.stderr
    assert "temperature: 1 sensor pair(s) at 1 site(s)" in ok.stdout
    assert (out / "thermal_flux.csv").exists()
    (folder / "temperature.csv").write_text("site,time [h],depth [cm],temperature [degF]\nR1,0,5,60\n")
    bad = subprocess.run([sys.executable, "-m", "bedflux.cli", "field", str(folder), "-o", str(tmp_path / "o2")],
                         capture_output=True, text=True)
    assert bad.returncode == 2
    assert "temperature.csv" in bad.stderr and "degC" in bad.stderr and "Traceback" not in bad.stderr


def test_demo_campaign_temperature_findings(demo):
    # the invented demo records (scenarios/make_temperature_sheet.py): a flood from day 8 turns the
    # flux downward at A2 and B2 (true zero crossings near day 8.3 and back after day 13.5) but only
    # weakens it at C2; before the flood the rods read the meters' fluxes
    out, summary = demo
    pairs = summary["temperature"]["pairs"]
    reversed_sites = {p["site"] for p in pairs if p["reversals"]}
    assert reversed_sites == {"A2", "B2"}
    for p in pairs:
        for r in p["reversals"]:
            assert 7 * DAY < r["start [s]"] < 9.5 * DAY
            assert r["end [s]"] is None or 11 * DAY < r["end [s]"] < 16 * DAY
        assert p["meter"]["meter"] == p["site"] and p["meter"]["agree"]
    assert len(pd.read_csv(out / "thermal_flux.csv")) == 6 * 21


def test_site_thermal_properties_from_the_sites_sheet(tmp_path):
    # own values (any sediment word), the silt defaults, and the sand conductivity with a porosity
    sites = ("site,x [m],y [m],bed_elevation [m],sediment,thermal_conductivity [W/(m K)],heat_capacity [MJ/(m^3 K)],"
             "porosity\nR1,10,2,100.0,gravel,2.9,2.4,\nR2,40,2,99.9,silt,,,\nR3,70,2,99.8,,,,0.4\n")
    rows = _rows("R1", 1e-6, days=2) + _rows("R2", 1e-6, days=2) + _rows("R3", 1e-6, days=2)
    props = reduce_field(_folder(tmp_path, rows, sites=sites)).summary["temperature"]["properties"]
    assert props["R1"]["thermal_conductivity [W/(m K)]"] == 2.9
    assert props["R1"]["heat_capacity [J/(m^3 K)]"] == pytest.approx(2.4e6)
    assert props["R1"]["thermal_conductivity_range"] == pytest.approx([2.9 * 0.85, 2.9 * 1.15])
    assert props["R2"]["thermal_conductivity [W/(m K)]"] == SEDIMENTS["silt"].thermal_conductivity
    # n rho_w c_w + (1 - n) rho_s c_s with 4.186e6 and 2.0e6 J/(m^3 K)
    assert props["R3"]["heat_capacity [J/(m^3 K)]"] == pytest.approx(0.4 * 4.186e6 + 0.6 * 2.0e6)
    assert props["R3"]["thermal_conductivity_range"] == list(SAND.conductivity_range)


def test_too_damped_windows_are_left_out_of_the_observations(tmp_path):
    # strong upwelling (2e-5 m/s) between 5 and 60 cm: the deep wave is far below the 0.02 degC noise
    out = tmp_path / "out"
    run_field(_folder(tmp_path, _rows("R1", 2e-5, depths_cm=(5, 60), days=4)), out, quiet=True)
    table = pd.read_csv(out / "thermal_flux.csv")
    damped = table["flags"].fillna("").str.contains("too_damped")
    assert damped.sum() >= 3
    obs = pd.read_csv(out / "observations.csv")
    flagged = pd.read_csv(out / "flagged_observations.csv")
    assert (obs["kind"] == "thermal_flux").sum() == len(table) - damped.sum()
    left = flagged[flagged["kind"] == "thermal_flux"]
    assert len(left) == damped.sum() and left["reason"].str.contains("too small to read").all()


def test_demo_sheet_is_what_its_script_writes():
    # the invented demo records are reproducible from scenarios/make_temperature_sheet.py
    import importlib.util

    path = Path(__file__).resolve().parents[2] / "scenarios" / "make_temperature_sheet.py"
    spec = importlib.util.spec_from_file_location("make_temperature_sheet", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    written = (path.parent / "field" / "temperature.csv").read_text(encoding="utf-8").splitlines()
    assert written[1:] == module.records()
