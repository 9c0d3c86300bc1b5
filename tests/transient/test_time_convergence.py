"""Temporal order of accuracy: backward Euler first order, Crank-Nicolson second order.

Source: the truncation error of the theta method for linear systems u' = -A u + b(t): backward
Euler O(dt), Crank-Nicolson O(dt^2) (e.g. Richtmyer & Morton 1967, Difference Methods for
Initial-Value Problems, ch. 8; citation from memory; common practice for measuring it).

Scenario: a small 2D section (channel with a vertical bank, floodplain above every head, so the
set of submerged faces and the water-table faces never change and the problem is linear and
smooth) under a sinusoidal stage. The error at the end (one period) is measured against a
reference with a 32x finer step than the finest tested, on the same grid; its own error
(CN, dt_ref^2) is below 1e-3 of the smallest measured error.

Measured order = least-squares slope of log(error) vs log(dt); accepted within 0.15 of the
expected order. A harness self-test shows the check rejects a first-order sequence as second order.
The order measurements and the check on the reference run are marked ``slow`` (CI runs them).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux

P = 6 * 3600.0
# steps per period; 20 steps is pre-asymptotic for the net exchange under Crank-Nicolson (error
# ratios 2.7, 3.5, 3.75 from 20 steps; 3.5, 3.75, 3.96 from 40), so the sequence starts at 40
STEPS = (40, 80, 160, 320)
REF_STEPS = 10240


def scenario(scheme, nsteps):
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 20.0], "bottom": -6.0, "dx": 0.5, "dz": 0.25},
        "ground": {"profile": [[0.0, 0.0], [4.0, 0.0], [4.5, 2.0], [20.0, 2.0]]},
        "zone": [{"name": "aquifer", "kh": 5e-5, "kv": 1e-5, "specific_storage": 2e-4, "specific_yield": 0.1}],
        "stream": {"wave": {"mean": 0.6, "amplitude": 0.3, "period": P}, "channel": [0.0, 4.5]},
        "sides": {"left": "no-flow", "right": {"head": 1.0}, "bottom": "no-flow"},
        "time": {"end": P, "step": P / nsteps, "output_every": P / 4, "scheme": scheme},
    })


def measured_order(dts, errors):
    """Least-squares slope of log(error) against log(dt)."""
    return float(np.polyfit(np.log(dts), np.log(errors), 1)[0])


def assert_order(dts, errors, expected, tol=0.15, label=""):
    errors = np.asarray(errors, dtype=float)
    assert np.all(errors > 0.0), f"{label}: zero error (reference identical to a test run?)"
    assert np.all(np.diff(errors) < 0.0), f"{label}: error does not fall as dt falls: {errors}"
    p = measured_order(dts, errors)
    assert abs(p - expected) <= tol, f"{label}: measured order {p:.3f}, expected {expected}"
    return p


def test_harness_rejects_wrong_order():
    dts = 1.0 / np.asarray(STEPS, dtype=float)
    first = 3.0 * dts * (1.0 + 0.02 * np.array([1, -1, 1, -1]))   # first order with 2 % noise
    second = 7.0 * dts ** 2
    assert_order(dts, first, 1.0, label="first")
    assert_order(dts, second, 2.0, label="second")
    with pytest.raises(AssertionError):
        assert_order(dts, first, 2.0, label="first as second")
    with pytest.raises(AssertionError):
        assert_order(dts, second, 1.0, label="second as first")
    with pytest.raises(AssertionError):
        assert_order(dts, np.full(4, 1e-3), 2.0, label="stagnant")


@pytest.fixture(scope="module")
def reference():
    return bedflux.simulate(scenario("crank-nicolson", REF_STEPS))


def errors_at_end(ds, ref):
    h = ds["head"].values[-1]
    q = ds["bed_flux"].values[-1]
    dx = np.diff(ds.x.values).mean()
    return (float(np.nanmax(np.abs(h - ref["head"].values[-1]))),
            float(np.nanmax(np.abs(q - ref["bed_flux"].values[-1]))),
            # net exchange at the output instant: the reference's bed flux summed over the channel
            float(abs(ds["exchange"].values[-1] - np.nansum(ref["bed_flux"].values[-1]) * dx)))


ORDERS = {"backward-euler": 1.0, "crank-nicolson": 2.0}
MEASURED: dict = {}


@pytest.fixture(scope="module", params=list(ORDERS))
def sequence(request, reference):
    scheme = request.param
    errs = np.array([errors_at_end(bedflux.simulate(scenario(scheme, n)), reference) for n in STEPS])
    dts = P / np.asarray(STEPS, dtype=float)
    return scheme, dts, errs


@pytest.mark.slow
@pytest.mark.parametrize("what", ["head", "bed_flux", "exchange"])
def test_temporal_order(sequence, what):
    scheme, dts, errs = sequence
    col = {"head": 0, "bed_flux": 1, "exchange": 2}[what]
    p = assert_order(dts, errs[:, col], ORDERS[scheme], label=f"{scheme} {what} errors {errs[:, col]}")
    MEASURED[(scheme, what)] = p


@pytest.mark.slow
def test_exchange_is_bed_flux_summed_over_the_channel(reference):
    # with the stream only on top faces, the net exchange per metre of channel is the bed flux
    # summed over the channel columns times their width (design brief: definition of exchange);
    # at this fine step the difference between an instant and a step mean is below 1e-3
    dx = np.diff(reference.x.values).mean()
    np.testing.assert_allclose(np.nansum(reference["bed_flux"].values[-1]) * dx,
                               reference["exchange"].values[-1], rtol=1e-3)
