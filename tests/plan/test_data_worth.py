"""Planning: linear Bayesian data worth and greedy selection.

Sources:
- Conditional Gaussian: for jointly Gaussian (m, d) with d = J m + e, Cov(m | d) =
  C0 - C0 J^T (J C0 J^T + R)^-1 J C0 (e.g. Tarantola 2005, Inverse Problem Theory, eq. 3.37;
  Rasmussen & Williams 2006, eq. A.6). Computed here directly from the joint covariance with numpy.
- Greedy first pick: by definition the best single instrument; checked by exhaustive evaluation.
- Adding data never increases the posterior variance (the information matrix only grows;
  a property of the Gaussian update).
- One parameter: the posterior variance after one datum is 1 / (1/s0^2 + (dq/dp)^2 / sigma^2), so
  the best site maximises |dq/dp| / sigma; the sensitivities are taken here by central differences
  of the forward model, independently of the planning code.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.planning import plan, prior_covariance
from bedflux.planning.candidates import Instruments, as_observations, check_candidates
from bedflux.planning.worth import add_one, greedy, posterior, target_spread
from bedflux.forward.sensitivity import Forward, free_parameters


def small_section(bed_kv="0.5 m/d"):
    return {
        "grid": {"x": [-6.0, 6.0], "bottom": -3.0, "dx": 0.5, "dz": 0.2},
        "ground": {"profile": [[-6, 1.0], [-3, 1.0], [-2, 0.0], [2, 0.0], [3, 1.0], [6, 1.0]]},
        "zone": [{"name": "aquifer", "kh": "8 m/d", "kv": "3 m/d"},
                 {"name": "bed", "kh": "2 m/d", "kv": bed_kv, "depth": 0.4, "x": [-3, 3]},
                 {"name": "patch", "kh": "0.2 m/d", "kv": "0.05 m/d", "depth": 0.4, "x": [0.5, 1.5]}],
        "stream": {"stage": 0.4},
        "sides": {"left": {"head": 0.9}, "right": {"head": 0.7}},
    }


FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}, {"path": "aquifer.kh", "low": 1e-6, "high": 1e-2},
        {"path": "patch.kv", "low": 1e-8, "high": 1e-4}]


def candidates():
    xs = np.arange(-2.25, 2.3, 0.5)
    rows = [("seepage", x, 0.0) for x in xs] + [("piezometer", x, d) for x in xs for d in (0.1, 0.3)]
    return pd.DataFrame(rows, columns=["kind", "x", "depth"])


@pytest.fixture(scope="module")
def model_case():
    s = bedflux.Scenario.from_dict(small_section())
    fp = free_parameters(s, FREE)
    cand = check_candidates(candidates())
    fw = Forward(s, as_observations(cand, 0.0), fp)
    d, J = fw.predict_and_jacobian(fw.start())
    sigma = Instruments().sigma(cand, d)
    return s, fp, cand, J, sigma, prior_covariance(fp)


def conditional(C0, J, R):
    """Cov(m | d) from the joint covariance of (m, d), by the Gaussian conditioning formula."""
    P = C0.shape[0]
    joint = np.block([[C0, C0 @ J.T], [J @ C0, J @ C0 @ J.T + R]])
    Smm, Smd, Sdd = joint[:P, :P], joint[:P, P:], joint[P:, P:]
    return Smm - Smd @ np.linalg.solve(Sdd, Smd.T)


def test_posterior_equals_conditional_gaussian_random():
    rng = np.random.default_rng(3)
    A = rng.standard_normal((3, 3))
    C0 = A @ A.T + 0.5 * np.eye(3)
    J = rng.standard_normal((5, 3))
    sigma = rng.uniform(0.2, 2.0, 5)
    expected = conditional(C0, J, np.diag(sigma**2))
    np.testing.assert_allclose(posterior(C0, J, sigma), expected, rtol=1e-10, atol=1e-12)
    C = C0
    for i in range(5):                      # one datum at a time (rank-one updates)
        C = add_one(C, J[i], sigma[i])
    np.testing.assert_allclose(C, expected, rtol=1e-9, atol=1e-12)


def test_posterior_equals_conditional_gaussian_on_the_model(model_case):
    _, _, _, J, sigma, C0 = model_case
    pick = [0, 5, 12, 20]
    expected = conditional(C0, J[pick], np.diag(sigma[pick] ** 2))
    np.testing.assert_allclose(posterior(C0, J[pick], sigma[pick]), expected, rtol=1e-8,
                               atol=1e-12 * np.abs(expected).max())


@pytest.mark.parametrize("target", [None, 0, 2])
def test_greedy_first_pick_is_the_best_single(model_case, target):
    _, fp, cand, J, sigma, C0 = model_case
    g = None if target is None else np.eye(len(fp))[target]
    spreads = [target_spread(posterior(C0, J[[i]], sigma[[i]]), g) for i in range(len(cand))]
    first = greedy(C0, J, sigma, 1, g)[0]
    assert first.index == int(np.argmin(spreads))
    assert first.after == pytest.approx(min(spreads), rel=1e-10)


def test_spread_never_increases(model_case):
    _, fp, cand, J, sigma, C0 = model_case
    for g in (None, np.eye(len(fp))[0]):
        picks = greedy(C0, J, sigma, 8, g)
        spreads = [picks[0].before] + [p.after for p in picks]
        assert np.all(np.diff(spreads) <= 1e-15 * spreads[0])
    rng = np.random.default_rng(11)
    C = C0
    for i in rng.permutation(len(cand))[:10]:   # any instrument added, in any order
        new = add_one(C, J[i], sigma[i])
        assert np.all(np.diag(new) <= np.diag(C) * (1 + 1e-12))
        C = new


def test_plan_respects_spacing_and_keeps_order(model_case):
    s, _, cand, _, _, _ = model_case
    table = plan(s, FREE, candidates(), 4, target="parameters", min_spacing=1.2)
    seep = table[table["kind"] == "seepage"]["x"].to_numpy()
    piez = table[table["kind"] == "piezometer"]["x"].to_numpy()
    for xs in (seep, piez):
        if xs.size > 1:
            assert np.min(np.abs(np.subtract.outer(xs, xs))[~np.eye(xs.size, dtype=bool)]) >= 1.2
    assert list(table["rank"]) == [1, 2, 3, 4]
    assert np.all(np.diff(table["expected_sd"]) <= 0)


def test_one_parameter_best_site_matches_finite_difference_sensitivity():
    """Bed kv alone: the first pick is where |dq/dp| / sigma is largest (FD of the model here)."""
    d = small_section()
    free = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}]
    s = bedflux.Scenario.from_dict(d)
    xs = np.arange(-2.25, 2.3, 0.5)
    cand = pd.DataFrame({"kind": "seepage", "x": xs, "depth": 0.0})
    # central differences of the simulated bed flux in log10(kv), pan footprint = one column
    kv = s.value_at("bed.kv")
    h = 1e-3
    up = bedflux.simulate(s.with_values({"bed.kv": kv * 10**h}))
    dn = bedflux.simulate(s.with_values({"bed.kv": kv * 10**-h}))
    mid = bedflux.simulate(s)
    x = mid.x.values
    cols = [int(np.argmin(np.abs(x - xi))) for xi in xs]
    dq = (up.bed_flux.values[cols] - dn.bed_flux.values[cols]) / (2 * h)
    q = mid.bed_flux.values[cols]
    sigma = np.maximum(0.3 * np.abs(q), 0.01 / 86400)   # the documented instrument defaults
    best_x = xs[int(np.argmax(np.abs(dq) / sigma))]
    table = plan(s, free, cand, 1, target="bed.kv", pan_diameter=0.5)
    assert table["x"].iloc[0] == pytest.approx(best_x)
