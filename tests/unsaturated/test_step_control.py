"""Pieces of the variably saturated step control and its linear solves.

- Flooding instants: a transient run wets a piece of a column's top face when the mean stage over
  it rises above the ground at its midpoint. A step that lands on a flooding instant must still
  see the piece as it was, and the next step must see it flooded or dry: each instant lies on
  the old side of the crossing, within a few milliseconds of it. (Linear interpolation of the
  sampled stage put the instants late where the stage is concave, so a column flooded inside the
  step landing there.)
- The Newton systems are solved by GMRES with right preconditioning (Saad 2003, algorithm 9.5),
  which minimises the true residual: checked against SuperLU (a reference library) on a
  non-symmetric system, with a preconditioner from a nearby matrix (as when a factorization is
  kept across Newton iterations).
"""
from __future__ import annotations

import tomllib
import warnings
from pathlib import Path

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

import bedflux
from bedflux.section.discretisation import discretise
from bedflux.section.richards_newton import JacobianSolver, right_gmres
from bedflux.section.richards_steps import flooding_times

SCENARIO = Path(__file__).resolve().parents[2] / "scenarios" / "flood_pulse_unsaturated.toml"


def test_flooding_instants_lie_just_before_the_crossing():
    d = tomllib.loads(SCENARIO.read_text())
    d["grid"].update({"dx": "50 cm", "dz": "20 cm", "dz_max": "1 m"})
    d["time"]["end"] = "2 d"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        section = discretise(bedflux.Scenario.from_dict(d))
    times = flooding_times(section, 2 * 86400.0)
    assert times.size > 20  # the floodplain floods and drains column by column
    for t in times:
        before = section.wet_state(t).fraction
        assert np.array_equal(before, section.wet_state(t - 1.0).fraction), t
        assert not np.array_equal(before, section.wet_state(t + 5e-3).fraction), t
    wetting = flooding_times(section, 2 * 86400.0, drying=False)
    assert 0 < wetting.size < times.size
    for t in wetting:
        assert section.wet_state(t + 5e-3).fraction.sum() > section.wet_state(t).fraction.sum()


def _system(n=400, seed=3):
    rng = np.random.default_rng(seed)
    A = sp.random(n, n, density=0.01, random_state=seed) - sp.random(n, n, density=0.01, random_state=seed + 1)
    A = (A + sp.diags(rng.uniform(2.0, 4.0, n))).tocsr()
    return A, rng.normal(size=n)


def test_right_preconditioned_gmres_matches_a_direct_solve():
    A, b = _system()
    exact = spla.spsolve(A.tocsc(), b)
    nearby = spla.splu((A + 0.2 * sp.random(*A.shape, density=0.01, random_state=9)).tocsc())
    x, iterations = right_gmres(A, b, nearby.solve, 1e-11 * np.linalg.norm(b), 60, 40)
    assert 1 < iterations < 60
    assert np.linalg.norm(b - A @ x) <= 1e-11 * np.linalg.norm(b)
    np.testing.assert_allclose(x, exact, rtol=0, atol=1e-9 * np.abs(exact).max())
    # unpreconditioned, with restarts
    x, iterations = right_gmres(A, b, lambda v: v, 1e-10 * np.linalg.norm(b), 400, 10)
    assert iterations > 10
    np.testing.assert_allclose(x, exact, rtol=0, atol=1e-8 * np.abs(exact).max())
    # a limit too small to converge says so
    x, _ = right_gmres(A, b, lambda v: v, 1e-12 * np.linalg.norm(b), 3, 40)
    assert x is None


def test_kept_factorization_solves_later_systems_to_the_tolerance():
    A, b = _system()
    solver = JacobianSolver(A.shape[0], "direct")
    solver.solve(A, b)
    assert solver.factorizations == 1
    for k in range(1, 4):  # a Jacobian that drifts a little from iteration to iteration
        Ak = (A + 0.02 * k * sp.random(*A.shape, density=0.01, random_state=20 + k)).tocsr()
        x = solver.solve(Ak, b, rtol=1e-10)
        np.testing.assert_allclose(x, spla.spsolve(Ak.tocsc(), b), rtol=0, atol=1e-8)
    assert solver.factorizations == 1 and solver.krylov_iterations > 0
    far = (A + 3.0 * sp.random(*A.shape, density=0.05, random_state=40)).tocsr()
    x = solver.solve(far, b, rtol=1e-10)
    np.testing.assert_allclose(x, spla.spsolve(far.tocsc(), b), rtol=0, atol=1e-8)
