"""Mirror symmetry: reflecting the section in x reflects the bed-flux profile.

Source: the steady flow equation d/dx(Kx dh/dx) + d/dz(Kz dh/dz) = 0 is invariant under x -> -x
(a property of the equation; common practice as a check of any discretisation). Mirroring the
ground, the zones, the sides, the channel limits, the bedform phase and any property field must
give the mirror image of the head and of the bed flux, up to round-off.
"""
from __future__ import annotations

import copy

import numpy as np
import pytest

import bedflux

X0, X1 = 0.0, 40.0
TOL = 1e-9  # relative to the largest |bed flux|: round-off of two direct solves


def base_case():
    return {"grid": {"x": [X0, X1], "bottom": -8.0, "dx": 0.25, "dz": 0.05, "growth": 1.1, "dz_max": 0.8},
            "ground": {"profile": [[0.0, 1.5], [9.0, 1.1], [13.0, 0.1], [22.0, -0.2], [30.0, 0.4],
                                   [33.0, 0.9], [40.0, 1.2]]},
            "zone": [{"name": "aquifer", "kh": "30 m/d", "kv": "6 m/d"},
                     {"name": "bed", "kh": "8 m/d", "kv": "2 m/d", "depth": 0.3, "x": [11.0, 31.0]},
                     {"name": "clog", "kh": "0.1 m/d", "kv": "0.02 m/d", "x": [14.0, 18.5], "z": [-1.0, 0.2]},
                     {"name": "lens", "kh": "0.5 m/d", "kv": "0.1 m/d", "x": [24.0, 34.0], "z": [-4.0, -3.0]}],
            "stream": {"stage": 0.6, "channel": [10.5, 32.0],
                       "bedform": {"amplitude": 0.004, "wavelength": 3.0, "phase": 0.4}},
            "recharge": {"rate": "3 mm/d"},
            "sides": {"left": {"head": 1.3}, "right": {"head": 0.9}, "bottom": "no-flow"}}


def mirror(d):
    """The same section reflected about x = (X0 + X1) / 2."""
    m = copy.deepcopy(d)
    flip = lambda x: X0 + X1 - x  # noqa: E731
    m["ground"]["profile"] = [[flip(x), z] for x, z in reversed(d["ground"]["profile"])]
    for zone in m["zone"]:
        if "x" in zone:
            a, b = zone["x"]
            zone["x"] = [flip(b), flip(a)]
    a, b = d["stream"]["channel"]
    m["stream"]["channel"] = [flip(b), flip(a)]
    bf = m["stream"]["bedform"]
    # A cos(2 pi (X0 + X1 - x) / lam + phi) = A cos(2 pi x / lam - phi - 2 pi (X0 + X1) / lam)
    bf["phase"] = -d["stream"]["bedform"]["phase"] - 2 * np.pi * (X0 + X1) / bf["wavelength"]
    m["sides"]["left"], m["sides"]["right"] = d["sides"]["right"], d["sides"]["left"]
    return m


def assert_mirrored(r, rm):
    np.testing.assert_allclose(rm.x.values, (X0 + X1 - r.x.values)[::-1], atol=1e-12)
    q, qm = r.bed_flux.values, rm.bed_flux.values
    np.testing.assert_array_equal(np.isnan(qm), np.isnan(q)[::-1])  # same submerged columns
    wet = ~np.isnan(q)
    assert wet.sum() > 10
    scale = np.nanmax(np.abs(q))
    assert scale > 0
    np.testing.assert_allclose(qm[::-1][wet], q[wet], rtol=0, atol=TOL * scale)
    # the section is not symmetric itself, or the check would prove little
    assert np.nanmax(np.abs(q[wet] - q[::-1][wet])) > 1e-3 * scale
    h, hm = r["head"].values, rm["head"].values
    np.testing.assert_array_equal(np.isnan(hm), np.isnan(h)[:, ::-1])
    np.testing.assert_allclose(hm[:, ::-1], h, rtol=0, atol=1e-9 * np.nanmax(np.abs(h)), equal_nan=True)
    assert float(rm.exchange) == pytest.approx(float(r.exchange), rel=1e-9)


def test_mirrored_section_mirrors_bed_flux():
    d = base_case()
    assert_mirrored(bedflux.simulate(bedflux.Scenario.from_dict(d)),
                    bedflux.simulate(bedflux.Scenario.from_dict(mirror(d))))


def test_mirrored_heterogeneous_field_mirrors_bed_flux():
    d = base_case()
    s, sm = bedflux.Scenario.from_dict(d), bedflux.Scenario.from_dict(mirror(d))
    r0 = bedflux.simulate(s)
    rng = np.random.default_rng(7)
    kh = 1e-4 * np.exp(1.5 * rng.standard_normal(r0["head"].shape))
    kv = 0.2 * kh
    r = bedflux.simulate(s, fields={"kh": kh, "kv": kv})
    rm = bedflux.simulate(sm, fields={"kh": kh[:, ::-1], "kv": kv[:, ::-1]})
    assert_mirrored(r, rm)


def test_mirror_of_a_symmetric_section_is_itself():
    # a symmetric channel with equal side heads: the bed flux profile is even about the centre
    d = {"grid": {"x": [X0, X1], "bottom": -6.0, "dx": 0.5, "dz": 0.1},
         "ground": {"profile": [[0.0, 1.0], [15.0, 0.0], [25.0, 0.0], [40.0, 1.0]]},
         "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 2e-5}],
         "stream": {"stage": 0.3, "channel": [14.0, 26.0]},
         "sides": {"left": {"head": 0.8}, "right": {"head": 0.8}}}
    q = bedflux.simulate(bedflux.Scenario.from_dict(d)).bed_flux.values
    wet = ~np.isnan(q)
    assert wet.sum() > 10 and np.array_equal(wet, wet[::-1])
    np.testing.assert_allclose(q[::-1][wet], q[wet], rtol=0, atol=TOL * np.nanmax(np.abs(q)))
