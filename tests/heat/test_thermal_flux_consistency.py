"""Consistency: temperatures the model simulates at two depths give back the model's flux.

The amplitude-ratio method of Hatch et al. (2006), WRR 42:W10410, eq. (references.md section 9),
with v the thermal front velocity (positive downward) and kappa the effective diffusivity:

    v = (2 kappa / dz) ln(A_r) + sqrt((alpha + v^2) / 2),   alpha = sqrt(v^4 + (8 pi kappa / P)^2)

solved for v by a bracketing root finder, then q = v rho c / (rho_w c_w). The model's records at
0.05 and 0.15 m below the bed of a column with steady vertical flow (upward, downward and nearly
none) are reduced to their daily harmonics and fed to it.

Tolerance: the Stallman checks (test_stallman.py) allow a relative error of 5e-4 in the modelled
amplitude ratio on this grid; the flux band here is that error carried through the method
(the fluxes the method gives for A_r (1 -/+ 5e-4)), so this check adds no tolerance of its own.

When the field side provides ``bedflux.field.flux_from_temperature`` (same records, moving
windows), its fluxes must also fall within that band widened by their own stated ``flux_sd``.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

import bedflux
import bedflux.field

from .columns import WATER, column, harmonic

KV = 1e-4
DEPTH = 2.0
BULK = 2.5e6
LAMBDA = 1.4
PERIOD = 86400.0
RATIO_TOLERANCE = 5e-4  # test_stallman.py, middle grid


def amplitude_flux(ratio: float, dz: float = 0.10) -> float:
    """Darcy flux (m/s, positive DOWNWARD) from an amplitude ratio (Hatch et al. 2006)."""
    kappa = LAMBDA / BULK

    def residual(v):
        alpha = np.sqrt(v**4 + (8.0 * np.pi * kappa / PERIOD) ** 2)
        return (2.0 * kappa / dz) * np.log(ratio) + np.sqrt((alpha + v**2) / 2.0) - v

    v = brentq(residual, -1e-3, 1e-3, xtol=1e-16, rtol=1e-14)
    return v * BULK / WATER


def test_inversion_reproduces_the_worked_example():
    # references.md section 9: A_r = 0.585471 over 0.10 m <-> q = +2.0e-6 m/s (downward), 0.322233 <-> -2e-6
    assert amplitude_flux(0.585471) == pytest.approx(2.0e-6, rel=1e-4)
    assert amplitude_flux(0.322233) == pytest.approx(-2.0e-6, rel=1e-4)


@pytest.fixture(scope="module", params=[2e-6, -2e-6, 1e-8])
def records(request):
    q_up = request.param
    d = column(0.02 / 3, DEPTH, KV, q_up * DEPTH / KV,
               {"stream_temperature": {"mean": 14, "amplitude": 4, "period": "1 d"}, "groundwater_temperature": 14},
               {"end": "8 d", "step": "5 min", "output_every": "15 min", "scheme": "crank-nicolson"})
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    depth = -ds.z.values
    i1, i2 = np.argmin(abs(depth - 0.05)), np.argmin(abs(depth - 0.15))
    temp = ds.temperature.isel(x=0).values
    q_model = float(ds.qz.isel(time=-1, x=0).values[(i1 + i2) // 2])
    return ds.time.values, temp[:, i1], temp[:, i2], q_model


def band(ratio: float) -> tuple[float, float]:
    """Upward fluxes the method gives for ratios within the modelled ratio's tolerance."""
    ends = [-amplitude_flux(ratio * (1 + s * RATIO_TOLERANCE)) for s in (-1, 1)]
    return min(ends), max(ends)


@pytest.mark.slow
def test_amplitude_ratio_method_gives_back_the_model_flux(records):
    t, shallow, deep, q_model = records
    last = t >= 7 * PERIOD - 1.0
    a1, _ = harmonic(t[last], shallow[last], PERIOD)
    a2, _ = harmonic(t[last], deep[last], PERIOD)
    low, high = band(a2 / a1)
    assert low <= q_model <= high, (low, q_model, high)


@pytest.mark.slow
@pytest.mark.parametrize("method", ["amplitude", "combined"])
def test_field_estimator_gives_back_the_model_flux(records, method):
    t, shallow, deep, q_model = records
    out = bedflux.field.flux_from_temperature(t, shallow, deep, 0.10, LAMBDA, BULK, period=PERIOD, method=method)
    late = out[(out["time"] >= 5 * PERIOD) & np.isfinite(out["flux"])]  # after the start-up transient
    assert len(late) > 0
    a1, _ = harmonic(t[t >= 7 * PERIOD - 1], shallow[t >= 7 * PERIOD - 1], PERIOD)
    a2, _ = harmonic(t[t >= 7 * PERIOD - 1], deep[t >= 7 * PERIOD - 1], PERIOD)
    low, high = band(a2 / a1)
    width = np.maximum(high - low, 2.0 * late["flux_sd"].to_numpy())
    assert np.all(np.abs(late["flux"].to_numpy() - q_model) <= width)
