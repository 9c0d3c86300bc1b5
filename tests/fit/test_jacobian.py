"""Sensitivities of the observations to the free parameters (``bedflux.forward.sensitivity.Forward``).

Checks, each independent of the analytic Jacobian under test:

- Taylor test (style.md item 8; the first-order Taylor expansion, e.g. Nocedal & Wright 2006,
  "Numerical Optimization", thm. 2.1): for a seeded random direction v and steps h = 1e-1 ... 1e-6
  in the estimation space, ``|d(m + h v) - d(m)|`` falls as O(h) and
  ``|d(m + h v) - d(m) - h J v|`` as O(h^2). Both remainders come from forward runs only.
- Central differences ``(d(m + h e_j) - d(m - h e_j)) / 2h`` built here from forward runs agree
  with the analytic columns to 1e-5 relative (the central-difference truncation error is
  O(h^2), e.g. Nocedal & Wright 2006, eq. 8.7), per observation kind.
- The steady adjoint path (taken when there are more parameters than data) equals the direct path
  (taken otherwise), as a matrix and as a dot-product test (style.md item 9:
  ``w . (J_direct v) = (J_adjoint^T w) . v``); the adjoint rests on the symmetry of the system
  matrix, checked on its own so that a failure says where.

The cases are steady and transient (backward Euler and Crank-Nicolson) sections with anisotropic
zones (kh != kv), a box zone and a bed layer (heterogeneous), recharge, riparian ET (with the daily
cycle in transient runs), side and bottom heads, a bed leakance, a stage pulse that floods the
banks, and observations of every kind (head, vhg, seepage) at times between time steps. Together
they cover every parameter kind with an analytic derivative: zone kh, kv, specific_storage,
specific_yield, recharge.rate, riparian.N.max_rate, sides.X.head and stream.leakance.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.section.discretisation import discretise

EPS = np.finfo(float).eps
STEPS = 10.0 ** -np.arange(1, 7)  # 1e-1 ... 1e-6 (style.md item 8)
FD_STEP = 1e-4  # decades for log parameters, relative for the others
AGREE = 1e-5  # the tolerance for analytic vs central differences


def section(scheme: str | None) -> bedflux.Scenario:
    """An invented 40 m section across a channel: three anisotropic zones, recharge, riparian ET,
    side and bottom heads and a bed leakance; transient runs add a stage pulse that floods the banks."""
    d = {"grid": {"x": [0.0, 40.0], "bottom": 0.0, "dx": 1.0, "dz": 0.25, "growth": 1.1, "dz_max": 1.0},
         "ground": {"profile": [[0, 10], [15, 10], [18, 9], [22, 9], [25, 10], [40, 10]]},
         "zone": [{"name": "aquifer", "kh": "10 m/d", "kv": "2 m/d", "specific_storage": 1e-4,
                   "specific_yield": 0.2},
                  {"name": "lens", "kh": "0.5 m/d", "kv": "0.1 m/d", "specific_storage": 3e-4, "specific_yield": 0.1,
                   "x": [5, 30], "z": [3, 5]},
                  {"name": "bed", "kh": "1 m/d", "kv": "0.2 m/d", "specific_storage": 5e-4, "specific_yield": 0.25,
                   "depth": 0.5, "x": [15, 25]}],
         "stream": {"stage": 9.5, "leakance": 1e-5},
         "sides": {"left": {"head": 9.0}, "right": {"head": 8.8}, "bottom": {"head": 9.3}},
         "recharge": {"rate": "1 mm/d"},
         "riparian": [{"x": [2, 12], "max_rate": "3 mm/d", "extinction_depth": 2.0,
                       "daily_cycle": scheme is not None}]}
    if scheme is not None:
        d["time"] = {"end": "1 d", "step": "1 h", "output_every": "1 d", "scheme": scheme}
        d["stream"] = {"pulse": {"base": 9.5, "peak": 9.8, "start": "2 h", "rise": "4 h", "fall": "8 h"},
                       "leakance": 1e-5}
    return bedflux.Scenario.from_dict(d)


POINTS = ([("head", x, dep) for x, dep in [(3.3, 2.0), (8.1, 4.5), (12.7, 7.0), (27.4, 3.0), (33.2, 6.5),
                                              (38.0, 1.5), (20.2, 6.0)]]
          + [("vhg", x, dep) for x, dep in [(17.2, 0.3), (19.6, 1.0), (23.1, 0.6)]]
          + [("seepage", x, 0.0) for x in (17.2, 20.0, 22.8)])


def observations(times=(0.0,), points=POINTS) -> pd.DataFrame:
    return pd.DataFrame([dict(kind=k, x=x, depth=dep, time=t, value=0.0, sigma=1.0)
                         for t in times for k, x, dep in points])


STEADY_PATHS = ["aquifer.kh", "aquifer.kv", "lens.kh", "lens.kv", "bed.kh", "bed.kv", "recharge.rate",
                "riparian.0.max_rate", "sides.left.head", "sides.right.head", "sides.bottom.head",
                "stream.leakance"]
TRANSIENT_PATHS = STEADY_PATHS + ["aquifer.specific_storage", "lens.specific_storage", "bed.specific_storage",
                                  "aquifer.specific_yield", "bed.specific_yield"]
# 5.5 h and 17.3 h fall between steps of 1 h: the time interpolation is differentiated too
TRANSIENT_TIMES = (5.5 * 3600, 12 * 3600, 17.3 * 3600, 86400.0)

CASES = {
    "steady": (None, STEADY_PATHS, (0.0,)),
    "backward-euler": ("backward-euler", TRANSIENT_PATHS, TRANSIENT_TIMES),
    "crank-nicolson": ("crank-nicolson", TRANSIENT_PATHS, TRANSIENT_TIMES),
}


def free_list(s: bedflux.Scenario, paths) -> list[dict]:
    out = []
    for p in paths:
        v = s.value_at(p)
        if p.endswith(".head"):
            out.append({"path": p, "low": v - 5.0, "high": v + 5.0, "start": v})
        elif p.endswith((".rate", ".max_rate")):
            out.append({"path": p, "low": -1e-6 if p.startswith("recharge") else 0.0, "high": 1e-6, "start": v})
        elif p.endswith(".specific_yield"):
            out.append({"path": p, "low": 0.01, "high": 0.5, "start": v})
        else:
            out.append({"path": p, "low": v / 1000, "high": min(v * 1000, 1e-2), "start": v})
    return out


def forward_for(case: str, obs: pd.DataFrame | None = None, paths=None) -> Forward:
    scheme, all_paths, times = CASES[case]
    s = section(scheme)
    paths = all_paths if paths is None else paths
    return Forward(s, observations(times) if obs is None else obs, free_parameters(s, free_list(s, paths)))


def direction_scale(fw: Forward) -> np.ndarray:
    """Size of a unit move per parameter: one decade for log parameters, the value itself for rates
    and specific yield, 1 m for heads (so a step h changes every parameter by a fraction ~h)."""
    out = []
    for p in fw.free:
        if p.log:
            out.append(1.0)
        elif p.path.endswith(".head"):
            out.append(1.0)
        else:
            out.append(abs(p.start))
    return np.array(out)


def central_differences(fw: Forward, m: np.ndarray, step: float = FD_STEP) -> np.ndarray:
    """Independent central differences from forward runs only (``predict``)."""
    cols = []
    for j, p in enumerate(fw.free):
        h = step if p.log else step * (abs(m[j]) if m[j] != 0 else 1.0)
        up, dn = m.copy(), m.copy()
        up[j] += h
        dn[j] -= h
        cols.append((fw.predict(up) - fw.predict(dn)) / (2 * h))
    return np.column_stack(cols)


def observed_orders(hs, errors):
    hs, errors = np.asarray(hs), np.asarray(errors)
    return np.log(errors[:-1] / errors[1:]) / np.log(hs[:-1] / hs[1:])


@pytest.fixture(scope="module", params=list(CASES))
def evaluated(request):
    fw = forward_for(request.param)
    m = fw.start()
    d, J = fw.predict_and_jacobian(m)
    return request.param, fw, m, d, J


def taylor_remainders(fw: Forward, m, d0, J, seed=20240501):
    """Remainders without and with J along a seeded random direction, at each of STEPS."""
    rng = np.random.default_rng(seed)
    v = rng.standard_normal(fw.n_params)
    v = v / np.linalg.norm(v) * direction_scale(fw)
    r0, r1 = [], []
    for h in STEPS:
        d = fw.predict(m + h * v)
        r0.append(np.linalg.norm(d - d0))
        r1.append(np.linalg.norm(d - d0 - h * (J @ v)))
    return np.array(r0), np.array(r1)


def assert_taylor(r0, r1, d0, label=""):
    """Print the table and assert order 1 without J and order 2 with J (style.md item 8)."""
    o0, o1 = observed_orders(STEPS, r0), observed_orders(STEPS, r1)
    print(f"\nTaylor test {label}\n{'h':>8} {'|r0|':>12} {'|r1|':>12} {'order0':>7} {'order1':>7}")
    for i, h in enumerate(STEPS):
        extra = f" {o0[i - 1]:7.3f} {o1[i - 1]:7.3f}" if i else ""
        print(f"{h:8.0e} {r0[i]:12.4e} {r1[i]:12.4e}{extra}")
    np.testing.assert_allclose(o0, 1.0, atol=0.1)
    # second order wherever the remainder stands clear of round-off in the data
    floor = 1e3 * EPS * np.linalg.norm(d0)
    usable = r1[1:] > floor
    assert usable.sum() >= 3, f"too few steps above the round-off floor {floor:.1e}: {r1}"
    assert np.all(np.abs(o1[usable] - 2.0) < 0.15), f"orders with J: {o1}"
    # and the linear term really is the derivative: the remainder is far below the change itself
    assert r1[3] < 1e-4 * r0[3]


def test_taylor_remainders(evaluated):
    # Taylor test: remainder without J is O(h), with J is O(h^2) (style.md item 8)
    case, fw, m, d0, J = evaluated
    r0, r1 = taylor_remainders(fw, m, d0, J)
    assert_taylor(r0, r1, d0, case)


def test_taylor_harness_rejects_a_wrong_jacobian():
    # the harness itself must fail on a slightly wrong derivative (style.md item 10): one column
    # 0.1 % off leaves a first-order remainder
    fw = forward_for("steady")
    m = fw.start()
    d0, J = fw.predict_and_jacobian(m)
    bad = J.copy()
    bad[:, STEADY_PATHS.index("bed.kv")] *= 1.001
    r0, r1 = taylor_remainders(fw, m, d0, bad)
    with pytest.raises(AssertionError):
        assert_taylor(r0, r1, d0, "(deliberately wrong J)")


def test_agrees_with_central_differences(evaluated):
    # central differences, truncation O(h^2) (Nocedal & Wright 2006, eq. 8.7); per kind of datum
    case, fw, m, d0, J = evaluated
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
    # every free parameter must matter in these cases (otherwise the comparison proves nothing)
    for j, p in enumerate(fw.free):
        assert np.abs(F[:, j]).max() > 0, p.path


def test_analytic_kinds_are_all_covered():
    # the cases exercise every parameter kind that has an analytic derivative
    from bedflux.forward.sensitivity import derivative_rule

    rules = {derivative_rule(section("backward-euler"), p).name for p in TRANSIENT_PATHS}
    assert rules == {"zone-kh", "zone-kv", "zone-specific_storage", "zone-specific_yield", "recharge", "riparian",
                     "side-head", "leakance"}


def test_fallback_differences_agree():
    # the model's own finite-difference fallback (jacobian_fd) against the independent one here
    fw = forward_for("steady")
    m = fw.start()
    F = central_differences(fw, m)
    G = fw.jacobian_fd(m, FD_STEP)
    np.testing.assert_allclose(G, F, rtol=1e-12, atol=1e-12 * np.abs(F).max())


def test_storage_has_no_effect_in_a_steady_run():
    # a steady state does not depend on storage: its column is exactly zero
    s = section(None)
    fw = Forward(s, observations(), free_parameters(s, free_list(s, ["aquifer.specific_storage", "bed.kv"])))
    m = fw.start()
    J = fw.jacobian(m)
    assert np.all(J[:, 0] == 0.0)
    F = central_differences(fw, m)
    assert np.abs(F[:, 0]).max() <= 1e-12 * np.abs(F[:, 1]).max()


# ------------------------------------------------------------------------------------------
# steady adjoint against the direct method

FEW = [("head", 12.7, 7.0), ("vhg", 19.6, 1.0), ("seepage", 20.0, 0.0)]


def test_system_matrix_is_symmetric():
    # dot-product test on the piece the adjoint relies on: x . (A y) = (A x) . y (style.md item 9)
    sec = discretise(section(None))
    terms = sec.terms(0.0, sec.initial_active_set())
    A = sec.matrix(terms)
    rng = np.random.default_rng(3)
    x, y = rng.standard_normal((2, A.shape[0]))
    lhs, rhs = x @ (A @ y), (A @ x) @ y
    assert abs(lhs - rhs) <= 1e-12 * abs(lhs)
    assert abs(A - A.T).max() <= 1e-14 * abs(A).max()


def test_adjoint_equals_direct():
    # 3 data, 12 parameters: the adjoint path (one solve per datum) is taken
    obs = observations(points=FEW)
    adj = forward_for("steady", obs)
    m = adj.start()
    J_adj = adj.jacobian(m)
    assert adj.n_sensitivity_solves == len(FEW), "expected the adjoint path (one solve per datum)"
    # the same columns by the direct path: at most 3 parameters per Forward (P <= N)
    cols = []
    for k in range(0, len(STEADY_PATHS), 3):
        part = forward_for("steady", obs, STEADY_PATHS[k:k + 3])
        cols.append(part.jacobian(m[k:k + 3]))
        assert part.n_sensitivity_solves == len(STEADY_PATHS[k:k + 3]), "expected the direct path"
    J_dir = np.hstack(cols)
    np.testing.assert_allclose(J_adj, J_dir, rtol=1e-9, atol=1e-12 * np.abs(J_dir).max())
    # dot-product form (style.md item 9): w . (J_direct v) against (J_adjoint^T w) . v
    rng = np.random.default_rng(11)
    for _ in range(5):
        w = rng.standard_normal(len(FEW)) / np.abs(J_dir).max(axis=1)
        v = rng.standard_normal(len(STEADY_PATHS))
        a, b = w @ (J_dir @ v), (J_adj.T @ w) @ v
        assert abs(a - b) <= 1e-9 * abs(a)
    # and both agree with central differences (a shared mistake would not pass)
    F = central_differences(adj, m)
    for i in range(len(FEW)):
        assert np.abs(J_adj[i] - F[i]).max() <= AGREE * np.abs(F[i]).max()
