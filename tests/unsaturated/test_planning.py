"""Planning on a variably saturated run: ``bedflux.planning.plan`` against an independent linear
Bayes computation, and ``bedflux fit`` then ``bedflux plan`` from files.

- Conditional Gaussian: for jointly Gaussian (m, d) with d = J m + e, Cov(m | d) =
  C0 - C0 J^T (J C0 J^T + R)^-1 J C0 (Tarantola 2005, Inverse Problem Theory, eq. 3.37; Rasmussen &
  Williams 2006, eq. A.6). Computed here from the joint covariance with numpy, with the
  sensitivities J taken by central differences of forward runs (``Forward.predict`` only), and the
  prior from the bounds read as a 95 % range (sd = a quarter of the range in the estimation space:
  docs/planning.md, common practice).
- The greedy first pick is by definition the best single instrument (exhaustive evaluation here).
- A plan that starts from a fit takes the fit's standard deviation as the spread before any pick
  (docs/planning.md, "Starting from a fit").

The section is an invented channel and bank in a loamy sand (Carsel & Parrish 1988 class means,
from memory) under a stage pulse that stays in the channel; instruments are read during the pulse.
"""
from __future__ import annotations

import copy
import json
import warnings

import bedflux
import numpy as np
import pandas as pd
import pytest
from bedflux.cli import main
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.planning import plan

