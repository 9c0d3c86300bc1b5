"""Random fields: the generated log10 conductivity has the requested mean, spread and
correlation, and a zone multiplier enters the model as Darcy's law says.

Sources: the exponential covariance C(r) = s^2 exp(-r / l) and the Gaussian C(r) = s^2 exp(-(r / l)^2)
with the length scale l as GSTools defines them (Mueller, Schueler, Zech, Attinger & Heße 2022,
Geosci. Model Dev. 15, 3161, and the GSTools model docs; the exponential form also in Gelhar 1993,
Stochastic Subsurface Hydrology, eq. 2.6.7, from memory); simple kriging with one datum
(Journel & Huijbregts 1978, Mining Geostatistics, from memory); the sampling error of a mean (s / sqrt(n)),
of a variance (s^2 sqrt(2 / (n - 1)) for normal samples) and of a correlation coefficient
((1 - rho^2) / sqrt(n), Fisher 1915) - textbook statistics; Darcy's law for layers in series
(Freeze & Cherry 1979, ch. 2).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

import bedflux
from bedflux.section.grid import build_grid
from bedflux.ensembles.fields import parse_field

from ensemble_columns import BED_THICKNESS, BOTTOM_HEAD, DZ, SAND_KV, SAND_THICKNESS, STAGE, column

FIELDS = 200      # independent fields (seeds)
SD_LOG10 = 0.5
ALONG, ACROSS = 2.0, 0.2  # m
#: a check passes within this many standard errors (two-sided, about 1 in 10^4 for a normal error)
Z = 4.0


def section():
    """A flat 3 m x 1 m section (12 columns); the bed zone is the top 0.6 m (12 rows)."""
    d = {"grid": {"x": [0.0, 3.0], "bottom": -1.0, "dx": 0.25, "dz": 0.05},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 1e-4, "kv": 1e-4},
                  {"name": "bed", "kh": 1e-5, "kv": 1e-5, "depth": 0.6}],
         "stream": {"stage": 0.3}, "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": 0.5}}}
    return bedflux.Scenario.from_dict(d)


def log10_fields(model: str):
    s = section()
    grid = build_grid(s)
    rf = parse_field({"zone": "bed", "property": "kv", "sd_log10": SD_LOG10, "along": ALONG, "across": ACROSS,
                      "model": model}, "test", s.zone_names())
    return grid, np.stack([np.log10(rf.multipliers(grid, seed)["bed.kv"]) for seed in range(FIELDS)])


def lag_correlation(f: np.ndarray, axis: int, lag: int) -> tuple[float, int]:
    """Correlation of values ``lag`` cells apart along ``axis``, over one pair per field."""
    a = np.take(f, 0, axis=axis + 1)
    b = np.take(f, lag, axis=axis + 1)
    a, b = a[:, a.shape[1] // 2], b[:, b.shape[1] // 2]  # one pair per field: independent samples
    return float(np.corrcoef(a, b)[0, 1]), a.size


@pytest.mark.parametrize("model, at_l, at_half_l", [
    ("exponential", math.exp(-1.0), math.exp(-0.5)),
    pytest.param("gaussian", math.exp(-1.0), math.exp(-0.25), marks=pytest.mark.slow)])
def test_mean_spread_and_correlation_lengths(model, at_l, at_half_l):
    grid, f = log10_fields(model)
    # one cell per field is an independent sample of the marginal distribution
    v = f[:, 3, 6]
    assert abs(v.mean()) < Z * SD_LOG10 / math.sqrt(FIELDS)
    assert abs(v.var(ddof=1) - SD_LOG10**2) < Z * SD_LOG10**2 * math.sqrt(2.0 / (FIELDS - 1))
    # along the layering: cells ALONG and ALONG / 2 apart (dx = 0.25 m)
    for lag_m, rho in ((ALONG, at_l), (ALONG / 2, at_half_l)):
        r, n = lag_correlation(f[:, 3:4, :], axis=1, lag=round(lag_m / 0.25))
        assert abs(r - rho) < Z * (1 - rho**2) / math.sqrt(n), (lag_m, r, rho)
    # across it: cells ACROSS apart (dz = 0.05 m, uniform: no growth)
    r, n = lag_correlation(f[:, :, 6:7].transpose(0, 2, 1), axis=1, lag=round(ACROSS / 0.05))
    assert abs(r - at_l) < Z * (1 - at_l**2) / math.sqrt(n)
    # and the test can fail: at the correlation length across, the field is far less correlated
    # along x than across (l along = 10 l across)
    r_short, _ = lag_correlation(f[:, 3:4, :], axis=1, lag=round(ACROSS / 0.25) or 1)
    assert r_short > at_l + 0.2


def test_zone_multiplier_is_darcy_in_series():
    # a column whose bed cells carry multipliers m_i: the bed is layers in series with K_i = m_i K_bed
    # (Freeze & Cherry 1979, ch. 2): q = dh / (sum dz / (m_i K_bed) + b_sand / K_sand)
    kv = 1e-6
    s = column(kv)
    grid = build_grid(s)
    rng = np.random.default_rng(3)
    m = 10.0 ** rng.normal(0.0, 0.5, (grid.nz, grid.nx))
    ds = bedflux.simulate(s, fields={"bed.kv": m})
    in_bed = grid.zc > -BED_THICKNESS
    assert in_bed.sum() == round(BED_THICKNESS / DZ)
    resistance = float(np.sum(DZ / (m[in_bed, 0] * kv)))
    q = (BOTTOM_HEAD - STAGE) / (resistance + SAND_THICKNESS / SAND_KV)
    assert float(ds["bed_flux"][0]) == pytest.approx(q, rel=1e-10)
    # the sand (multiplier 1 there) is untouched, and the median bed (all m = 1) is the zone's value
    assert float(bedflux.simulate(s, fields={"bed.kv": np.ones_like(m)})["bed_flux"][0]) == pytest.approx(
        (BOTTOM_HEAD - STAGE) / (BED_THICKNESS / kv + SAND_THICKNESS / SAND_KV), rel=1e-10)


@pytest.mark.slow
def test_conditioned_field_honours_the_data_and_simple_kriging():
    # one measured value: every member passes through it, and a cell at lag h along the layering
    # has the simple-kriging mean rho(h) z_d and variance 1 - rho(h)^2 (in units of the field:
    # Journel & Huijbregts 1978, Mining Geostatistics, simple kriging with one datum, from memory)
    s = section()
    grid = build_grid(s)
    j0, row = 2, 3
    x0, depth0 = float(grid.xc[j0]), float(grid.ground[j0] - grid.z_centre[row, j0])
    median, k_data = 1e-5, 1e-5 * 10 ** 0.6  # z_d = 0.6 / SD_LOG10 = 1.2
    rf = parse_field({"zone": "bed", "property": "kv", "sd_log10": SD_LOG10, "along": ALONG, "across": ACROSS,
                      "condition": [{"x": x0, "depth": depth0, "k": k_data}]}, "test", s.zone_names())
    f = np.stack([np.log10(rf.multipliers(grid, seed, median)["bed.kv"]) for seed in range(FIELDS)]) / SD_LOG10
    np.testing.assert_allclose(f[:, row, j0], 0.6 / SD_LOG10, rtol=1e-6)
    z_d = 0.6 / SD_LOG10
    for lag_m in (ALONG / 2, ALONG):
        rho = math.exp(-lag_m / ALONG)
        v = f[:, row, j0 + round(lag_m / 0.25)]
        var = 1 - rho**2
        assert abs(v.mean() - rho * z_d) < Z * math.sqrt(var / FIELDS), (lag_m, v.mean(), rho * z_d)
        assert abs(v.var(ddof=1) - var) < Z * var * math.sqrt(2.0 / (FIELDS - 1)), (lag_m, v.var(), var)
