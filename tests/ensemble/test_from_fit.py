"""``from_fit``: members draw a fit's calibrated values from its linearised posterior N(m, C)
(Hill & Tiedeman 2007, ch. 7: the estimate's covariance C = s^2 (J^T W J)^-1 in the estimation
space, log10 for log parameters). The draws' sample mean and covariance must match m and C
within sampling error (textbook statistics: the standard error of a mean is sd / sqrt(n); of a
sample variance of normal draws, var sqrt(2 / (n - 1)); of a covariance, sqrt((C_ii C_jj + C_ij^2) / n)).

The observations are invented numbers (a seepage meter and three mini-piezometer gradients that
disagree a little, so the fit has a residual spread).
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.calibration import fit
from bedflux.calibration.outputs import write_fit
from bedflux.ensembles.spec import build_spec

from ensemble_columns import column

DRAWS = 3000
Z = 4.0


@pytest.fixture(scope="module")
def fitted(tmp_path_factory):
    s = column()
    obs = pd.DataFrame({"kind": ["seepage", "vhg", "vhg", "vhg"], "x": 0.5, "depth": [0.0, 0.25, 0.35, 0.45],
                        "time": 0.0, "value": [3.0e-6, 1.4, 1.55, 1.45], "sigma": [3e-7, 0.1, 0.1, 0.1]})
    free = [{"path": "bed.kv", "low": 1e-9, "high": 1e-3, "start": 1e-6},
            {"path": "sides.bottom.head", "low": -5.0, "high": 10.0, "start": 2.0}]
    result = fit(s, obs, free)
    folder = tmp_path_factory.mktemp("fit")
    write_fit(result, s, folder)
    return s, result, folder


def test_draws_follow_the_fit_posterior(fitted):
    s, result, folder = fitted
    c = np.asarray(result.covariance)
    assert np.all(np.isfinite(c)) and c[0, 0] > 0 and c[1, 1] > 0
    spec = build_spec(s, DRAWS, seed=4, from_fit=folder)
    assert spec.parameters == ["bed.kv", "sides.bottom.head"]
    v = np.array([[d["bed.kv"], d["sides.bottom.head"]] for d in (spec.draw(i).values for i in range(DRAWS))])
    m = np.column_stack([np.log10(v[:, 0]), v[:, 1]])  # the estimation space: log10 kv, head
    mean = np.array([math.log10(result.best["bed.kv"]), result.best["sides.bottom.head"]])
    se = np.sqrt(np.diag(c) / DRAWS)
    assert np.all(np.abs(m.mean(axis=0) - mean) < Z * se)
    sample = np.cov(m.T)
    for i in range(2):
        for j in range(2):
            se_ij = math.sqrt((c[i, i] * c[j, j] + c[i, j] ** 2) / (DRAWS - 1))
            assert abs(sample[i, j] - c[i, j]) < Z * se_ij, (i, j, sample[i, j], c[i, j])


def test_an_ensemble_runs_on_the_fit(fitted):
    s, result, folder = fitted
    ds = bedflux.ensemble(s, 5, seed=1, from_fit=folder)
    assert not ds["failed"].any()
    assert list(ds["parameter"].values) == ["bed.kv", "sides.bottom.head"]


def test_the_deterministic_run_of_a_fit_ensemble_is_the_best_fit(fitted, tmp_path):
    # the answer beside the ranges is the calibrated scenario's (Darcy for the best kv and head:
    # Freeze & Cherry 1979, ch. 2), not the scenario as written
    import json

    import tomli_w

    from bedflux.cli import main
    from ensemble_columns import BED_THICKNESS, SAND_KV, SAND_THICKNESS, STAGE

    s, result, folder = fitted
    (tmp_path / "column.toml").write_text(tomli_w.dumps(dict(s.raw)))
    (tmp_path / "ens.toml").write_text(f'scenario = "column.toml"\nmembers = 4\nfrom_fit = "{folder}"\n')
    assert main(["ensemble", str(tmp_path / "ens.toml"), "-o", str(tmp_path / "out"), "-q", "--workers", "0"]) == 0
    det = json.loads((tmp_path / "out" / "ensemble_summary.json").read_text())["deterministic"]["net_exchange"]
    kv, head = result.best["bed.kv"], result.best["sides.bottom.head"]
    assert det == pytest.approx((head - STAGE) / (BED_THICKNESS / kv + SAND_THICKNESS / SAND_KV), rel=1e-6)
