"""Vertical flux from temperature records: the periodic solution, its three inversions, the
windowed harmonic fit and flux_from_temperature on records made from the analytic solution.

Sources beside each check. The periodic solution is Stallman (1965) in the form of Hatch et al.
(2006); the check values of the worked example (lambda = 1.4 W/(m K), rho c = 2.5e6 J/(m^3 K),
dz = 0.1 m, P = 1 d) are those derived in the project's reference notes (section 9, from the
published equations).
"""
import numpy as np
import pytest
from scipy.optimize import brentq

from bedflux import InputError
from bedflux.field import flux_from_temperature
from bedflux.field.harmonics import fit_windows
from bedflux.field.periodic import (periodic_temperature, velocity_and_diffusivity, velocity_from_amplitude,
                                    velocity_from_phase, wavenumbers)
from bedflux.field.thermal_properties import WATER_HEAT_CAPACITY

DAY = 86400.0
W = 2 * np.pi / DAY


# ------------------------------------------------------------------ the periodic solution

@pytest.mark.parametrize("v, ratio, lag", [
    # Stallman (1965) in Hatch et al. (2006) form; worked example of the reference notes, rel 1e-5
    (3.344e-6, 0.585471, 10706.9),
    (0.0, 0.446733, 11080.5),
    (-3.344e-6, 0.322233, 10706.9),
    (1.672e-5, 0.944004, 5758.58),
])
def test_amplitude_ratio_and_lag_match_the_worked_example(v, ratio, lag):
    a, b = wavenumbers(v, 1.4 / 2.5e6, DAY)
    assert np.exp(-a * 0.1) == pytest.approx(ratio, rel=1e-5)
    assert b * 0.1 / W == pytest.approx(lag, rel=1e-5)


def test_periodic_solution_solves_the_heat_equation():
    # dT/dt = k d2T/dz2 - v dT/dz (Hatch et al. 2006, eq. 1, z down), checked by central
    # differences: independent of the closed form of a and b (the reference notes warn of a
    # published code that computes alpha wrongly).
    k, v = 6e-7, -4e-6
    t, z, ht, hz = 30000.0, 0.12, 1.0, 1e-4
    T = lambda tt, zz: periodic_temperature(tt, zz, v, k, amplitude=3.0)  # noqa: E731
    dTdt = (T(t + ht, z) - T(t - ht, z)) / (2 * ht)
    dTdz = (T(t, z + hz) - T(t, z - hz)) / (2 * hz)
    d2T = (T(t, z + hz) - 2 * T(t, z) + T(t, z - hz)) / hz ** 2
    assert dTdt == pytest.approx(k * d2T - v * dTdz, rel=1e-5)
    # surface: the imposed wave
    assert T(t, 0.0) == pytest.approx(3.0 * np.cos(W * t), rel=1e-12)


# ------------------------------------------------------------------ the inversions

def _hatch_amplitude(ratio, dz, k):
    """Hatch et al. (2006) amplitude equation, v = (2k/dz) ln Ar + sqrt((alpha + v^2)/2), solved
    by brentq over a wide bracket (an independent route to the same root)."""
    def f(v):
        alpha = np.sqrt(v ** 4 + (8 * np.pi * k / DAY) ** 2)
        return 2 * k / dz * np.log(ratio) + np.sqrt((alpha + v * v) / 2) - v
    return brentq(f, -1e-3, 1e-3, xtol=1e-16, rtol=1e-13)


@pytest.mark.parametrize("v", [-2e-5, -3.344e-6, -1e-7, 0.0, 2e-7, 3.344e-6, 4e-5])
def test_amplitude_inversion_agrees_with_hatch_equation_by_brentq(v):
    k, dz = 1.4 / 2.5e6, 0.1
    a, _ = wavenumbers(v, k, DAY)
    ratio = np.exp(-a * dz)
    assert velocity_from_amplitude(ratio, dz, k, DAY) == pytest.approx(_hatch_amplitude(ratio, dz, k), rel=1e-9,
                                                                       abs=1e-15)
    assert velocity_from_amplitude(ratio, dz, k, DAY) == pytest.approx(v, rel=1e-9, abs=1e-15)


def test_amplitude_inversion_matches_keery_cubic():
    # Keery et al. (2007) amplitude cubic in the Darcy flux q (down), as derived in the reference
    # notes: (H^3 L/4) q^3 - (5 H^2 L^2/4) q^2 + 2 H L^3 q - L^4 + (pi rho c/(lambda P))^2 = 0,
    # H = rho_w c_w / lambda, L = ln(Ar)/dz; its real root for the worked example is q = 2.0e-6.
    lam, rc, rwcw, dz = 1.4, 2.5e6, 4.18e6, 0.1
    H, L = rwcw / lam, np.log(0.5854714992532888) / dz
    roots = np.roots([H ** 3 * L / 4, -5 * H ** 2 * L ** 2 / 4, 2 * H * L ** 3, -L ** 4 + (np.pi * rc / (lam * DAY)) ** 2])
    q = roots[np.abs(roots.imag) < 1e-12 * np.abs(roots).max()].real
    assert q.size == 1 and q[0] == pytest.approx(2.0e-6, rel=1e-5)
    v = velocity_from_amplitude(0.5854714992532888, dz, lam / rc, DAY)
    assert v * rc / rwcw == pytest.approx(q[0], rel=1e-6)


