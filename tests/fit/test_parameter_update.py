"""The cheap parameter update gives the model of a full rebuild.

A forward model whose free parameters are all plain values (zone conductivities and storage,
leakance, recharge, side heads, ET rates) re-assembles its section on the cached geometry
(``bedflux.section.reassembly``) instead of rebuilding the scenario with ``with_values`` and
discretising it again. Both describe the same discrete equations, so the predictions and the
Jacobian must agree to round-off (1e-12 relative) for every parameter kind, in steady and
transient (backward Euler) runs. The reference is the full rebuild, taken by a forward model
that also frees a layer depth (a geometry parameter: every section is then rebuilt).

The section is the Jacobian tests' one (tests/fit/test_jacobian.py): anisotropic zones, a box
zone, a bed layer, recharge, riparian ET, side and bottom heads, a bed leakance, and a stage
pulse that floods the banks in the transient run.
"""
from __future__ import annotations

import numpy as np
import pytest
from bedflux.errors import InputError
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.section.discretisation import discretise
from bedflux.section.reassembly import Reassembly
from test_jacobian import TRANSIENT_PATHS, TRANSIENT_TIMES, observations, section

ROUND_OFF = 1e-12
#: Every plain path of the section, and a geometry parameter that forces full rebuilds.
PLAIN_PATHS = TRANSIENT_PATHS + ["aquifer.porosity"]
GEOMETRY = {"path": "bed.depth", "low": 0.2, "high": 1.0}


def bounds(scenario, path: str) -> dict:
    """Wide bounds around the scenario's value, inside what the scenario allows."""
    v = scenario.value_at(path)
    prop = path.rsplit(".", 1)[-1]
    if prop in ("kh", "kv", "specific_storage", "leakance"):
        return {"path": path, "low": v / 10, "high": v * 10}
    if prop == "head":
        return {"path": path, "low": v - 0.5, "high": v + 0.5}
    if prop in ("specific_yield", "porosity"):
        return {"path": path, "low": 0.05, "high": 0.45}
    return {"path": path, "low": 0.0, "high": 4 * v}  # recharge, ET rate


def moved(fw: Forward) -> np.ndarray:
    """A parameter vector away from the start, inside the bounds."""
    lo = np.array([p.internal(p.low) for p in fw.free])
    hi = np.array([p.internal(p.high) for p in fw.free])
    return fw.start() + 0.3 * (np.clip(fw.start() + 0.5 * (hi - lo), lo, hi) - fw.start())


@pytest.mark.parametrize("path", PLAIN_PATHS)
def test_plain_scenario_copy_equals_with_values(path):
    s = section("backward-euler")
    v = bounds(s, path)["high"] * 0.9 if not path.startswith("sides") else s.value_at(path) + 0.2
    full, plain = s.with_values({path: v}), s.with_plain_values({path: v})
    assert plain == full
    assert plain.raw == full.raw
    assert s.value_at(path) != v and s.with_plain_values({}).raw == s.raw  # the base is left alone


def test_kv_follows_kh_where_it_is_not_given():
    # a zone without kv takes kv = kh (docs/scenario.md): the plain copy keeps that rule
    s = section(None)
    raw = dict(s.raw)
    raw["zone"] = [dict(z) for z in raw["zone"]]
    del raw["zone"][2]["kv"]
    s = type(s).from_dict(raw)
    assert s.with_plain_values({"bed.kh": 3e-5}) == s.with_values({"bed.kh": 3e-5})


@pytest.mark.parametrize("scheme", [None, "backward-euler"])
def test_reassembled_section_equals_a_new_one(scheme):
    s = section(scheme)
    reassembly = Reassembly(discretise(s))
    for path in PLAIN_PATHS:
        b = bounds(s, path)
        value = 0.5 * (b["low"] + b["high"])
        new = discretise(s.with_values({path: value}))
        re = reassembly.section_for(s.with_plain_values({path: value}))
        for prop in ("kh", "kv", "specific_storage", "specific_yield", "porosity"):
            np.testing.assert_allclose(getattr(re.materials, prop), getattr(new.materials, prop), rtol=ROUND_OFF,
                                       err_msg=f"{path}: {prop}")
        assert abs(re.L - new.L).max() <= ROUND_OFF * abs(new.L).max(), path
        for name in ("hfaces", "vfaces"):
            np.testing.assert_allclose(getattr(re, name).conductance, getattr(new, name).conductance, rtol=ROUND_OFF)
        for side in new.sides:
            np.testing.assert_allclose(re.sides[side].conductance, new.sides[side].conductance, rtol=ROUND_OFF)
        np.testing.assert_allclose(re.top_half_resistance, new.top_half_resistance, rtol=ROUND_OFF)
        np.testing.assert_allclose(re.et_unit_rate, new.et_unit_rate, rtol=ROUND_OFF)
        assert re.h_ref == new.h_ref
        for t in (0.0, 3.0 * 3600.0):
            state = new.initial_active_set()
            A, B = re.matrix(re.terms(t, state)), new.matrix(new.terms(t, state))
            assert abs(A - B).max() <= ROUND_OFF * abs(B).max(), path
            np.testing.assert_allclose(re.rhs(re.terms(t, state)), new.rhs(new.terms(t, state)), rtol=ROUND_OFF,
                                       atol=ROUND_OFF * np.abs(new.rhs(new.terms(t, state))).max())


