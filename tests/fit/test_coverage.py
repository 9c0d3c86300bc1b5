"""Coverage of the 95 % intervals over many independent noise draws (issue 5, Verification).

Case: a 1D column (8 cells) with a 0.5 m bed over 1.5 m of aquifer, the stage on the top face and
a head at the base. Free: the bed kv (log10) and the base head. Data: one seepage flux, three heads
and one gradient, with Gaussian noise of the stated sigmas (n = 5, p = 2, 3 degrees of freedom).
Heads are exactly linear in the base head; the bed kv is determined to about 2.5 %, so the model
is close to linear in log10(kv) over the spread of the estimates ("linear regime").

For a linear model with Gaussian errors of known relative weights, the interval
``b +- t(0.975, n - p) s sqrt(((J^T W J)^-1)_jj)`` with ``s^2 = S_min / (n - p)`` covers the true
value with probability exactly 0.95 (the classical regression interval: Draper & Smith 1998,
"Applied Regression Analysis", ch. 5, from memory; Hill & Tiedeman 2007, ch. 7, eq. 7-1 and 7-7
for the linearised form used in calibration, from memory).

Tolerance: the issue's window 93-97 %. With N independent fits the number of covering intervals is
Binomial(N, 0.95) for a correct method: N = 600 gives a standard deviation of
sqrt(0.95 * 0.05 / 600) = 0.89 percentage points, so the window is +-2.25 standard deviations and
a correct method passes with probability about 0.976 for an arbitrary seed (normal approximation).
The seed is fixed, so the test is reproducible. The test has power: a method that used the normal
quantile 1.96 instead of t(0.975, 3) = 3.18 would cover only about 86 % (t distribution with 3
degrees of freedom, P(|T| < 1.96) = 0.855), far outside the window; and one that forgot the
residual variance would fail the interval-width check below.
The fits share one ``Forward`` (the predictions do not depend on the observed values, so only the
values are replaced between draws) and start from the true values, which takes about 5 forward
runs per fit instead of 7 from the fit file's start; the estimate is the minimum of the weighted
sum of squares whatever the start, and the first draws are also fitted with ``fit`` from the
far start to show that both land on the same intervals. N = 600 fits take about 10 s on the
development machine.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import stats

import bedflux
from bedflux.calibration import fit
from bedflux.calibration.estimate import calibrate
from bedflux.forward.sensitivity import Forward, free_parameters

N_FITS = 600
SEED = 20240502
TRUE_KV, TRUE_HEAD = 1e-5, 1.0
WINDOW = (0.93, 0.97)
#: Draws also fitted from the fit file's start (3e-6, 1.5) with ``fit``, as a check of the shortcut.
FROM_FAR_START = 10


def column() -> bedflux.Scenario:
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.25},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 1e-4},
                 {"name": "bed", "kh": TRUE_KV, "kv": TRUE_KV, "depth": 0.5}],
        "stream": {"stage": 0.3},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": TRUE_HEAD}}})


TABLE = pd.DataFrame({"kind": ["seepage", "head", "head", "head", "vhg"], "x": 0.5,
                      "depth": [0.0, 0.375, 0.875, 1.625, 0.375], "time": 0.0, "value": 0.0,
                      "sigma": [1e-7, 2e-3, 2e-3, 2e-3, 5e-3]})
FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3, "start": 3e-6},
        {"path": "sides.bottom.head", "low": 0.0, "high": 3.0, "start": 1.5}]


def exact_data() -> np.ndarray:
    """Noise-free data from Darcy's law for layers in series (Freeze & Cherry 1979, ch. 2): the
    column is linear in each layer, q = (h_base - stage) / (b1/K1 + b2/K2), independent of the model."""
    stage, b1, b2, k2 = 0.3, 0.5, 1.5, 1e-4
    q = (TRUE_HEAD - stage) / (b1 / TRUE_KV + b2 / k2)  # upward

    def head(depth):
        return stage + q * depth / TRUE_KV if depth <= b1 else stage + q * b1 / TRUE_KV + q * (depth - b1) / k2

    return np.array([q, head(0.375), head(0.875), head(1.625), (head(0.375) - stage) / 0.375])


def test_exact_data_match_the_model():
    # the model's noise-free predictions are the series solution (a precondition of the coverage test)
    s = column()
    fw = Forward(s, TABLE, free_parameters(s, FREE))
    d = fw.predict(np.array([np.log10(TRUE_KV), TRUE_HEAD]))
    np.testing.assert_allclose(d, exact_data(), rtol=1e-10)


def test_intervals_cover_the_truth_95_percent():
    s = column()
    truth = exact_data()
    rng = np.random.default_rng(SEED)
    from_truth = [dict(f, start=v) for f, v in zip(FREE, (TRUE_KV, TRUE_HEAD))]
    forward = Forward(s, TABLE, free_parameters(s, from_truth))
    checked = forward.observations
    hits = np.zeros(2, dtype=int)
    for i in range(N_FITS):
        values = truth + TABLE["sigma"].to_numpy() * rng.standard_normal(len(TABLE))
        forward.observations = checked.assign(value=values)
        res = calibrate(forward)
        if i < FROM_FAR_START:
            far = fit(s, TABLE.assign(value=values), FREE)
            for path in res.ci95:
                np.testing.assert_allclose(far.ci95[path], res.ci95[path], rtol=1e-6)
        lo, hi = res.ci95["bed.kv"]
        hits[0] += lo <= TRUE_KV <= hi
        lo, hi = res.ci95["sides.bottom.head"]
        hits[1] += lo <= TRUE_HEAD <= hi
    rate = hits / N_FITS
    print(f"\ncoverage over {N_FITS} fits: bed.kv {rate[0]:.3f}, sides.bottom.head {rate[1]:.3f}")
    for name, r in zip(("bed.kv", "sides.bottom.head"), rate):
        assert WINDOW[0] <= r <= WINDOW[1], f"{name}: coverage {r:.3f} outside {WINDOW}"


def test_interval_is_the_linearised_t_interval():
    # one draw: the reported interval equals b +- t(0.975, n-p) s sqrt(diag (J^T W J)^-1) built
    # here from central differences at the reported best values (Hill & Tiedeman 2007, ch. 7, from memory)
    s = column()
    rng = np.random.default_rng(1)
    obs = TABLE.copy()
    obs["value"] = exact_data() + TABLE["sigma"].to_numpy() * rng.standard_normal(len(TABLE))
    res = fit(s, obs, FREE)
    b = np.array([np.log10(res.best["bed.kv"]), res.best["sides.bottom.head"]])
    fw = Forward(s, obs, free_parameters(s, FREE))
    J = np.column_stack([(fw.predict(b + e) - fw.predict(b - e)) / (2 * e.sum()) for e in np.diag([1e-5, 1e-5])])
    sigma = obs["sigma"].to_numpy()
    r = (obs["value"].to_numpy() - fw.predict(b)) / sigma
    n, p = len(obs), 2
    s2 = r @ r / (n - p)
    Jw = J / sigma[:, None]
    sd = np.sqrt(np.diag(s2 * np.linalg.inv(Jw.T @ Jw)))
    t = stats.t.ppf(0.975, n - p)
    expect_kv = (10 ** (b[0] - t * sd[0]), 10 ** (b[0] + t * sd[0]))
    expect_head = (b[1] - t * sd[1], b[1] + t * sd[1])
    np.testing.assert_allclose(res.ci95["bed.kv"], expect_kv, rtol=1e-5)
    np.testing.assert_allclose(res.ci95["sides.bottom.head"], expect_head, rtol=1e-6)
    assert res.statistics["degrees_of_freedom"] == n - p
    assert np.isclose(res.statistics["weighted_sum_of_squares"], r @ r, rtol=1e-8)