@pytest.mark.parametrize("v", [-8e-6, -1e-6, 1e-6, 8e-6])
def test_phase_inversion_gives_the_magnitude(v):
    # Hatch et al. (2006) phase equation: |v| from the lag alone, the same for +v and -v
    k, dz = 6e-7, 0.15
    _, b = wavenumbers(v, k, DAY)
    assert velocity_from_phase(b * dz / W, dz, k, DAY) == pytest.approx(abs(v), rel=1e-9)


@pytest.mark.parametrize("v, k", [(-6e-6, 4e-7), (0.0, 7e-7), (5e-6, 9e-7)])
def test_combined_inversion_needs_no_diffusivity(v, k):
    # McCallum et al. (2012) / Luce et al. (2013): v and k both from ratio and lag
    dz = 0.1
    a, b = wavenumbers(v, k, DAY)
    vv, kk = velocity_and_diffusivity(np.exp(-a * dz), b * dz / W, dz, DAY)
    assert vv == pytest.approx(v, abs=1e-12 * max(abs(v), 1e-6))
    assert kk == pytest.approx(k, rel=1e-9)


# ------------------------------------------------------------------ the harmonic fit

def test_least_squares_window_recovers_amplitude_phase_on_uneven_sampling_with_drift():
    # a known sinusoid with a linear drift, sampled unevenly: the fit returns its amplitude and
    # phase exactly (least squares with the drift in the model), and its standard error matches the
    # scatter of fits over independent noise (the 68 % rule, common statistics)
    rng = np.random.default_rng(3)
    t = np.sort(rng.uniform(0, 40 * DAY, 40 * 40))
    y = 12 + 0.3 * t / DAY + 2.0 * np.cos(W * t - 1.1)
    centres = DAY / 2 + DAY * np.arange(40)
    h = fit_windows(t, y, centres, DAY, DAY)
    assert np.allclose(h.amplitude, 2.0, rtol=1e-9)
    assert np.allclose(h.phase, 1.1, rtol=1e-9)
    noisy = fit_windows(t, y + rng.normal(0, 0.1, t.size), centres, DAY, DAY)
    z = (noisy.amplitude - 2.0) / np.sqrt(0.5 * (noisy.cov[:, 0, 0] + noisy.cov[:, 1, 1]))
    assert 0.6 < np.std(z) < 1.5


# ------------------------------------------------------------------ flux_from_temperature

LAM, RC = 2.0, 2.8e6


def _records(flux_up, days=30, noise=0.03, spacing=0.1, top=0.05, lam=LAM, rc=RC, seed=0, step=900.0):
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, days * DAY, step)
    v = -flux_up * WATER_HEAT_CAPACITY / rc
    k = lam / rc
    s = periodic_temperature(t, top, v, k, mean=14.0, amplitude=3.0) + rng.normal(0, noise, t.size)
    d = periodic_temperature(t, top + spacing, v, k, mean=14.0, amplitude=3.0) + rng.normal(0, noise, t.size)
    return t, s, d


@pytest.mark.parametrize("flux_up", [4e-6, 1e-6, 0.0, -1e-6, -4e-6])
@pytest.mark.parametrize("method", ["amplitude", "combined"])
def test_flux_is_recovered_within_its_stated_uncertainty(flux_up, method):
    # records from the Stallman (1965) solution for a known flux (+ up, - down, ~0) with sensor
    # noise; properties known to +/- 15 %: each window's flux lies within 2 of its standard deviations
    # of the truth (about 95 % for a normal error; at least 27 of 30 windows)
    t, s, d = _records(flux_up)
    out = flux_from_temperature(t, s, d, 0.1, LAM, RC, method=method, accuracy=0.03)
    assert len(out) == 30
    inside = np.abs(out["flux"] - flux_up) <= 2 * out["flux_sd"]
    assert inside.sum() >= 27
    assert (out["flag"].str.contains("too_damped") | out["flag"].str.contains("gap")).sum() == 0


@pytest.mark.parametrize("flux_up", [3e-6, 0.0, -3e-6])
def test_stated_noise_uncertainty_matches_the_scatter(flux_up):
    # With the properties and spacing exact, the Monte Carlo standard deviation is the noise's
    # alone: it must match the scatter of the estimates over independent windows (ratio near 1)
    # and the estimates must be unbiased (mean within 3 standard errors of the truth).
    t, s, d = _records(flux_up, days=60, noise=0.05)
    out = flux_from_temperature(t, s, d, 0.1, LAM, RC, accuracy=0.0, spacing_sd=1e-9,
                                conductivity_range=(LAM, LAM), heat_capacity_range=(RC, RC))
    ratio = out["flux"].std() / out["flux_sd"].mean()
    assert 0.7 < ratio < 1.4
    assert abs(out["flux"].mean() - flux_up) < 3 * out["flux"].std() / np.sqrt(len(out))


