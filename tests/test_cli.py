"""The command line: the built-in example, help, exit statuses and no partial output.

Facts of the trade checked here are the project's own contract (design brief): exit status 0 on
success, 2 on bad input with a message naming the file and key, never a traceback, nothing left
behind by a failed run.
"""
from __future__ import annotations

import json
import subprocess
import sys

import pytest
import xarray as xr

from bedflux.cli import main


def test_builtin_example_writes_outputs(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", "-o", str(out), "-q"]) == 0
    for name in ("result.nc", "summary.txt", "summary.json", "section.png", "provenance.json"):
        assert (out / name).is_file(), name
    with xr.open_dataset(out / "result.nc", engine="h5netcdf") as ds:
        for var in ("head", "bed_flux", "qx", "qz", "exchange"):
            assert var in ds
            assert "units" in ds[var].attrs
        exchange = float(ds["exchange"])
    summary = json.loads((out / "summary.json").read_text())
    assert summary["exchange_m2_per_s"] == pytest.approx(exchange)
    assert summary["exchange_m2_per_s"] > 0          # the built-in example is a gaining channel
    assert abs(summary["budget_closure"]) < 1e-10


def test_help_explains_itself():
    r = subprocess.run([sys.executable, "-m", "bedflux.cli", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "run" in r.stdout and "fit" in r.stdout and "plan" in r.stdout
    r = subprocess.run([sys.executable, "-m", "bedflux.cli", "run", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "built-in example" in r.stdout


BAD = {
    "negative conductivity": ('[[zone]]\nname = "aquifer"\nkh = -1e-5\n', "kh"),
    "implausible kv": ('[[zone]]\nname = "aquifer"\nkh = 1e-5\nkv = 5\n', "did you mean '5 m/d'"),
    "wrong unit": ('[[zone]]\nname = "aquifer"\nkh = "3 m"\n', "kh"),
}


def _scenario(zone_block: str, stage: str = "0.5") -> str:
    return ("[grid]\nx = [0, 10]\nbottom = -5\ndx = 1\ndz = 0.5\n[ground]\nelevation = 0\n" + zone_block +
            f"[stream]\nstage = {stage}\n")


@pytest.mark.parametrize("case", list(BAD))
def test_bad_input_exits_2_without_output(tmp_path, capsys, case):
    block, needle = BAD[case]
    path = tmp_path / "bad.toml"
    path.write_text(_scenario(block))
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert str(path) in err and needle in err
    assert "Traceback" not in err
    assert not out.exists()


def test_stage_below_base_and_missing_file(tmp_path, capsys):
    path = tmp_path / "low.toml"
    path.write_text(_scenario('[[zone]]\nname = "aquifer"\nkh = 1e-5\n', stage="-9"))
    assert main(["run", str(path), "-o", str(tmp_path / "o")]) == 2
    assert "below the model base" in capsys.readouterr().err
    assert main(["run", str(tmp_path / "nothing.toml"), "-o", str(tmp_path / "o")]) == 2
    assert "not found" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_failed_run_leaves_existing_outputs_alone(tmp_path):
    out = tmp_path / "out"
    assert main(["run", "-o", str(out), "-q"]) == 0
    before = (out / "summary.json").read_bytes()
    bad = tmp_path / "bad.toml"
    bad.write_text(_scenario('[[zone]]\nname = "aquifer"\nkh = 5\n'))
    assert main(["run", str(bad), "-o", str(out), "-q"]) == 2
    assert (out / "summary.json").read_bytes() == before


def test_field_verb_bad_folder(tmp_path, capsys):
    assert main(["field", str(tmp_path / "missing"), "-o", str(tmp_path / "f")]) == 2
    assert "Traceback" not in capsys.readouterr().err


def test_unwritable_output_folder_exits_2(tmp_path, capsys):
    blocker = tmp_path / "a_file"
    blocker.write_text("not a folder")
    assert main(["run", "-o", str(blocker / "out"), "-q"]) == 2
    err = capsys.readouterr().err
    assert "output folder" in err and "Traceback" not in err
