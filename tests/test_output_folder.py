"""The output folder: replaced as a whole, locked, committed all at once, checked before computing.

What is checked is the project's own contract for its outputs (docs/outputs.md, design brief:
"never half-written output"): a command's output in a folder is one consistent set of files, the
user's own files are never touched, and a full disk, a second command, a kill or a failed move
cannot mix two runs. Tests that need a file system of their own mount a tmpfs, which needs root;
they are skipped with the reason otherwise.
"""
from __future__ import annotations

import errno
import fcntl
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from bedflux.outputs import manifest
from bedflux.cli import main
from bedflux.errors import InputError
from bedflux.outputs.files import copy_inputs
from bedflux.report.collect import collect

ROOT = Path(__file__).resolve().parents[1]
MODEL = ROOT / "model"

GRID = ('[grid]\nx = [0, 2]\nbottom = -2\ndx = 0.5\ndz = 0.1\n[ground]\nelevation = 0\n'
        '[[zone]]\nname = "a"\nkh = 1e-5\n')
WAVE = GRID + ('[stream.wave]\nmean = 0.5\namplitude = 0.2\nperiod = "1 h"\n'
               '[time]\nend = "4 h"\nstep = "10 min"\noutput_every = "1 h"\n')
COLUMN = GRID + "[stream]\nstage = 0.5\n"
#: Long enough to be stopped part way (about a minute of stepping when left alone).
SLOW = ('title = "Slow wave (invented)"\n[grid]\nx = [0, 20]\nbottom = -4\ndx = 0.1\ndz = 0.1\n'
        '[ground]\nelevation = 0\n[[zone]]\nname = "a"\nkh = 1e-5\n'
        '[stream.wave]\nmean = 0.5\namplitude = 0.2\nperiod = "1 d"\n'
        '[time]\nend = "20 d"\nstep = "1 min"\noutput_every = "6 h"\n')


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text)
    return path


def snapshot(folder: Path) -> dict[str, bytes]:
    """Every file below ``folder`` (hidden ones too) with its bytes."""
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def stage_debris(*folders: Path) -> list[Path]:
    """Hidden staging folders left in any of ``folders``."""
    return [p for f in folders if f.is_dir() for p in f.iterdir() if p.name.startswith(".") and "stage" in p.name]


def cli(*args: str, timeout: float = 300, **kw) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(MODEL))
    return subprocess.run([sys.executable, "-m", "bedflux.cli", *args], capture_output=True, text=True,
                          timeout=timeout, env=env, **kw)


def popen(*args: str) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(MODEL))
    return subprocess.Popen([sys.executable, "-m", "bedflux.cli", *args], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env)


def wait_for(condition, timeout: float = 120.0) -> None:
    end = time.monotonic() + timeout
    while not condition():
        if time.monotonic() > end:
            raise AssertionError("timed out waiting")
        time.sleep(0.05)


@pytest.fixture
def mounts():
    """Mount tmpfs file systems (root only); unmounted after the test."""
    if os.geteuid() != 0:
        pytest.skip(f"needs root to mount a tmpfs (running as uid {os.geteuid()})")
    done: list[Path] = []

    def mount(path: Path, size: str = "16m") -> Path:
        path.mkdir(parents=True, exist_ok=True)
        r = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(path)],
                           capture_output=True, text=True)
        if r.returncode:
            pytest.skip(f"cannot mount a tmpfs here: {r.stderr.strip()}")
        done.append(path)
        return path

    def read_only(path: Path, bind: bool = False) -> None:
        if bind:
            subprocess.run(["mount", "--bind", str(path), str(path)], check=True)
            done.append(path)
        opts = "remount,bind,ro" if bind else "remount,ro"
        subprocess.run(["mount", "-o", opts, str(path)], check=True)

    mount.read_only = read_only
    yield mount
    for p in reversed(done):
        subprocess.run(["umount", "-l", str(p)], capture_output=True)


# ------------------------------------------------------------------ 1. replaced as a whole