@pytest.mark.parametrize("flux_up", [5e-6, -5e-6])
def test_amplitude_and_phase_methods_agree_on_a_clean_record(flux_up):
    # both invert one solution (Hatch et al. 2006): on a noise-free record they must give one flux
    t, s, d = _records(flux_up, noise=0.0, days=3)
    out = flux_from_temperature(t, s, d, 0.1, LAM, RC)
    assert np.allclose(out["flux_amplitude"], flux_up, rtol=1e-6)
    assert np.allclose(out["flux_phase"], flux_up, rtol=1e-6)
    assert (out["flag"] == "").all()


def test_combined_method_does_not_need_the_conductivity():
    # McCallum et al. (2012): with a wrong conductivity the amplitude method is biased, the
    # combined one is not (it uses only rho c to turn the front velocity into a Darcy flux), and
    # the implied diffusivity is the true lambda / rho c. With the conductivity 30 % low the
    # amplitude and phase methods disagree; 50 % high, the lag is longer than conduction alone
    # allows and the phase method cannot read it.
    t, s, d = _records(3e-6, noise=0.0, days=3, lam=1.6)
    for assumed, flag in ((1.12, "methods_disagree"), (2.4, "phase_out_of_range")):
        out = flux_from_temperature(t, s, d, 0.1, assumed, RC, method="combined")
        assert np.allclose(out["flux"], 3e-6, rtol=1e-6)
        assert np.allclose(out["diffusivity"], 1.6 / RC, rtol=1e-6)
        assert not np.allclose(out["flux_amplitude"], 3e-6, rtol=0.3)
        assert out["flag"].str.contains(flag).all()


def test_too_damped_and_implausible_diffusivity_are_flagged():
    # strong upwelling over 50 cm: the deep wave (amplitude ~ 3 exp(-a 0.55) degC, below 0.01 degC)
    # drowns in 0.05 degC noise
    t, s, d = _records(2e-5, noise=0.05, spacing=0.5)
    out = flux_from_temperature(t, s, d, 0.5, LAM, RC)
    assert out["flag"].str.contains("too_damped").mean() > 0.8
    # a bed whose diffusivity (0.3 / 2.8e6 m^2/s = 0.0093 m^2/d) lies below the plausible
    # 0.028-0.180 m^2/d (Irvine et al. 2015)
    t, s, d = _records(1e-6, noise=0.0, days=3, lam=0.3)
    out = flux_from_temperature(t, s, d, 0.1, LAM, RC)
    assert out["flag"].str.contains("implausible_diffusivity").all()


def test_gaps_and_swapped_sensors_are_flagged():
    t, s, d = _records(1e-6, days=4)
    keep = (t < 1.2 * DAY) | (t > 1.9 * DAY)
    out = flux_from_temperature(t[keep], s[keep], d[keep], 0.1, LAM, RC)
    assert out["flag"].tolist()[1] == "gap" and np.isnan(out["flux"][1])
    assert "gap" not in " ".join(out["flag"][[0, 2, 3]])
    swapped = flux_from_temperature(t, d, s, 0.1, LAM, RC)
    assert swapped["flag"].str.contains("no_damping").all() and swapped["flux"].isna().all()


def test_same_input_gives_the_same_output():
    t, s, d = _records(1e-6, days=3)
    a = flux_from_temperature(t, s, d, 0.1, LAM, RC)
    b = flux_from_temperature(t, s, d, 0.1, LAM, RC)
    assert a.equals(b)


@pytest.mark.parametrize("kwargs, match", [
    ({"method": "fourier"}, "method 'fourier' is not one of amplitude, phase, combined"),
    ({"spacing": 0.0}, "spacing must be a positive number"),
    ({"window": 3600.0}, "must cover at least one period"),
])
def test_bad_arguments_raise_input_errors(kwargs, match):
    t, s, d = _records(0.0, days=2)
    args = {"spacing": 0.1, **kwargs}
    spacing = args.pop("spacing")
    with pytest.raises(InputError, match=match):
        flux_from_temperature(t, s, d, spacing, LAM, RC, **args)


def test_public_signature_and_columns():
    # the contract of the design brief: bedflux.field.flux_from_temperature(time, shallow, deep,
    # spacing, thermal_conductivity, heat_capacity, period=86400.0, method=...) -> DataFrame with
    # time (window centre), flux (m/s, positive upward), flux_sd, flag
    import inspect

    params = list(inspect.signature(flux_from_temperature).parameters.values())
    assert [p.name for p in params[:8]] == ["time", "shallow", "deep", "spacing", "thermal_conductivity",
                                            "heat_capacity", "period", "method"]
    assert params[6].default == 86400.0
    t, s, d = _records(2e-6, noise=0.0, days=2)
    out = flux_from_temperature(t, s, d, 0.1, LAM, RC, DAY, "phase")
    assert list(out.columns[:4]) == ["time", "flux", "flux_sd", "flag"]
    assert np.allclose(out["time"], [0.5 * DAY, 1.5 * DAY])
    assert (out["flux"] > 0).all()  # upward flow is positive
