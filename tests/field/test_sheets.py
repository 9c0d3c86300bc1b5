"""Sheet reading and validation: units in headers, malformed rows reported and kept out."""
import csv
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from bedflux import InputError
from bedflux.field import run_field


def _rejected(out: Path) -> pd.DataFrame:
    return pd.read_csv(out / "rejected.csv")


def _meters(out: Path) -> pd.DataFrame:
    return pd.read_csv(out / "seepage_meters.csv", keep_default_na=False, na_values=[""])


def test_units_in_headers_are_converted(campaign, tmp_path):
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    m = _meters(out).set_index("site")
    # q = dV / (A dt) (Lee 1977): A1 gained 400 and 410 mL in 60 min under 0.25 m^2.
    expected = np.mean([400e-6, 410e-6]) / (0.25 * 3600)
    assert m.loc["A1", "mean [m/s]"] == pytest.approx(expected, rel=1e-6)
    assert m.loc["A1", "n"] == 2


def test_other_units_give_the_same_flux(campaign, tmp_path):
    # Same readings written in L, h and cm^2 (unit arithmetic: 1 L = 1000 mL, 1 h = 60 min).
    rows = ["site,time [min],duration [h],volume_start [L],volume_end [L],pan_area [cm^2],efficiency"]
    rows += ["A1,60,1,1.0,1.4,2500,1", "A1,120,1,1.0,1.41,2500,1"]
    campaign("seepage.csv", "\n".join(rows) + "\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    m = _meters(out).set_index("site")
    assert m.loc["A1", "mean [m/s]"] == pytest.approx(np.mean([400e-6, 410e-6]) / (0.25 * 3600), rel=1e-6)


def test_mass_sheet_matches_volume_sheet(campaign, tmp_path):
    out_v, out_m = tmp_path / "v", tmp_path / "m"
    run_field(campaign.folder, out_v, quiet=True)
    rows = ["site,time [h],duration [min],mass_start [kg],mass_end [kg],water_density [kg/m^3],pan_area [m^2],efficiency"]
    with (campaign.folder / "seepage.csv").open() as fh:
        for r in list(csv.reader(fh))[1:]:
            rows.append(f"{r[0]},{r[1]},{r[2]},{float(r[3]) / 1000},{float(r[4]) / 1000},1000,{r[5]},{r[6]}")
    campaign("seepage.csv", "\n".join(rows) + "\n")
    run_field(campaign.folder, out_m, quiet=True)
    # 1 kg of water at 1000 kg/m^3 is 1 L (definition of density).
    np.testing.assert_allclose(_meters(out_m)["mean [m/s]"], _meters(out_v)["mean [m/s]"], rtol=1e-9)


@pytest.mark.parametrize(
    "header, words",
    [
        ("site,time [h],duration,volume_start [mL],volume_end [mL],pan_area [m^2]", "duration"),
        ("site,time [h],duration [mL],volume_start [mL],volume_end [mL],pan_area [m^2]", "duration"),
        ("site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [m^2],colour", "colour"),
        ("site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [parsecs]", "pan_area"),
        ("site,time [h],volume_start [mL],volume_end [mL],pan_area [m^2]", "duration"),
    ],
    ids=["missing unit", "wrong dimension", "unknown column", "unknown unit", "missing column"],
)
def test_bad_header_raises_naming_the_column(campaign, tmp_path, header, words):
    campaign("seepage.csv", header + "\nA1,1,60,1000,1400,0.25\n")
    out = tmp_path / "out"
    with pytest.raises(InputError) as err:
        run_field(campaign.folder, out, quiet=True)
    assert "seepage.csv" in err.value.render() and words in err.value.render()
    assert not out.exists()


def _append(campaign, *lines):
    text = (campaign.folder / "seepage.csv").read_text() + "\n".join(lines) + "\n"
    campaign("seepage.csv", text)


@pytest.mark.parametrize(
    "line, column, words",
    [
        ("A1,5,60,1000,lots,0.25,1", "volume_end", "not a number"),
        ("A1,5,-30,1000,1400,0.25,1", "duration", "> 0"),
        ("Z9,5,60,1000,1400,0.25,1", "site", "not in the sites sheet"),
        ("A1,1,60,1000,1400,0.25,1", "site,time", "duplicates line 2"),
        ("A1,5,60,,1400,0.25,1", "volume_start", "empty"),
        ("A1,5,60,1000,1400,0.25,1,extra", "", "cells"),
    ],
    ids=["text in number column", "negative duration", "unknown site", "duplicated reading",
         "empty required cell", "too many cells"],
)
def test_malformed_row_is_listed_and_kept_out(campaign, tmp_path, line, column, words):
    _append(campaign, line)
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    rej = _rejected(out)
    assert len(rej) == 1
    row = rej.iloc[0]
    assert row["file"].endswith("seepage.csv") and row["line"] == 14
    assert (row["column"] if isinstance(row["column"], str) else "") == column
    assert words in row["reason"]
    m = _meters(out).set_index("site")
    assert m.loc["A1", "n"] == 2  # the bad row took no part
    assert "Z9" not in m.index


def test_more_than_half_rejected_raises(campaign, tmp_path):
    lines = [f"A1,{10 + i},60,1000,x,0.25,1" for i in range(13)]
    _append(campaign, *lines)
    out = tmp_path / "out"
    with pytest.raises(InputError) as err:
        run_field(campaign.folder, out, quiet=True)
    assert "rejected" in err.value.render()
    assert not out.exists()


def test_failed_run_leaves_outdir_untouched(campaign, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("earlier")
    campaign("seepage.csv", "site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area\n")
    with pytest.raises(InputError):
        run_field(campaign.folder, out, quiet=True)
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]


def test_missing_sites_sheet(campaign, tmp_path):
    (campaign.folder / "sites.csv").unlink()
    with pytest.raises(InputError, match="sites.csv"):
        run_field(campaign.folder, tmp_path / "out", quiet=True)


def test_unknown_sheet_name(campaign, tmp_path):
    campaign("seepage_meters.csv", "site\nA1\n")
    with pytest.raises(InputError, match="seepage_meters.csv"):
        run_field(campaign.folder, tmp_path / "out", quiet=True)


@pytest.mark.parametrize(
    "extra, words",
    [("A1,20,1,100,A", "twice"), ("C1,far,1,100,C", "not a number")],
    ids=["duplicated site", "bad site row"],
)
def test_bad_sites_sheet_raises(campaign, tmp_path, extra, words):
    text = (campaign.folder / "sites.csv").read_text() + extra + "\n"
    campaign("sites.csv", text)
    with pytest.raises(InputError) as err:
        run_field(campaign.folder, tmp_path / "out", quiet=True)
    assert "sites.csv" in err.value.render() and "line 8" in err.value.render() and words in err.value.render()


def test_mixed_volume_and_mass_raises(campaign, tmp_path):
    campaign("seepage.csv", "site,time [h],duration [min],volume_start [mL],mass_end [g],pan_area [m^2]\n"
                            "A1,1,60,1000,1400,0.25\n")
    with pytest.raises(InputError, match="volume_start and volume_end"):
        run_field(campaign.folder, tmp_path / "out", quiet=True)


def test_heavy_manometer_fluid_row_rejected(campaign, tmp_path):
    campaign("manometer.csv", "site,time [h],depth [cm],reading [cm],fluid_density [kg/m^3]\n"
                              "A1,1,30,10,820\nA2,1,30,10,820\nA3,1,30,10,1050\n")
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    rej = _rejected(out)
    assert list(rej["line"]) == [4] and "lighter" in rej["reason"].iloc[0]


def _slug(geometry_second_row="", points=8):
    rows = ["test,site,time [s],displacement [cm],casing_radius [cm],screen_radius [cm],screen_length [cm]"]
    for i in range(points):
        geo = "1.27,1.27,15" if i == 0 else (geometry_second_row if i == 1 else ",,")
        rows.append(f"T1,A1,{10 * i},{30 * np.exp(-i / 3):.4f},{geo}")
    for i in range(8):
        geo = "1.27,1.27,15" if i == 0 else ",,"
        rows.append(f"T2,A2,{10 * i},{30 * np.exp(-i / 3):.4f},{geo}")
    return "\n".join(rows) + "\n"


def test_slug_geometry_differing_within_a_test_rejects_the_test(campaign, tmp_path):
    campaign("slug.csv", _slug(geometry_second_row="2.54,1.27,15"))
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    rej = _rejected(out)
    assert len(rej) == 8 and rej["reason"].str.contains("casing_radius").all()
    assert list(pd.read_csv(out / "slug_tests.csv")["test"]) == ["T2"]


def test_slug_test_with_too_few_points_is_rejected(campaign, tmp_path):
    campaign("slug.csv", _slug(points=2))
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    rej = _rejected(out)
    assert len(rej) == 2 and rej["reason"].str.contains("fewer than 3").all()


def test_slug_k_from_sheet(campaign, tmp_path):
    # Hvorslev (1951) simplified: T0 = 30 s (displacements e^(-t/30)), r = R = 0.0127, Le = 0.15 m.
    campaign("slug.csv", _slug())
    out = tmp_path / "out"
    run_field(campaign.folder, out, quiet=True)
    k = pd.read_csv(out / "slug_tests.csv").set_index("test").loc["T2", "k_hvorslev [m/s]"]
    assert k == pytest.approx(0.0127**2 * np.log(0.15 / 0.0127) / (2 * 0.15 * 30.0), rel=1e-3)
