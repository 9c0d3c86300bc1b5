"""Interrupting a transient run keeps the outputs so far, marked partial (issue contract)."""
from __future__ import annotations

import numpy as np

import bedflux
from bedflux.solve.section import discretise
from bedflux.solve.transient import run_transient


def test_interrupt_returns_partial_outputs():
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -2, "dx": 1, "dz": 0.1}, "ground": {"elevation": 0},
        "zone": [{"name": "a", "kh": 1e-5, "ss": 1e-4}],
        "stream": {"wave": {"mean": 0.5, "amplitude": 0.2, "period": "1 h"}},
        "time": {"end": "4 h", "step": "5 min", "output_every": "30 min"}})

    def stop_half_way(fraction):
        if fraction > 0.5:
            raise KeyboardInterrupt

    ds = run_transient(discretise(s), progress=stop_half_way)
    assert "partial" in ds.attrs and "interrupted" in ds.attrs["partial"]
    t = ds["time"].values
    assert 0 < t[-1] < 4 * 3600 and np.all(np.diff(t) > 0)
    assert np.isfinite(ds["head"].values).any()


def test_command_line_keeps_partial_outputs(tmp_path, monkeypatch, capsys):
    import bedflux.run as run_module
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