@pytest.mark.parametrize("scheme", [None, "backward-euler"])
def test_predictions_and_jacobian_equal_a_full_rebuild(scheme):
    s = section(scheme)
    obs = observations(TRANSIENT_TIMES if scheme else (0.0,))
    paths = TRANSIENT_PATHS if scheme else [p for p in TRANSIENT_PATHS if "specific" not in p]
    free = [bounds(s, p) for p in paths]
    fast = Forward(s, obs, free_parameters(s, free))
    full = Forward(s, obs, free_parameters(s, free + [GEOMETRY]))
    m = moved(fast)
    m_full = np.append(m, full.start()[-1])
    # a model asked at one vector is built in full; the section of a second vector is built in
    # full too and becomes the base of the re-assembled ones that follow
    fast.predict(fast.start())
    fast.predict(0.5 * (fast.start() + m))
    d = fast.predict(m)
    J = fast.jacobian(m)  # on the kept run (steady: only the sensitivity solves)
    assert fast._sections._reassembly is not None, "expected the re-assembled sections"
    assert full._sections._reassembly is None, "expected full rebuilds"
    d_ref, J_ref = full.predict_and_jacobian(m_full)
    J_ref = J_ref[:, :-1]
    np.testing.assert_allclose(d, d_ref, rtol=ROUND_OFF, atol=ROUND_OFF * np.abs(d_ref).max())
    for j, path in enumerate(paths):
        scale = np.abs(J_ref[:, j]).max()
        assert scale > 0, path
        np.testing.assert_allclose(J[:, j], J_ref[:, j], rtol=ROUND_OFF, atol=ROUND_OFF * scale, err_msg=path)
    d2, J2 = fast.predict_and_jacobian(m)
    np.testing.assert_array_equal(d2, d)
    np.testing.assert_array_equal(J2, J)


def test_a_value_outside_the_bounds_is_checked_as_before():
    # the re-assembly is used only inside bounds the scenario accepted; outside them the scenario
    # is rebuilt and checked, so an implausible conductivity is still refused
    s = section(None)
    fw = Forward(s, observations(), free_parameters(s, [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}]))
    fw.predict(fw.start())
    fw.predict(fw.start() + 0.1)
    with pytest.raises(InputError, match="kv"):
        fw.predict(np.array([1.0]))  # 10 m/s


def test_moved_observations_get_new_operators():
    # the operators are kept while the observation places stay; moved places give new ones
    s = section(None)
    free = free_parameters(s, [bounds(s, "bed.kv")])
    fw = Forward(s, observations(), free)
    m = fw.start() + 0.1
    fw.predict(m)
    shifted = observations().assign(x=lambda t: t["x"] + 0.4)
    fw.observations = shifted
    np.testing.assert_allclose(fw.predict(m), Forward(s, shifted, free).predict(m), rtol=ROUND_OFF)
    assert not np.allclose(fw.predict(m), Forward(s, observations(), free).predict(m))


def test_a_forward_model_with_a_kept_run_pickles():
    # a copy sent to another process (a pool or a cluster) leaves the kept run (its factorization
    # cannot be pickled) and runs again, to the same results
    import pickle

    s = section(None)
    fw = Forward(s, observations(), free_parameters(s, [bounds(s, "bed.kv"), bounds(s, "recharge.rate")]))
    m = moved(fw)
    fw.predict(fw.start())
    fw.predict(0.5 * (fw.start() + m))
    d, J = fw.predict_and_jacobian(m)
    copy = pickle.loads(pickle.dumps(fw))
    d2, J2 = copy.predict_and_jacobian(m)
    np.testing.assert_array_equal(d2, d)
    np.testing.assert_array_equal(J2, J)
