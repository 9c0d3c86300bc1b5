"""Sensitivities of a variably saturated run by the direct method
(:mod:`bedflux.forward.unsaturated_sensitivity`), steady and transient.

Checks, each independent of the analytic Jacobian under test:

- Taylor test (the first-order Taylor expansion, e.g. Nocedal & Wright 2006, "Numerical
  Optimization", thm. 2.1; the pattern of tests/fit/test_jacobian.py): along each parameter and a
  seeded random direction, ``|d(m + h v) - d(m)|`` falls as O(h) and
  ``|d(m + h v) - d(m) - h J v|`` as O(h^2); both remainders come from forward runs only;
- central differences ``(d(m + h e_j) - d(m - h e_j)) / 2h`` built here from forward runs agree
  with the analytic columns (truncation O(h^2): Nocedal & Wright 2006, eq. 8.7) per observation
  kind, to 1e-5 of the column's largest entry;
- the analytic Jacobian costs one forward run (no central differences behind it) and one
  factorization per state (the steady start and every accepted step).

The section is invented: a channel with a rising bank, a van Genuchten aquifer and an
exponential-model lens whose edges cut through cells (volume-fraction conductivities), recharge on
the exposed ground, a bed leakance; the transient cases add a stage pulse that stays below the bank
and one that floods the lower bank. After a column floods the steps restart short and grow again
after easy steps (a count of Newton iterations, a branch the direct method holds fixed), so the
step sequence may change with a parameter: that case is checked by central differences with a
small step only. (Step lengths the error control sets move smoothly with the parameters and are
differentiated: tests/heat/test_unsaturated_temperature_sensitivity.py.) Observations:
tensiometer and piezometer heads above and below the water table, a vertical gradient under the
channel and seepage-meter fluxes, at times between the forcing's breakpoints.
"""
from __future__ import annotations

import copy
import functools
import warnings

import bedflux
import numpy as np
import pandas as pd
import pytest
from bedflux.forward.sensitivity import Forward, derivative_rule, free_parameters

EPS = np.finfo(float).eps
STEPS = 10.0 ** -np.arange(1.5, 4.1, 0.5)  # 3e-2 ... 1e-4 (in decades for log parameters)
#: Central-difference step (decades for log parameters, relative otherwise): the steps of a
#: transient run make the outputs curve strongly, and 1e-4 leaves a truncation error of 3e-5.
FD_STEP = 1e-5
AGREE = 1e-5

SECTION = {
    "grid": {"x": [0.0, 8.0], "bottom": -2.0, "dx": 0.5, "dz": 0.1},
    "ground": {"profile": [[0.0, 0.0], [2.0, 0.0], [3.0, 1.0], [8.0, 1.0]]},
    "zone": [{"name": "aquifer", "kh": 1e-5, "kv": 4e-6, "specific_storage": 1e-4,
              "retention": {"model": "van-genuchten", "alpha": 3.6, "n": 1.56, "residual": 0.078, "saturated": 0.43}},
             {"name": "lens", "kh": 4e-6, "kv": 1e-6, "specific_storage": 2e-4, "x": [3.3, 6.2], "z": [0.28, 0.73],
              "retention": {"model": "exponential", "alpha": 2.0, "residual": 0.05, "saturated": 0.38}}],
    "stream": {"stage": 0.3, "channel": [0.0, 2.0], "leakance": 2e-5},
    "sides": {"right": {"head": 0.2}},
    "recharge": {"rate": "40 mm/d"},
}
#: A stage pulse that stays below the bank (x > 2 m): the flooding instants and the step sequence
#: do not move with the parameters, so the outputs are smooth in them (the Taylor test's premise).
PULSE = {"pulse": {"base": 0.05, "peak": 0.2, "start": "1 h", "rise": "2 h", "fall": "3 h"}, "channel": [0.0, 2.0],
         "leakance": 2e-5}
#: A pulse that floods the lower bank: the runs restart short after each flooding instant.
FLOOD = {"pulse": {"base": 0.3, "peak": 0.8, "start": "1 h", "rise": "2 h", "fall": "3 h"}, "channel": [0.0, 2.0],
         "leakance": 2e-5}
