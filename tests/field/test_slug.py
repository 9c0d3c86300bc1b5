"""Slug tests (Hvorslev 1951; Bouwer & Rice 1976) and the in-bed standpipe permeameter (Chen 2000)."""
import numpy as np
import pytest

from bedflux import InputError
from bedflux.field import (bouwer_rice_coefficients, bouwer_rice_shape, fit_recovery, hvorslev_k, hvorslev_k_from_lag, permeameter_kv)


def _recovery(t0, h0=0.4, n=30, span=4.0):
    t = np.linspace(0.0, span * t0, n)
    return t, h0 * np.exp(-t / t0)


def test_basic_time_lag_from_two_e_folds():
    # Hvorslev (1951): T0 is the time at which H/H0 = 1/e; H/H0 = e^-2 at 600 s gives T0 = 300 s
    # (references 3.1).
    fit = fit_recovery([0.0, 600.0, 300.0], [1.0, np.exp(-2.0), np.exp(-1.0)])
    assert fit.time_lag == pytest.approx(300.0, rel=1e-12)
    assert fit.log_linear


def test_hvorslev_simplified():
    # Hvorslev (1951), simplified shape factor for Le/R > 8: K = r^2 ln(Le/R) / (2 Le T0);
    # r = 0.025, R = 0.05, Le = 1.5 m, T0 = 300 s gives 2.362e-6 m/s (issue 4; references 3.2: 2.36194e-6).
    t, h = _recovery(300.0)
    assert hvorslev_k(t, h, 0.025, 0.05, 1.5) == pytest.approx(2.36194e-6, rel=1e-5)


def test_hvorslev_exact_by_option():
    # Hvorslev (1951) exact shape term asinh(Le / 2R) (form from memory): 2.36271e-6 m/s (references 3.2).
    assert hvorslev_k_from_lag(300.0, 0.025, 0.05, 1.5, shape="exact") == pytest.approx(2.36271e-6, rel=1e-5)


def test_hvorslev_short_screen_uses_exact_form():
    # Hvorslev (1951): the simplified form holds for Le/R > 8 only; at Le/R = 4 the exact term
    # asinh(2) is used (computed here with numpy, form from memory).
    k = hvorslev_k_from_lag(60.0, 0.0127, 0.02, 0.08)
    assert k == pytest.approx(0.0127**2 * np.arcsinh(2.0) / (2 * 0.08 * 60.0), rel=1e-12)


def test_mini_piezometer_example():
    # References 3.4: r = R = 0.0127 m, Le = 0.15 m (Le/R = 11.8), T0 = 60 s -> 2.21239e-5 m/s.
    assert hvorslev_k_from_lag(60.0, 0.0127, 0.0127, 0.15) == pytest.approx(2.21239e-5, rel=1e-5)


def test_double_exponential_is_not_log_linear():
    # A two-rate recovery (e.g. filter-pack drainage; Butler 1998, concave-upward plot) is not a
    # single straight line in log space and must be flagged.
    t = np.linspace(0, 600, 40)
    h = 0.5 * np.exp(-t / 20.0) + 0.5 * np.exp(-t / 300.0)
    assert not fit_recovery(t, h).log_linear


def test_rising_head_is_accepted():
    # A bail test (negative displacement) recovers the same way: normalised by H0.
    t, h = _recovery(120.0)
    assert fit_recovery(t, -h).time_lag == pytest.approx(120.0, rel=1e-9)


def test_no_recovery_raises():
    with pytest.raises(InputError):
        fit_recovery([0, 10, 20, 30], [0.1, 0.12, 0.15, 0.2])


@pytest.mark.parametrize("ratio", [2.0, 2000.0])
def test_bouwer_rice_refuses_outside_curves(ratio):
    # References 3.2: the polynomial fits diverge beyond Le/rw ~ 1500; refuse rather than extrapolate.
    with pytest.raises(InputError):
        bouwer_rice_coefficients(ratio)


def test_bouwer_rice_geometry_checked():
    with pytest.raises(InputError):
        bouwer_rice_shape(0.05, 1.0, 5.0, 4.0)  # well deeper than the aquifer


def test_permeameter_chen():
    # Chen (2000), after Hvorslev (1951): Kv = (pi D / (11 m) + Lv) ln(h1/h2) / (t2 - t1);
    # D 0.05, Lv 0.30, m 1, h 0.50 -> 0.30 m in 600 s gives 2.676e-4 m/s (issue 4; references 4.1: 2.67570e-4).
    assert permeameter_kv([0.0, 600.0], [0.50, 0.30], 0.05, 0.30) == pytest.approx(2.67570e-4, rel=1e-5)


def test_permeameter_anisotropy():
    # References 4.2: m = 2 gives 2.61492e-4 m/s.
    assert permeameter_kv([0.0, 600.0], [0.50, 0.30], 0.05, 0.30, anisotropy=2.0) == pytest.approx(
        2.61492e-4, rel=1e-5)


def test_permeameter_many_readings_match_two():
    # An exact exponential decline: the log-linear fit gives the two-point value.
    t = np.linspace(0, 600, 7)
    h = 0.5 * (0.3 / 0.5) ** (t / 600.0)
    assert permeameter_kv(t, h, 0.05, 0.30) == pytest.approx(2.67570e-4, rel=1e-5)


def test_permeameter_head_must_fall():
    with pytest.raises(InputError):
        permeameter_kv([0.0, 600.0], [0.30, 0.50], 0.05, 0.30)
