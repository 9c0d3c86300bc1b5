"""Bedform pumping: sinusoidal head on a flat bed of finite depth, periodic sides.

Source: Elliott & Brooks (1997), Water Resources Research 33(1) (citation details from memory;
the formula itself is confirmed through Packman et al. 2000, references.md section 5 [C2]). For
Laplace's equation in a bed of depth d with head h_m cos(kx) on top and no flow at z = -d

    h(x, z) = h_m cos(kx) cosh(k'(z + d)) / cosh(k'd),        k' = k sqrt(kh / kv)
    q_up(x) = -kv dh/dz |_(z=0) = -sqrt(kh kv) k tanh(k'd) h_m cos(kx)

(isotropic case after Elliott & Brooks 1997; the anisotropic form follows by scaling
x -> x sqrt(kv / kh), which turns kh d2h/dx2 + kv d2h/dz2 = 0 into Laplace's equation).
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.scenario.bedform import dynamic_head_amplitude

STAGE = 0.5  # m above the bed surface z = 0; the bedform head rides on it


def observed_orders(hs, errs):
    """Orders log(e_i / e_{i+1}) / log(h_i / h_{i+1}) of successive refinements."""
    hs, errs = np.asarray(hs, float), np.asarray(errs, float)
    return np.log(errs[:-1] / errs[1:]) / np.log(hs[:-1] / hs[1:])


def assert_converges_at_order(hs, errs, expected=2.0, slack=0.2, what="error"):
    """Fail unless at least three successive refinements each show an order above
    ``expected - slack`` (and below ``expected + 0.5``: a jump far above the expected order
    means the errors are not in the asymptotic range or the reference is wrong)."""
    if len(hs) < 4:
        raise AssertionError("need at least three refinements (four grids) to measure an order")
    if not np.all(np.diff(hs) < 0):
        raise AssertionError("grid sizes must decrease")
    orders = observed_orders(hs, errs)
    if not (np.all(orders > expected - slack) and np.all(orders < expected + 0.5)):
        raise AssertionError(f"{what}: observed orders {np.round(orders, 3).tolist()} for h = {list(hs)}, "
                             f"errors {list(errs)}; expected about {expected}")
    return orders


def bedform_section(n, kh, kv, d, wavelength=1.0, amplitude=0.01, phase=0.0):
    """One wavelength, n columns, n / 2 rows over depth d; flat bed at z = 0."""
    d_ = {"grid": {"x": [0.0, wavelength], "bottom": -d, "dx": wavelength / n, "dz": d / (n // 2)},
          "ground": {"elevation": 0.0},
          "zone": [{"name": "bed", "kh": kh, "kv": kv}],
          "stream": {"stage": STAGE, "bedform": {"amplitude": amplitude, "wavelength": wavelength,
                                                 "phase": phase}},
          "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}}
    return bedflux.Scenario.from_dict(d_)


def analytic(x, z, kh, kv, d, wavelength, amplitude, phase=0.0):
    """Elliott & Brooks (1997) field and bed flux, anisotropic by scaling x (see module docstring)."""
    k = 2.0 * np.pi / wavelength
    kp = k * np.sqrt(kh / kv)
    c = np.cos(k * x + phase)
    head = STAGE + amplitude * c[None, :] * np.cosh(kp * (z[:, None] + d)) / np.cosh(kp * d)
    q_up = -np.sqrt(kh * kv) * k * np.tanh(kp * d) * amplitude * c
    return head, q_up


def errors(n, kh, kv, d, wavelength=1.0, amplitude=0.01, phase=0.0):
    r = bedflux.simulate(bedform_section(n, kh, kv, d, wavelength, amplitude, phase))
    head, q_up = analytic(r.x.values, r.z.values, kh, kv, d, wavelength, amplitude, phase)
    e_head = float(np.max(np.abs(r["head"].values - head))) / amplitude
    e_flux = float(np.max(np.abs(r.bed_flux.values - q_up))) / float(np.max(np.abs(q_up)))
    return e_head, e_flux


CASES = {
    # kh, kv (m/s), depth d (m) for a 1 m wavelength
    "isotropic": (1e-4, 1e-4, 0.25),            # k d = pi/2, tanh = 0.917
    "anisotropic kh/kv=4": (1e-4, 2.5e-5, 0.2),  # k' d = 0.8 pi
    "anisotropic kh/kv=1/3": (1e-5, 3e-5, 0.4),
}
NS = [32, 64, 128, 256]


@pytest.mark.parametrize("case", list(CASES))
def test_bedform_second_order(case):
    kh, kv, d = CASES[case]
    hs = [1.0 / n for n in NS]
    eh, eq = zip(*(errors(n, kh, kv, d) for n in NS))
    # Elliott & Brooks 1997 field and bed flux; block-centred differences are second order
    assert_converges_at_order(hs, eh, what=f"{case} head")
    assert_converges_at_order(hs, eq, what=f"{case} bed flux")
    assert eh[-1] < 1e-4 and eq[-1] < 1e-4, (eh, eq)  # and small in absolute terms on the finest grid


def graded_errors(n, kh, kv, d, growth32=1.06, wavelength=1.0, amplitude=0.01):
    """Rows growing downward by a factor that tends to 1 as the grid is refined (a smooth map of a
    uniform grid), with the first spacing chosen so that n / 2 rows end exactly on the base:
    dz0 (g^m - 1) / (g - 1) = d."""
    m, g = n // 2, growth32 ** (32.0 / n)
    dz0 = d * (g - 1.0) / (g**m - 1.0)
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, wavelength], "bottom": -d, "dx": wavelength / n, "dz": dz0, "growth": g},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "bed", "kh": kh, "kv": kv}],
        "stream": {"stage": STAGE, "bedform": {"amplitude": amplitude, "wavelength": wavelength}},
        "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}})
    r = bedflux.simulate(s)
    assert r["head"].shape[0] == m
    head, q_up = analytic(r.x.values, r.z.values, kh, kv, d, wavelength, amplitude)
    return (float(np.max(np.abs(r["head"].values - head))) / amplitude,
            float(np.max(np.abs(r.bed_flux.values - q_up))) / float(np.max(np.abs(q_up))))


def test_bedform_second_order_on_graded_rows():
    # Elliott & Brooks 1997 field again, on rows refined toward the bed (growth 1.06 at n = 32)
    hs = [1.0 / n for n in NS]
    eh, eq = zip(*(graded_errors(n, 1e-4, 1e-4, 0.25) for n in NS))
    assert_converges_at_order(hs, eh, what="graded head")
    assert_converges_at_order(hs, eq, what="graded bed flux")


def test_bedform_phase_shifts_the_flux_profile():
    # same analytic solution with cos(kx + phase) (Elliott & Brooks 1997; phase does not change fluxes)
    eh, eq = errors(128, 1e-4, 1e-4, 0.25, phase=0.7)
    assert eh < 2e-4 and eq < 5e-4


def test_bedform_flux_averages_to_zero():
    # a purely periodic head drives no net exchange: the mean of cos(kx) over a period is 0
    r = bedflux.simulate(bedform_section(64, 1e-4, 1e-4, 0.25))
    assert abs(float(r.exchange)) < 1e-10 * float(np.max(np.abs(r.bed_flux)))


# -- harness self-test -----------------------------------------------------------------------

def test_order_check_rejects_first_order_sequence():
    # a deliberately first-order sequence e = C h (1 + small noise) must not pass as second order
    hs = [1 / 32, 1 / 64, 1 / 128, 1 / 256]
    first = [0.3 * h * (1 + 0.01 * (-1) ** i) for i, h in enumerate(hs)]
    with pytest.raises(AssertionError):
        assert_converges_at_order(hs, first)
    # a mixed sequence: second order then stagnating (e.g. a wrong reference) must fail too
    stagnant = [1e-3, 2.5e-4, 1e-4, 9e-5]
    with pytest.raises(AssertionError):
        assert_converges_at_order(hs, stagnant)
    # too few grids cannot show an order
    with pytest.raises(AssertionError):
        assert_converges_at_order(hs[:3], [h**2 for h in hs[:3]])
    # a clean second-order sequence passes
    orders = assert_converges_at_order(hs, [5.0 * h**2 * (1 + h) for h in hs])
    assert np.all(np.abs(orders - 2.0) < 0.05)


def test_model_flux_fails_order_check_against_a_wrong_reference():
    # the harness must be able to fail on real model output: compare with a reference whose
    # tanh(k'd) factor is dropped (the infinite-depth flux) and the order test must reject it
    kh = kv = 1e-4
    d = 0.25
    hs, errs = [], []
    for n in NS:
        r = bedflux.simulate(bedform_section(n, kh, kv, d))
        k = 2.0 * np.pi
        wrong = -kh * k * 0.01 * np.cos(k * r.x.values)
        errs.append(float(np.max(np.abs(r.bed_flux.values - wrong))))
        hs.append(1.0 / n)
    with pytest.raises(AssertionError):
        assert_converges_at_order(hs, errs)


# -- Elliott & Brooks dynamic head amplitude and mean inflow (references.md section 5) --------

@pytest.mark.parametrize("u, height, depth, expected", [
    (0.30, 0.02, 0.10, 1.053008e-3),  # 5.1 [D] on the Elliott & Brooks 1997 formula (via Packman et al. 2000)
    (0.30, 0.05, 0.10, 2.291324e-3),  # 5.4 [D], H/d > 0.34: the 3/2 branch
    (0.50, 0.10, 0.50, 2.925021e-3),  # 5.5 [D]
])
def test_dynamic_head_amplitude_reference_values(u, height, depth, expected):
    # h_m = 0.28 (U^2/2g) (H / 0.34 d)^(3/8 or 3/2) (Elliott & Brooks 1997, [C2] via Packman et al. 2000)
    assert dynamic_head_amplitude(u, height, depth) == pytest.approx(expected, rel=1e-6)


def test_dynamic_head_amplitude_branches_meet_at_034():
    # both branches give 0.28 U^2 / 2g at H/d = 0.34 (references.md section 5, [D]); g = 9.80665 [P]
    u = 0.4
    at = 0.28 * u**2 / (2 * 9.80665)
    assert dynamic_head_amplitude(u, 0.034, 0.1) == pytest.approx(at, rel=1e-9)
    assert dynamic_head_amplitude(u, 0.034 * (1 + 1e-9), 0.1) == pytest.approx(at, rel=1e-7)
    assert dynamic_head_amplitude(u, 0.034 * (1 - 1e-9), 0.1) == pytest.approx(at, rel=1e-7)


def mean_inflow_section(depth_b, n=128):
    """references.md 5.2/5.3: U = 0.3 m/s, H = 0.02 m, stream depth 0.1 m, wavelength 0.2 m,
    K = 1e-3 m/s, bed depth depth_b; the amplitude comes from velocity, height and depth."""
    lam = 0.2
    dz = lam / n
    d = {"grid": {"x": [0.0, lam], "bottom": -depth_b, "dx": lam / n, "dz": dz},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 1e-3, "kv": 1e-3}],
         "stream": {"stage": 0.10, "bedform": {"velocity": 0.30, "height": 0.02, "depth": 0.10,
                                               "wavelength": lam}},
         "sides": {"left": "periodic", "right": "periodic", "bottom": "no-flow"}}
    return bedflux.Scenario.from_dict(d)


@pytest.mark.parametrize("depth_b, expected", [
    (0.05, 9.65768e-6),   # 5.3 [D]
    (0.10, 1.049082e-5),  # 5.3 [D]
    (0.20, 1.053000e-5),  # 5.3 [D]
    (0.60, 1.053008e-5),  # 5.2 [D], d_b -> infinity: tanh(k 0.6) = 1 - 8e-17
])
def test_mean_inflow_matches_reference(depth_b, expected):
    # q_bar = average over the whole bed of the inflow (downward) part of the bed flux
    #       = K k h_m tanh(k d_b) / pi   (references.md 5.2/5.3 [D]; the 1/pi factor is the mean of
    #         max(0, cos) over a period; Elliott & Brooks 1997's own definition is unconfirmed)
    k = 2 * np.pi / 0.2
    h_m = dynamic_head_amplitude(0.30, 0.02, 0.10)
    assert 1e-3 * k * h_m * np.tanh(k * depth_b) / np.pi == pytest.approx(expected, rel=1e-6)  # table vs formula
    r = bedflux.simulate(mean_inflow_section(depth_b))
    q_up = r.bed_flux.values
    q_bar = float(np.mean(np.maximum(0.0, -q_up)))
    # tolerance from the second-order error at dx = lam/128: (k dx)^2 / 12 = 2e-4 for the flux,
    # plus the sampled positive-part mean, ~ (pi/128)^2 / 6 = 1e-4; allow 2e-3
    assert q_bar == pytest.approx(expected, rel=2e-3)