TIME = {"end": "8 h", "step": "20 min", "output_every": "4 h"}
KINDS = ["head", "head", "head", "head", "vhg", "seepage", "seepage"]
X = [4.25, 2.75, 6.25, 5.25, 1.0, 1.0, 0.5]
DEPTH = [0.15, 0.35, 1.5, 0.4, 0.3, 0.0, 0.0]
SIGMA = [0.01, 0.01, 0.01, 0.01, 0.01, 1e-7, 1e-7]

PATHS = ["aquifer.kh", "aquifer.kv", "lens.kv", "aquifer.retention.alpha", "aquifer.retention.n",
         "lens.retention.alpha", "recharge.rate", "stream.leakance"]
TRANSIENT_PATHS = PATHS + ["aquifer.specific_storage"]


CASES = ("steady", "transient", "flood")


def scenario(case: str) -> bedflux.Scenario:
    d = copy.deepcopy(SECTION)
    if case != "steady":
        d["stream"] = copy.deepcopy(PULSE if case == "transient" else FLOOD)
        d["time"] = dict(TIME)
    return bedflux.Scenario.from_dict(d)


def observations(transient: bool) -> pd.DataFrame:
    times = [0.0, 7200.0, 10800.0, 28800.0, 7200.0, 16200.0, 14400.0] if transient else [0.0] * len(KINDS)
    return pd.DataFrame({"kind": KINDS, "x": X, "depth": DEPTH, "time": times, "value": 0.0, "sigma": SIGMA})


def free(s: bedflux.Scenario, paths: list[str]) -> list[dict]:
    out = []
    for p in paths:
        v = s.value_at(p)
        if p.endswith(".n"):
            out.append({"path": p, "low": 1.1, "high": 3.0, "start": v})
        elif p == "recharge.rate":
            out.append({"path": p, "low": 0.0, "high": 1e-5, "start": v})
        else:
            out.append({"path": p, "low": v / 1000, "high": v * 1000, "start": v, "log": True})
    return out


def forward(case: str, paths=None) -> Forward:
    s = scenario(case)
    paths = (PATHS if case == "steady" else TRANSIENT_PATHS) if paths is None else paths
    return Forward(s, observations(case != "steady"), free_parameters(s, free(s, paths)))