def test_second_run_replaces_the_first_as_a_whole(tmp_path):
    wave = write(tmp_path / "wave.toml", WAVE)
    column = write(tmp_path / "column.toml", COLUMN)
    out = tmp_path / "out"
    assert main(["run", str(wave), "-o", str(out), "-q"]) == 0
    assert (out / "events.csv").is_file() and (out / "animation.gif").is_file()
    write(out / "notes.txt", "my own notes\n")                  # the user's own file
    write(out / "inputs" / "site_photo.txt", "mine too\n")

    assert main(["run", str(column), "-o", str(out), "-q"]) == 0
    for name in ("events.csv", "animation.gif", "exchange.png", "bed_flux_map.png", "inputs/wave.toml"):
        assert not (out / name).exists(), f"{name} of the earlier transient run was left behind"
    assert (out / "notes.txt").read_text() == "my own notes\n"
    assert (out / "inputs" / "site_photo.txt").is_file()
    listed = manifest.listed(out, "run")
    assert "inputs/column.toml" in listed and "notes.txt" not in listed
    assert {p for p in listed} == {p.relative_to(out).as_posix() for p in out.rglob("*")
                                    if p.is_file() and p.name not in ("notes.txt", "site_photo.txt",
                                                                      "run_manifest.json")}
    project = collect(out)
    (run,) = project.of_kind("run")
    assert run.data["summary"]["run"] == "steady"
    assert [f.name for f in run.figures] == ["section.png"] and "events.csv" not in run.tables
    assert [p.name for p in run.inputs] == ["column.toml"]


def test_field_output_is_replaced_as_a_whole(tmp_path):
    full = tmp_path / "sheets"
    shutil.copytree(ROOT / "scenarios" / "field", full)
    fewer = tmp_path / "fewer"
    fewer.mkdir()
    for name in ("sites.csv", "seepage.csv"):
        shutil.copy(full / name, fewer / name)
    out = tmp_path / "field"
    assert main(["field", str(full), "-o", str(out), "-q"]) == 0
    assert (out / "piezometers.csv").is_file()
    assert main(["field", str(fewer), "-o", str(out), "-q"]) == 0
    assert not (out / "piezometers.csv").exists() and not (out / "slug_tests.csv").exists()
    assert (out / "seepage_meters.csv").is_file() and "field_summary.json" in manifest.listed(out, "field")


# ------------------------------------------------------------------ 2. lock and commit