SECTION = {
    "grid": {"x": [0.0, 8.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
    "ground": {"profile": [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]},
    "zone": [{"name": "aquifer", "kh": 4e-5, "kv": 2e-5, "specific_storage": 1e-4,
              "retention": {"model": "van-genuchten", "alpha": 12.4, "n": 2.28, "residual": 0.057,
                            "saturated": 0.41}},
             {"name": "bed", "kh": 5e-6, "kv": 1e-6, "specific_storage": 2e-4, "depth": 0.25, "x": [0.0, 2.2],
              "retention": {"model": "van-genuchten", "alpha": 7.5, "n": 2.1, "residual": 0.065,
                            "saturated": 0.41}}],
    "stream": {"pulse": {"base": 0.05, "peak": 0.2, "start": "1 h", "rise": "2 h", "fall": "3 h"},
               "channel": [0.0, 2.0]},
    "sides": {"right": {"head": 0.2}},
    "recharge": {"rate": "40 mm/d"},
    "time": {"end": "6 h", "step": "20 min", "output_every": "2 h"},
}
FREE = [{"path": "bed.kv", "low": 1e-8, "high": 1e-4},
        {"path": "aquifer.kv", "low": 1e-6, "high": 1e-3},
        {"path": "aquifer.retention.alpha", "low": 2.0, "high": 30.0, "log": True},
        {"path": "aquifer.retention.n", "low": 2.05, "high": 3.5}]
READ = 3 * 3600.0  # the pulse peak
KIND = {"seepage": "seepage", "piezometer": "vhg"}


def candidates() -> pd.DataFrame:
    xs = np.arange(0.25, 2.0, 0.5)
    rows = [("seepage", x, 0.0, 2e-7) for x in xs] + [("piezometer", x, d, 1e-4 / d) for x in xs for d in (0.1, 0.3)]
    return pd.DataFrame(rows, columns=["kind", "x", "depth", "sigma"])


def conditional(C0, J, R):
    """Cov(m | d) from the joint covariance of (m, d), by the Gaussian conditioning formula."""
    P = C0.shape[0]
    joint = np.block([[C0, C0 @ J.T], [J @ C0, J @ C0 @ J.T + R]])
    Smm, Smd, Sdd = joint[:P, :P], joint[:P, P:], joint[P:, P:]
    return Smm - Smd @ np.linalg.solve(Sdd, Smd.T)


@pytest.fixture(scope="module")
def independent():
    """Sensitivities of the candidates by central differences of forward runs, and the prior."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        s = bedflux.Scenario.from_dict(copy.deepcopy(SECTION))
        cand = candidates()
        obs = pd.DataFrame({"kind": cand["kind"].map(KIND), "x": cand["x"], "depth": cand["depth"], "time": READ,
                            "value": 0.0, "sigma": cand["sigma"]})
        fw = Forward(s, obs, free_parameters(s, FREE))
        m = fw.start()
        cols = []
        for j, p in enumerate(fw.free):
            h = 1e-5 if p.log else 1e-5 * abs(m[j])
            up, dn = m.copy(), m.copy()
            up[j] += h
            dn[j] -= h
            cols.append((fw.predict(up) - fw.predict(dn)) / (2 * h))
    J = np.column_stack(cols)
    sd = np.array([(p.internal(p.high) - p.internal(p.low)) / 4 for p in fw.free])
    return s, cand, J, np.diag(sd**2), fw


@pytest.mark.parametrize("target", ["aquifer.kv", "aquifer.retention.n"])
def test_data_worth_matches_linear_bayes(independent, target):
    s, cand, J, C0, fw = independent
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table = plan(s, FREE, cand, 3, target=target, reading_time=READ)
    j = [p.path for p in fw.free].index(target)
    p = fw.free[j]
    to_si = p.dnatural(p.internal(p.start))   # spreads of log parameters: first order in SI
    R = np.diag(cand["sigma"].to_numpy() ** 2)
    single = np.array([np.sqrt(conditional(C0, J[[i]], R[np.ix_([i], [i])])[j, j]) for i in range(len(cand))])
    np.testing.assert_allclose(table.attrs["single_sd"], single * to_si, rtol=1e-4)
    assert table.attrs["prior_sd"] == pytest.approx(np.sqrt(C0[j, j]) * to_si, rel=1e-12)
    # the first pick is the best single instrument; each later spread is that of the picked set
    assert (table["kind"].iloc[0], table["x"].iloc[0], table["depth"].iloc[0]) == tuple(
        cand[["kind", "x", "depth"]].iloc[int(np.argmin(single))])
    picked = [int(np.flatnonzero((cand["kind"] == k) & np.isclose(cand["x"], x) & np.isclose(cand["depth"], d))[0])
              for k, x, d in zip(table["kind"], table["x"], table["depth"])]
    for k in range(len(picked)):
        sel = picked[: k + 1]
        expected = np.sqrt(conditional(C0, J[sel], R[np.ix_(sel, sel)])[j, j]) * to_si
        assert table["expected_sd"].iloc[k] == pytest.approx(expected, rel=1e-4)


def test_retention_matters_to_the_plan(independent):
    # the candidates see the retention of the bank (otherwise the comparison above says little)
    _, _, J, _, fw = independent
    for path in ("aquifer.retention.alpha", "aquifer.retention.n"):
        assert np.abs(J[:, [p.path for p in fw.free].index(path)]).max() > 0, path


# ------------------------------------------------------------------------------------------
# bedflux fit, then bedflux plan, from files

SCENARIO_TOML = """\
title = "Invented bank over a channel, variably saturated"

[grid]
x = [0.0, 8.0]
bottom = -2.0
dx = 0.5
dz = 0.1

[ground]
profile = [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]

[[zone]]
name = "aquifer"
kh = "3.5 m/d"
kv = "1.7 m/d"
specific_storage = "1e-4 1/m"
retention = { model = "van-genuchten", alpha = "12.4 1/m", n = 2.28, residual = 0.057, saturated = 0.41 }

[stream]
stage = 0.3
channel = [0.0, 2.0]

[sides.right]
head = 0.2

[recharge]
rate = "60 mm/d"
"""
FIT_TOML = """\
scenario = "bank.toml"
observations = "observations.csv"

[[free]]
path = "aquifer.kv"
low = "0.05 m/d"
high = "50 m/d"
start = "5 m/d"

[[free]]
path = "aquifer.retention.alpha"
low = "2 1/m"
high = "40 1/m"
start = "8 1/m"
log = true
"""
PLAN_TOML = """\
scenario = "bank.toml"
fit = "../fit"
n = 2
target = "aquifer.kv"

[candidates]
seepage_spacing = "0.5 m"
piezometer_spacing = "0.5 m"
"""
TRUE = {"aquifer.kv": 1.7 / 86400.0, "aquifer.retention.alpha": 12.4}


def test_fit_then_plan_from_files(tmp_path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        (tmp_path / "bank.toml").write_text(SCENARIO_TOML)
        s = bedflux.load(tmp_path / "bank.toml")
        obs = pd.DataFrame({"kind": ["head"] * 6 + ["seepage"], "x": [3.25, 4.25, 5.25, 6.25, 7.25, 5.25, 1.0],
                            "depth": [0.2, 0.3, 0.4, 0.5, 0.6, 1.5, 0.0], "time": np.nan, "value": 0.0,
                            "sigma": [0.005] * 6 + [5e-8]})
        fw = Forward(s, obs, free_parameters(s, [{"path": p, "low": v / 10, "high": v * 10} for p, v in TRUE.items()]))
        rng = np.random.default_rng(20261203)
        obs["value"] = fw.predict(fw.start()) + rng.standard_normal(len(obs)) * obs["sigma"].to_numpy()
        obs.to_csv(tmp_path / "observations.csv", index=False)
        (tmp_path / "bank_fit.toml").write_text(FIT_TOML)
        (tmp_path / "plan").mkdir()
        (tmp_path / "plan" / "bank_plan.toml").write_text(PLAN_TOML.replace("bank.toml", "../bank.toml"))
        assert main(["fit", str(tmp_path / "bank_fit.toml"), "-o", str(tmp_path / "fit")]) == 0
        results = json.loads((tmp_path / "fit" / "fit_results.json").read_text())
        for path, value in TRUE.items():
            lo, hi = results["ci95"][path]
            assert lo <= value <= hi, (path, value, lo, hi)
        assert main(["plan", str(tmp_path / "plan" / "bank_plan.toml"), "-o", str(tmp_path / "planned")]) == 0
    summary = json.loads((tmp_path / "planned" / "plan_summary.json").read_text())
    table = pd.read_csv(tmp_path / "planned" / "plan_table.csv")
    assert len(table) == 2 and set(table["kind"]) <= {"seepage", "piezometer"}
    # the plan starts from the fit: its spread before any pick is the fit's standard deviation
    assert summary["prior_sd"] == pytest.approx(results["standard_deviation"]["aquifer.kv"], rel=1e-6)
    assert np.all(np.diff(np.r_[summary["prior_sd"], table["expected_sd"]]) <= 0)