@functools.cache
def evaluate(case: str):
    """The forward model of a case, the start and its data and analytic Jacobian (one run)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fw = forward(case)
        m = fw.start()
        d, J = fw.predict_and_jacobian(m)
        runs, solves = fw.n_forward_runs, fw.n_sensitivity_solves
    return case, fw, m, d, J, runs, solves


@pytest.fixture(params=CASES)
def evaluated(request):
    return evaluate(request.param)[:5]


@pytest.fixture(params=("steady", "transient"))
def smooth(request):
    """The cases whose outputs are smooth in the parameters (no flooding instant moves)."""
    return evaluate(request.param)[:5]


def direction_scale(fw: Forward) -> np.ndarray:
    """A unit move per parameter: one decade for log parameters, the value itself otherwise."""
    return np.array([1.0 if p.log else abs(p.start) for p in fw.free])


def central_differences(fw: Forward, m: np.ndarray, step: float = FD_STEP) -> np.ndarray:
    """Independent central differences from forward runs only (``predict``)."""
    cols = []
    for j, p in enumerate(fw.free):
        h = step if p.log else step * abs(m[j])
        up, dn = m.copy(), m.copy()
        up[j] += h
        dn[j] -= h
        cols.append((fw.predict(up) - fw.predict(dn)) / (2 * h))
    return np.column_stack(cols)


def remainders(fw: Forward, m, d0, J, v):
    w = 1.0 / fw.observations["sigma"].to_numpy()
    r0, r1 = [], []
    for h in STEPS:
        d = fw.predict(m + h * v)
        r0.append(np.linalg.norm(w * (d - d0)))
        r1.append(np.linalg.norm(w * (d - d0 - h * (J @ v))))
    return np.array(r0), np.array(r1)


def orders(errors):
    errors = np.asarray(errors)
    return np.log(errors[:-1] / errors[1:]) / np.log(STEPS[:-1] / STEPS[1:])


def assert_taylor(r0, r1, label: str) -> None:
    """Order 1 without J, order 2 with J at the smallest steps, and the linear term is the change."""
    o0, o1 = orders(r0), orders(r1)
    print(f"\nTaylor test {label}\n{'h':>8} {'|r0|':>12} {'|r1|':>12} {'order0':>7} {'order1':>7}")
    for i, h in enumerate(STEPS):
        extra = f" {o0[i - 1]:7.3f} {o1[i - 1]:7.3f}" if i else ""
        print(f"{h:8.1e} {r0[i]:12.4e} {r1[i]:12.4e}{extra}")
    np.testing.assert_allclose(o0, 1.0, atol=0.1)
    # the outputs are smooth only between the kinks of the upstream Kr and the seepage faces:
    # second order where the steps are small enough to stay between them
    assert abs(o1[-1] - 2.0) < 0.15 and np.all(o1[-2:] > 1.85), f"orders with J: {o1}"
    assert r1[-1] < 1e-3 * r0[-1]


@pytest.mark.parametrize("case", CASES)
def test_analytic_jacobian_takes_one_forward_run(case):
    # no central differences behind the analytic columns: one run gives the data and J
    _, fw, _, _, J, runs, solves = evaluate(case)
    assert all(derivative_rule(fw.scenario, p.path).name != "numeric" for p in fw.free)
    assert runs == 1 and np.all(np.isfinite(J))
    if case == "steady":
        assert solves == fw.n_params   # one factorization, one back-substitution per parameter


def test_agrees_with_central_differences(evaluated):
    # central differences, truncation O(h^2) (Nocedal & Wright 2006, eq. 8.7); per kind of datum
    case, fw, m, _, J = evaluated
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        F = central_differences(fw, m)
    kinds = fw.observations["kind"].to_numpy()
    worst = {}
    for kind in ("head", "vhg", "seepage"):
        rows = kinds == kind
        for j, p in enumerate(fw.free):
            ref = np.abs(F[rows, j]).max()
            if ref == 0.0:
                assert np.abs(J[rows, j]).max() == 0.0, (kind, p.path)
                continue
            worst[(kind, p.path)] = np.abs(J[rows, j] - F[rows, j]).max() / ref
    bad = {k: f"{v:.2e}" for k, v in worst.items() if v > AGREE}
    assert not bad, f"{case}: analytic vs central differences above {AGREE:g}: {bad}"
    # every free parameter matters to these data (otherwise the comparison proves nothing)
    for j, p in enumerate(fw.free):
        assert np.abs(F[:, j]).max() > 0, p.path


@pytest.mark.parametrize("path", ["aquifer.kh", "aquifer.kv", "aquifer.retention.alpha", "aquifer.retention.n"])
def test_taylor_per_parameter(smooth, path):
    case, fw, m, d0, J = smooth
    j = [p.path for p in fw.free].index(path)
    v = np.zeros(fw.n_params)
    v[j] = direction_scale(fw)[j]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r0, r1 = remainders(fw, m, d0, J, v)
    assert_taylor(r0, r1, f"{case} {path}")


def test_taylor_random_direction(smooth):
    case, fw, m, d0, J = smooth
    rng = np.random.default_rng(20261203)
    v = rng.standard_normal(fw.n_params)
    v *= direction_scale(fw) / np.linalg.norm(v)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r0, r1 = remainders(fw, m, d0, J, v)
    assert_taylor(r0, r1, f"{case} random direction")


def test_taylor_harness_rejects_a_wrong_jacobian():
    # the harness must fail on a slightly wrong derivative: one column 0.1 % off
    _, fw, m, d0, J = evaluate("steady")[:5]
    j = [p.path for p in fw.free].index("aquifer.retention.n")
    bad = J.copy()
    bad[:, j] *= 1.001
    v = np.zeros(fw.n_params)
    v[j] = direction_scale(fw)[j]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        r0, r1 = remainders(fw, m, d0, bad, v)
    with pytest.raises(AssertionError):
        assert_taylor(r0, r1, "(deliberately wrong J)")
