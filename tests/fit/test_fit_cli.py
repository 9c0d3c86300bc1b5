"""``bedflux fit FIT.toml -o OUTDIR`` on the worked example, and bad fit files (issue 5, item 6).

- exit status 0 and every output file (results, residual table, summary, calibrated scenario,
  three figures, a copy of the fit file);
- the statistics in fit_results.json recomputed here from residuals.csv: the weighted sum of
  squares S = sum ((observed - simulated) / sigma)^2 (Hill & Tiedeman 2007, eq. 3-1, from memory),
  its reduced value S / (n - p), and the least-squares forms AIC = n ln(S/n) + 2p and
  BIC = n ln(S/n) + p ln n (Burnham & Anderson 2002, sec. 2.2, from memory);
- calibrated.toml runs with ``bedflux.simulate(bedflux.load(...))`` and, read through the
  observation definitions of the issue implemented here on the Dataset (bilinear head, gradient to
  the local stage, bed flux averaged over the pan footprint), reproduces the simulated values in
  residuals.csv;
- bad fit files exit 2 with one message naming the file and the key, and leave no output folder
  (design.md, CLI contract).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.cli import main

ROOT = Path(__file__).resolve().parents[2]
PAN = 0.57  # the worked example's pan diameter ("57 cm")
OUTPUTS = ["fit_results.json", "residuals.csv", "fit_summary.txt", "calibrated.toml",
           "observed_vs_simulated.png", "residuals.png", "parameter_intervals.png",
           "inputs/reach_fit.toml"]


@pytest.fixture(scope="module")
def worked(worked_example):
    """``bedflux fit`` on scenarios/reach_fit.toml (the session's worked example: tests/conftest.py)."""
    return worked_example.status["fit"], worked_example.root / "fit"


def test_exit_status_and_every_output(worked):
    status, out = worked
    assert status == 0
    for name in OUTPUTS:
        assert (out / name).is_file() and (out / name).stat().st_size > 0, name
    for name in OUTPUTS:
        if name.endswith(".png"):
            assert (out / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", name
    d = json.loads((out / "fit_results.json").read_text())
    paths = ["bed.kv", "aquifer.kv", "sides.bottom.head"]
    assert d["parameters"] == paths
    for p in paths:
        lo, hi = d["ci95"][p]
        assert lo < d["best"][p] < hi
        assert p in d["verdicts"]
    corr = np.array(d["correlation"])
    assert corr.shape == (3, 3) and np.allclose(np.diag(corr), 1.0) and np.allclose(corr, corr.T)
    summary = (out / "fit_summary.txt").read_text()
    for p in paths:
        assert p in summary


def test_statistics_recomputed_from_the_residual_table(worked):
    _, out = worked
    d = json.loads((out / "fit_results.json").read_text())
    st = d["statistics"]
    t = pd.read_csv(out / "residuals.csv")
    assert list(t.columns[:6]) == ["kind", "x", "depth", "time", "value", "sigma"]
    np.testing.assert_allclose(t["residual"], t["value"] - t["simulated"], rtol=1e-12, atol=1e-15)
    S = float((((t["value"] - t["simulated"]) / t["sigma"]) ** 2).sum())
    n, p = len(t), len(d["parameters"])
    assert st["n_observations"] == n and st["n_parameters"] == p
    assert st["weighted_sum_of_squares"] == pytest.approx(S, rel=1e-9)
    assert st["reduced_chi_square"] == pytest.approx(S / (n - p), rel=1e-9)
    assert st["aic"] == pytest.approx(n * math.log(S / n) + 2 * p, rel=1e-9)
    assert st["bic"] == pytest.approx(n * math.log(S / n) + p * math.log(n), rel=1e-9)


# ------------------------------------------------------------------------------------------
# the observation definitions of issue 5, item 1, on the simulated Dataset

def head_at(ds, x: float, z: float, name: str = "head") -> float:
    """Linear between the two nearest columns; in each column linear between its cell centres
    (clamped to the end centres); ``name``: the cell variable (head, or qz for a thermal flux)."""
    xc = ds["x"].values
    j = int(np.clip(np.searchsorted(xc, x) - 1, 0, xc.size - 2))
    a = float(np.clip((x - xc[j]) / (xc[j + 1] - xc[j]), 0.0, 1.0))
    zc = ds["z"].values
    out = 0.0
    for col, w in ((j, 1.0 - a), (j + 1, a)):
        h = ds[name].values[:, col]
        ok = np.isfinite(h)
        order = np.argsort(zc[ok])
        out += w * float(np.interp(z, zc[ok][order], h[ok][order]))
    return out


def seepage_at(ds, x: float, diameter: float) -> float:
    """Bed flux averaged over [x - D/2, x + D/2], weighted by overlap with submerged columns."""
    xc = ds["x"].values
    edges = np.concatenate([[xc[0] - (xc[1] - xc[0]) / 2], (xc[1:] + xc[:-1]) / 2,
                            [xc[-1] + (xc[-1] - xc[-2]) / 2]])
    overlap = np.clip(np.minimum(edges[1:], x + diameter / 2) - np.maximum(edges[:-1], x - diameter / 2), 0, None)
    q = ds["bed_flux"].values
    wet = np.isfinite(q)
    return float(np.sum(overlap[wet] * q[wet]) / np.sum(overlap[wet]))


def test_calibrated_scenario_reproduces_the_fitted_values(worked):
    _, out = worked
    s = bedflux.load(out / "calibrated.toml")
    best = json.loads((out / "fit_results.json").read_text())["best"]
    for p, v in best.items():
        assert s.value_at(p) == pytest.approx(v, rel=1e-12)
    ds = bedflux.simulate(s)
    t = pd.read_csv(out / "residuals.csv")
    # the invented reach is a straight slope of the ground and of the water surface
    ground = lambda x: 98.37 + (98.13 - 98.37) * x / 120.0  # noqa: E731  (scenarios/reach_long.toml)
    stage = lambda x: s.value_at("stream.stage") - 0.002 * x  # noqa: E731  (slope -0.002, stage held at x = 0)
    for _, r in t.iterrows():
        if r["kind"] == "seepage":
            expect = seepage_at(ds, r["x"], PAN)
        elif r["kind"] == "thermal_flux":  # the vertical Darcy flux at the sensor pair's mid-depth
            expect = head_at(ds, r["x"], ground(r["x"]) - r["depth"], "qz")
        else:
            h = head_at(ds, r["x"], ground(r["x"]) - r["depth"])
            expect = h if r["kind"] == "head" else (h - stage(r["x"])) / r["depth"]
        assert r["simulated"] == pytest.approx(expect, rel=1e-7, abs=1e-12), dict(r)


# ------------------------------------------------------------------------------------------
# bad fit files

GOOD_OBS = "kind,x,depth,time,value,sigma\nseepage,20,0,0,1.2e-6,1e-7\nvhg,60,0.5,0,0.05,0.005\n"


def write_fit(tmp_path: Path, free: str, top: str = "", obs: str = GOOD_OBS) -> Path:
    (tmp_path / "obs.csv").write_text(obs)
    fit = tmp_path / "bad_fit.toml"
    scenario = (ROOT / "scenarios" / "reach_long.toml").as_posix()
    fit.write_text(f'scenario = "{scenario}"\nobservations = "obs.csv"\n{top}\n{free}')
    return fit


KV = '[[free]]\npath = "bed.kv"\nlow = "0.01 m/d"\nhigh = "50 m/d"\nstart = "1 m/d"\n'
BAD = {
    "unknown top-level key": ({"free": KV, "top": "strats = 3"}, ["bad_fit.toml", "strats"]),
    "unknown key of a free parameter": ({"free": KV + 'lowest = "1 m/d"\n'}, ["bad_fit.toml", "lowest", "bed.kv"]),
    "unknown parameter path": ({"free": KV.replace("bed.kv", "bed.kz")}, ["bad_fit.toml", "bed.kz"]),
    "unknown zone": ({"free": KV.replace("bed.kv", "clay.kv")}, ["bad_fit.toml", "clay.kv"]),
    "start outside the bounds": ({"free": KV.replace('start = "1 m/d"', 'start = "80 m/d"')},
                                 ["bad_fit.toml", "bed.kv", "outside"]),
    "missing sigma": ({"free": KV, "obs": GOOD_OBS.replace("0.05,0.005", "0.05,")}, ["obs.csv", "sigma", "row 3"]),
}


@pytest.mark.parametrize("case", list(BAD))
def test_bad_fit_file_exits_2_naming_file_and_key(case, tmp_path, capsys):
    kwargs, words = BAD[case]
    fit = write_fit(tmp_path, **kwargs)
    out = tmp_path / "never"
    status = main(["fit", str(fit), "-o", str(out), "-q"])
    err = capsys.readouterr().err
    assert status == 2, err
    assert "Traceback" not in err
    assert err.startswith("bedflux fit: error:")
    for w in words:
        assert w in err, (case, w, err)
    assert len(err.strip().splitlines()) == 1  # one paragraph
    assert not out.exists()
    # and no staging folder left beside it
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".never")]