def test_second_command_into_a_locked_folder_is_refused(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    with open(out / ".bedflux-lock", "w") as held:              # what a running command holds
        fcntl.flock(held, fcntl.LOCK_EX | fcntl.LOCK_NB)
        assert main(["run", "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert "another bedflux command is writing into this folder" in err and str(out) in err
    assert not (out / "result.nc").exists()


def test_two_runs_started_together_one_is_refused(tmp_path):
    slow = write(tmp_path / "slow.toml", SLOW.replace('end = "20 d"', 'end = "6 h"'))
    out = tmp_path / "out"
    first = popen("run", str(slow), "-o", str(out), "-q")
    try:
        wait_for(lambda: stage_debris(out))                    # the first is computing
        first.send_signal(signal.SIGSTOP)                       # and stays in the middle of it
        try:
            second = cli("run", "-o", str(out), "-q", timeout=120)
        finally:
            first.send_signal(signal.SIGCONT)
        assert second.returncode == 2, second.stderr
        assert "another bedflux command is writing into this folder" in second.stderr
        assert first.wait(timeout=300) == 0
    finally:
        first.kill()
    with xr.open_dataset(out / "result.nc", engine="h5netcdf") as ds:
        assert ds.attrs["title"] == "Slow wave (invented)"


def test_failed_commit_leaves_the_earlier_output_whole(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["run", str(write(tmp_path / "column.toml", COLUMN)), "-o", str(out), "-q"]) == 0
    before = snapshot(out)
    inputs = out / "inputs"
    if os.geteuid() == 0:                                       # root ignores permissions: a read-only mount
        subprocess.run(["mount", "--bind", str(inputs), str(inputs)], check=True)
        try:
            subprocess.run(["mount", "-o", "remount,bind,ro", str(inputs)], check=True)
            code = main(["run", str(write(tmp_path / "wave.toml", WAVE)), "-o", str(out), "-q"])
        finally:
            subprocess.run(["umount", "-l", str(inputs)], check=True)
    else:
        inputs.chmod(0o555)
        try:
            code = main(["run", str(write(tmp_path / "wave.toml", WAVE)), "-o", str(out), "-q"])
        finally:
            inputs.chmod(0o755)
    assert code == 2
    err = capsys.readouterr().err
    assert "unchanged" in err and "Traceback" not in err
    assert snapshot(out) == before                              # no new figure beside the old results


KILL_IN_COMMIT = """
import os, sys
from pathlib import Path
out = Path(sys.argv[1]).resolve()
real = os.replace
moves = []
def replace(src, dst):
    if Path(dst).resolve().parent == out:
        moves.append(dst)
        if len(moves) == 3:
            os._exit(9)                                         # killed half way through the switch
    return real(src, dst)
os.replace = replace
from bedflux.cli import main
main(["run", sys.argv[2], "-o", str(out), "-q"])
"""


def test_kill_during_the_commit_never_mixes_two_runs(tmp_path):
    out = tmp_path / "out"
    assert main(["run", str(write(tmp_path / "column.toml", COLUMN)), "-o", str(out), "-q"]) == 0
    before = snapshot(out)
    wave = write(tmp_path / "wave.toml", WAVE)
    r = subprocess.run([sys.executable, "-c", KILL_IN_COMMIT, str(out), str(wave)], capture_output=True,
                       text=True, timeout=300, env=dict(os.environ, PYTHONPATH=str(MODEL)))
    assert r.returncode == 9, r.stderr
    # what a reader trusts now is the earlier run, whole, or nothing at all
    try:
        runs = collect(out).of_kind("run")
    except InputError:
        runs = []
    for run in runs:
        for path in run.figures + run.inputs + list(run.tables.values()) + [run.folder / "summary.json"]:
            assert before.get(path.relative_to(out).as_posix()) == path.read_bytes(), path.name
    # the next run into the folder finishes the job: one whole output, no debris
    assert main(["run", str(wave), "-o", str(out), "-q"]) == 0
    assert not stage_debris(out, tmp_path)
    (run,) = collect(out).of_kind("run")
    assert run.data["summary"]["run"] == "transient"
    assert sorted(manifest.listed(out, "run")) == sorted(
        p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file() and p.name != "run_manifest.json")


# ------------------------------------------------------------------ 3. mount points, read-only parents

def test_output_folder_may_be_a_mount_point(tmp_path, mounts):
    out = mounts(tmp_path / "stick")
    assert main(["run", "-o", str(out), "-q"]) == 0
    assert (out / "result.nc").is_file() and (out / "run_manifest.json").is_file()
    assert not stage_debris(out, tmp_path)


def test_writable_folder_under_a_read_only_parent(tmp_path, mounts):
    parent = mounts(tmp_path / "ro_parent", size="1m")
    (parent / "sub").mkdir()
    mounts(parent / "sub")
    mounts.read_only(parent)
    assert main(["run", "-o", str(parent / "sub"), "-q"]) == 0
    assert (parent / "sub" / "result.nc").is_file()


def test_writable_folder_under_a_read_only_parent_without_root(tmp_path):
    if os.geteuid() == 0:
        pytest.skip("root ignores folder permissions; the tmpfs test covers this case")
    parent = tmp_path / "ro_parent"
    (parent / "sub").mkdir(parents=True)
    parent.chmod(0o555)
    try:
        assert main(["run", "-o", str(parent / "sub"), "-q"]) == 0
    finally:
        parent.chmod(0o755)
    assert (parent / "sub" / "result.nc").is_file()


# ------------------------------------------------------------------ 4. checked before computing

def _no_computing(monkeypatch):
    import bedflux.outputs.run as run_module

    def refuse(*a, **k):
        raise AssertionError("the computation started before the output folder was checked")

    monkeypatch.setattr(run_module, "simulate", refuse)


def test_too_little_free_space_is_refused_before_computing(tmp_path, monkeypatch, capsys):
    slow = write(tmp_path / "slow.toml", SLOW)
    _no_computing(monkeypatch)
    real = shutil.disk_usage
    monkeypatch.setattr(shutil, "disk_usage", lambda p: real(p)._replace(free=3_000_000))
    out = tmp_path / "out"
    assert main(["run", str(slow), "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    # 200 x 40 cells x 82 output times x 3 variables x 8 bytes, about 16 MB
    assert "8,000 cells x" in err and "output times x 3 variables x 8 bytes" in err
    assert str(out) in err and "free" in err
    assert not out.exists()


def test_too_little_free_space_on_a_real_small_disk(tmp_path, mounts):
    out = mounts(tmp_path / "small", size="4m")
    slow = write(tmp_path / "slow.toml", SLOW)
    started = time.monotonic()
    r = cli("run", str(slow), "-o", str(out), "-q", timeout=120)
    assert r.returncode == 2 and "not enough free space" in r.stderr and "Traceback" not in r.stderr
    assert time.monotonic() - started < 60                      # refused, not computed
    assert list(out.iterdir()) == []


def test_read_only_output_folder_is_refused_before_computing(tmp_path, mounts, monkeypatch, capsys):
    out = mounts(tmp_path / "ro")
    mounts.read_only(out)
    _no_computing(monkeypatch)
    assert main(["run", "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert str(out) in err and "Read-only" in err


def test_disk_full_while_writing_exits_2_naming_the_folder(tmp_path, monkeypatch, capsys):
    import bedflux.outputs.run as run_module

    def full(ds, path):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))

    monkeypatch.setattr(run_module, "write_result", full)
    out = tmp_path / "out"
    assert main(["run", "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert "disk is full" in err and str(out) in err and "cells x" in err and "Traceback" not in err
    assert not out.exists()


def test_disk_filling_up_during_the_run_on_a_real_disk(tmp_path, mounts, monkeypatch, capsys):
    out = mounts(tmp_path / "small", size="8m")
    import bedflux.outputs.run as run_module

    real = run_module.simulate

    def and_fill_the_disk(*a, **k):
        ds = real(*a, **k)
        filler = tmp_path / "small" / "someone_elses_file"
        with open(filler, "wb") as f:                       # another program takes the space
            try:
                while True:
                    f.write(b"\0" * 65536)
            except OSError:
                pass
        return ds

    monkeypatch.setattr(run_module, "simulate", and_fill_the_disk)
    assert main(["run", "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert "disk is full" in err and str(out) in err and "Traceback" not in err
    assert sorted(p.name for p in out.iterdir()) == ["someone_elses_file"]


def test_debris_of_a_killed_run_is_cleaned_by_the_next(tmp_path):
    slow = write(tmp_path / "slow.toml", SLOW)
    out = tmp_path / "out"
    proc = popen("run", str(slow), "-o", str(out), "-q")
    try:
        wait_for(lambda: stage_debris(out, tmp_path))
        time.sleep(1.0)
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
    assert stage_debris(out, tmp_path)                           # a killed run leaves its staging folder
    assert main(["run", "-o", str(out), "-q"]) == 0
    assert not stage_debris(out, tmp_path)
    assert not (out / ".bedflux-lock").exists()


# ------------------------------------------------------------------ provenance and identical results

def test_inputs_of_the_same_name_are_kept_apart(tmp_path):
    case = tmp_path / "case"
    write(case / "a" / "h.csv", "time [h],stage [m]\n0,0.5\n5,0.6\n10,0.5\n")
    write(case / "b" / "h.csv", "time [h],head [m]\n0,0.4\n5,0.4\n10,0.4\n")
    write(case / "series" / "s.toml", "time [h],head [m]\n0,0.3\n5,0.3\n10,0.3\n")   # named like the scenario
    text = GRID + ('[stream]\nstage_csv = "a/h.csv"\n[sides]\nleft = {head_csv = "b/h.csv"}\n'
                   'right = {head_csv = "series/s.toml"}\n[time]\nend = "10 h"\nstep = "1 h"\n')
    scen = write(case / "s.toml", text)
    out = tmp_path / "out"
    assert main(["run", str(scen), "-o", str(out), "-q"]) == 0
    prov = json.loads((out / "provenance.json").read_text())
    assert sorted(prov["inputs"]) == ["a/h.csv", "b/h.csv", "s.toml", "series/s.toml"]
    for name, digest in prov["inputs"].items():
        original = Path(prov["input_paths"][name])
        assert (out / "inputs" / name).read_bytes() == original.read_bytes()
        assert manifest.sha256(original) == digest
    assert (out / "inputs" / "s.toml").read_text() == text


def test_inputs_outside_the_scenario_folder_get_numbered_names(tmp_path):
    scen = write(tmp_path / "case" / "s.toml", "title = 'x'\n")
    a = write(tmp_path / "case" / "h.csv", "1\n")
    b = write(tmp_path / "shared" / "h.csv", "2\n")
    c = write(tmp_path / "other" / "H.csv", "3\n")
    (tmp_path / "out").mkdir()
    stored = copy_inputs(tmp_path / "out", [scen, a, b, c, a])
    assert list(stored) == ["s.toml", "h.csv", "h-2.csv", "H-3.csv"]
    assert [(tmp_path / "out" / "inputs" / n).read_text() for n in stored] == ["title = 'x'\n", "1\n", "2\n", "3\n"]
    assert stored["h-2.csv"]["path"] == str(b)


def test_two_identical_runs_write_identical_result_files(tmp_path):
    wave = write(tmp_path / "wave.toml", WAVE)
    for name in ("one", "two"):
        assert main(["run", str(wave), "-o", str(tmp_path / name), "-q"]) == 0
    one = (tmp_path / "one" / "result.nc").read_bytes()
    two = (tmp_path / "two" / "result.nc").read_bytes()
    assert one == two
    with xr.open_dataset(tmp_path / "one" / "result.nc", engine="h5netcdf") as ds:
        assert "factorization_seconds" not in ds.attrs and ds.attrs["steps"] == 24


def test_result_is_compressed_netcdf4_and_reads_back_exactly(tmp_path):
    # netCDF-4 is HDF5 underneath (Unidata netCDF User Guide, "netCDF-4 format"); an HDF5 file
    # starts with the superblock signature \x89HDF\r\n\x1a\n (HDF5 File Format Specification,
    # section II.A). Compression is the deflate filter, which h5py reports as "gzip".
    import h5py

    import bedflux
    from bedflux.outputs.files import read_result, write_result

    ds = bedflux.simulate(bedflux.load(write(tmp_path / "wave.toml", WAVE)))
    path = write_result(ds, tmp_path / "result.nc")
    assert path.read_bytes()[:8] == b"\x89HDF\r\n\x1a\n"
    with h5py.File(path, "r") as f:
        assert f["head"].compression == "gzip" and f["head"].shuffle
        assert "_NCProperties" in f.attrs                       # written as netCDF-4, not bare HDF5
    back = read_result(path)
    for name in ("head", "qx", "qz", "bed_flux", "exchange", "budget_closure", "zone", "kh"):
        np.testing.assert_array_equal(back[name].values, ds[name].values)
    assert list(back["term"].values) == list(ds["term"].values)
    assert "factorization_seconds" not in back.attrs and back.attrs["steps"] == ds.attrs["steps"]
