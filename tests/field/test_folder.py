"""The sheets folder: sheet names in any case, and every file that is not read listed with why."""
import shutil
from pathlib import Path

import pandas as pd
import pytest

from bedflux import InputError
from bedflux.field import run_field

DEMO = Path(__file__).resolve().parents[2] / "scenarios" / "field"


def _copy_demo(folder: Path, renames: dict[str, str]) -> Path:
    folder.mkdir()
    for sheet in DEMO.glob("*.csv"):
        shutil.copy(sheet, folder / renames.get(sheet.name, sheet.name))
    return folder


def test_upper_case_names_are_read(tmp_path):
    plain = _copy_demo(tmp_path / "plain", {})
    shouting = _copy_demo(tmp_path / "shouting", {"manometer.csv": "Manometer.CSV", "seepage.csv": "SEEPAGE.csv",
                                                  "sites.csv": "Sites.Csv"})
    run_field(plain, tmp_path / "a", quiet=True)
    run_field(shouting, tmp_path / "b", quiet=True)
    a = pd.read_csv(tmp_path / "a" / "observations.csv")
    b = pd.read_csv(tmp_path / "b" / "observations.csv")
    # the demo campaign: 14 unflagged meters, 6 piezometers with a gradient and a head each, and
    # three sensor rods of two pairs read for 21 daily windows, and six loggers read 37 times
    assert len(b) == len(a) == 26 + 126 + 222
    assert (a["kind"] == "thermal_flux").sum() == 126 and (a["kind"] == "temperature").sum() == 222
    pd.testing.assert_frame_equal(a, b)


def test_two_files_for_one_sheet_are_refused(tmp_path):
    folder = _copy_demo(tmp_path / "sheets", {})
    shutil.copy(folder / "manometer.csv", folder / "Manometer.CSV")
    with pytest.raises(InputError, match="two files for one sheet"):
        run_field(folder, tmp_path / "out", quiet=True)


def test_unknown_upper_case_csv_is_refused(tmp_path):
    folder = _copy_demo(tmp_path / "sheets", {})
    (folder / "Seepage_old.CSV").write_text("site\nA1\n")
    with pytest.raises(InputError, match="Seepage_old.CSV"):
        run_field(folder, tmp_path / "out", quiet=True)


def test_files_not_read_are_listed_with_why(tmp_path, capsys):
    folder = _copy_demo(tmp_path / "sheets", {})
    (folder / "notes.txt").write_text("rain on day 2\n")
    (folder / "slug.xlsx").write_bytes(b"PK")
    (folder / "velocity.txt").write_text("site,time [h],head_difference [mm]\n")
    (folder / "~$seepage.csv").write_bytes(b"")
    (folder / "photos").mkdir()
    summary = run_field(folder, tmp_path / "out", quiet=False)
    listed = pd.read_csv(tmp_path / "out" / "not_read.csv").set_index("file")["reason"]
    assert sorted(listed.index) == ["notes.txt", "photos", "slug.xlsx", "velocity.txt", "~$seepage.csv"]
    assert "not a sheet" in listed["notes.txt"]
    assert "folder" in listed["photos"]
    assert "save the sheet as CSV under 'slug.csv'" in listed["slug.xlsx"]
    assert "rename it 'velocity.csv'" in listed["velocity.txt"]
    assert "lock file" in listed["~$seepage.csv"]
    assert [e["file"] for e in summary["files_not_read"]] == sorted(listed.index)
    printed = capsys.readouterr().out
    for name in listed.index:
        assert f"not read: {name}" in printed
