"""Residence times of bedform pumping over a flat bed of finite depth (Elliott & Brooks 1997).

Source: Elliott & Brooks (1997), Water Resources Research 33(1):123-136 [citation from memory;
the head field is confirmed through Packman et al. 2000, docs/references.md section 5]. With head
``h_m cos(kx)`` on the bed z = 0 and no flow at z = -d, in an isotropic bed

    h(x, z) = h_m cos(kx) cosh(k(z + d)) / cosh(kd)
    mean downwelling flux over the whole bed  q = K k h_m tanh(kd) / pi     (derived, [D])

The residence time distribution is checked against paths of the analytic pore velocity
``-K grad h / n`` integrated here with scipy's solve_ivp (DOP853, rtol 1e-11), independent of
the tracer. Paths that enter near x = 0 dive towards the stagnation point at the base and stay
longest; those that enter near the edges of the downwelling zone (x = +-wavelength/4) skim the
surface. The entry flux is ``K k h_m tanh(kd) cos(kx)``, so the share of the inflow entering at
|x| < x* is ``sin(k x*)``; residence time falls with |x| (checked below), so the flux-weighted
q-quantile of the residence time is the time of the path entering at ``sin(k x*) = 1 - q``.
"""
from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

import bedflux
from bedflux.flowpaths.statistics import QUANTILES

K, POROSITY, AMPLITUDE, WAVELENGTH, DEPTH, STAGE = 1e-4, 0.3, 0.01, 1.0, 0.25, 0.5
k = 2.0 * np.pi / WAVELENGTH


def scenario(n):
    """One wavelength, n columns and n / 2 rows over the bed depth, periodic sides."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [-0.5 * WAVELENGTH, 0.5 * WAVELENGTH], "bottom": -DEPTH, "dx": WAVELENGTH / n,
                 "dz": DEPTH / (n // 2)},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "bed", "kh": K, "kv": K, "porosity": POROSITY}],
        "stream": {"stage": STAGE, "bedform": {"amplitude": AMPLITUDE, "wavelength": WAVELENGTH}},
        "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}})


def velocity(_t, p):
    """Analytic pore velocity (m/s) at (x, z)."""
    x, z = p
    c = K * AMPLITUDE * k / (POROSITY * np.cosh(k * DEPTH))
    return [c * np.sin(k * x) * np.cosh(k * (z + DEPTH)), -c * np.cos(k * x) * np.sinh(k * (z + DEPTH))]


def analytic_residence_time(x0):
    """Time from entering at (x0, 0) to coming back up to z = 0."""
    def surface(_t, p):
        return p[1]
    surface.terminal, surface.direction = True, 1.0
    # start a hair below the bed so that the start is not taken for the crossing
    start = [x0, -1e-12]
    sol = solve_ivp(velocity, (0.0, 1e9), start, method="DOP853", rtol=1e-11, atol=1e-14, events=surface)
    assert sol.status == 1, "the analytic path did not come back to the bed"
    return float(sol.t_events[0][0])


def analytic_quantiles():
    x_star = np.arcsin(1.0 - np.array(QUANTILES) / 100.0) / k
    return np.array([analytic_residence_time(x) for x in x_star])


def test_residence_time_falls_away_from_the_downwelling_centre():
    # the premise of the quantile formula in the module docstring
    x = np.linspace(0.005, 0.245, 9) * WAVELENGTH
    t = [analytic_residence_time(v) for v in x]
    assert np.all(np.diff(t) < 0)


def test_exchange_flux_matches_the_closed_form_and_converges():
    expected = K * k * AMPLITUDE * np.tanh(k * DEPTH) / np.pi  # Elliott & Brooks (1997), finite depth
    errs = []
    for n in (16, 32, 64):
        fp = bedflux.flowpaths(scenario(n), per_metre=50)
        errs.append(abs(fp.attrs["exchange_flux"] - expected) / expected)
    assert errs[-1] < 2e-3
    assert errs[0] > errs[1] > errs[2]


def test_residence_time_distribution_converges_to_the_analytic_one():
    reference = analytic_quantiles()
    errs = []
    for n in (32, 64, 128):
        fp = bedflux.flowpaths(scenario(n), per_metre=2000)
        traced = np.array([fp.attrs[f"residence_time_q{q:02d}"] for q in QUANTILES])
        errs.append(np.max(np.abs(traced / reference - 1.0)))
    # largest relative error of the 10 ... 90 % quantiles: 2.5 %, 0.9 %, 0.2 % when written
    assert errs[0] > errs[1] > errs[2]
    assert errs[2] < 0.005


def test_every_path_returns_to_the_bed_and_the_exits_carry_the_upwelling():
    # a closed base: in steady flow all the water that enters leaves through the bed again, and
    # streamlines do not cross, so the exits share the upwelling of the columns in order
    ds = bedflux.simulate(scenario(32))
    fp = bedflux.flowpaths(scenario(32), ds, per_metre=400)
    assert set(fp.exit_kind.values) == {"bed"}
    dx = WAVELENGTH / 32
    up = np.maximum(ds.bed_flux.values, 0.0) * dx
    edges = ds.x_edge.values
    traced = np.histogram(fp.exit_x.values, bins=edges, weights=fp.weight.values)[0]
    w = float(fp.weight.values[0])
    assert np.max(np.abs(np.cumsum(traced) - np.cumsum(up))) <= 1.0 * w + 1e-12 * up.sum()
