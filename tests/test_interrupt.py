"""Interrupting a transient run (Ctrl-C or SIGTERM) keeps the outputs so far, marked partial (issue contract)."""
from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import xarray as xr

import bedflux
from bedflux.section.discretisation import discretise
from bedflux.section.simulate import transient_dataset


def test_interrupt_returns_partial_outputs():
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -2, "dx": 1, "dz": 0.1}, "ground": {"elevation": 0},
        "zone": [{"name": "a", "kh": 1e-5, "specific_storage": 1e-4}],
        "stream": {"wave": {"mean": 0.5, "amplitude": 0.2, "period": "1 h"}},
        "time": {"end": "4 h", "step": "5 min", "output_every": "30 min"}})

    def stop_half_way(fraction):
        if fraction > 0.5:
            raise KeyboardInterrupt

    ds = transient_dataset(discretise(s), progress=stop_half_way)
    assert "partial" in ds.attrs and "interrupted" in ds.attrs["partial"]
    t = ds["time"].values
    assert 0 < t[-1] < 4 * 3600 and np.all(np.diff(t) > 0)
    assert np.isfinite(ds["head"].values).any()


def test_command_line_keeps_partial_outputs(tmp_path, monkeypatch, capsys):
    import bedflux.outputs.run as run_module
    from bedflux.cli import main

    class Stopping:
        def __init__(self, *a, **k):
            pass

        def update(self, fraction):
            if fraction > 0.3:
                raise KeyboardInterrupt

        def close(self):
            pass

    monkeypatch.setattr(run_module, "ProgressBar", Stopping)
    scen = tmp_path / "wave.toml"
    scen.write_text('[grid]\nx = [0, 1]\nbottom = -2\ndx = 1\ndz = 0.1\n[ground]\nelevation = 0\n'
                    '[[zone]]\nname = "a"\nkh = 1e-5\n[stream.wave]\nmean = 0.5\namplitude = 0.2\nperiod = "1 h"\n'
                    '[time]\nend = "4 h"\nstep = "5 min"\noutput_every = "30 min"\n')
    out = tmp_path / "out"
    assert main(["run", str(scen), "-o", str(out)]) == 130
    assert (out / "result.nc").is_file()
    assert "PARTIAL" in (out / "summary.txt").read_text()


SLOW = ('title = "Slow wave (invented)"\n[grid]\nx = [0, 20]\nbottom = -4\ndx = 0.1\ndz = 0.1\n'
        '[ground]\nelevation = 0\n[[zone]]\nname = "a"\nkh = 1e-5\n'
        '[stream.wave]\nmean = 0.5\namplitude = 0.2\nperiod = "1 d"\n'
        '[time]\nend = "20 d"\nstep = "1 min"\noutput_every = "6 h"\n')


def test_sigterm_keeps_a_marked_partial_result(tmp_path):
    """SIGTERM (what schedulers and container stops send) ends a run the way Ctrl-C does:
    the outputs so far are kept and marked partial; the exit status is 128 + 15."""
    scen = tmp_path / "slow.toml"
    scen.write_text(SLOW)
    out = tmp_path / "out"
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1] / "model"))
    proc = subprocess.Popen([sys.executable, "-m", "bedflux.cli", "run", str(scen), "-o", str(out), "-q"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    try:
        started = time.monotonic()
        while not (out.is_dir() and any(p.name.startswith(".bedflux-stage") for p in out.iterdir())):
            assert proc.poll() is None, "the run ended early"
            if time.monotonic() - started > 15:           # loading and the first solve take seconds
                break
            time.sleep(0.05)
        time.sleep(4.0)                                   # well into the time steps
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=300)
    finally:
        proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert "Traceback" not in err and "interrupted at t =" in err
    assert "PARTIAL RESULT" in (out / "summary.txt").read_text()
    assert "interrupted" in json.loads((out / "summary.json").read_text())["partial"]
    with xr.open_dataset(out / "result.nc", engine="h5netcdf") as ds:
        assert "interrupted" in ds.attrs["partial"]
        assert ds["time"].values[-1] < 20 * 86400
    assert "result.nc" in json.loads((out / "run_manifest.json").read_text())["files"]


def test_closed_screen_reader_stops_without_a_traceback(tmp_path):
    # `bedflux field ... | head` whose reader has gone: the screen summary meets a closed pipe
    # (EPIPE); the verb says so on stderr and exits 1, and the files it wrote are whole
    root = Path(__file__).resolve().parents[1]
    env = {**os.environ, "PYTHONPATH": str(root / "model")}
    out = tmp_path / "field"
    read, write = os.pipe()
    os.close(read)  # nobody reads the screen output
    proc = subprocess.run([sys.executable, "-m", "bedflux.cli", "field", str(root / "scenarios" / "field"),
                           "-o", str(out)], stdout=write, stderr=subprocess.PIPE, text=True, env=env, timeout=600)
    os.close(write)
    assert proc.returncode == 1, proc.stderr
    assert "Traceback" not in proc.stderr
    assert "reader closed" in proc.stderr
    assert (out / "observations.csv").stat().st_size > 0
