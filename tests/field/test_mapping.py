"""Kriged bed flux map and reach total."""
import numpy as np
import pytest
from pykrige.ok import OrdinaryKriging

from bedflux.field import krige_bed_flux


@pytest.fixture
def meters():
    rng = np.random.default_rng(7)
    x = np.repeat([10.0, 40.0, 70.0, 100.0], 4) + rng.uniform(-2, 2, 16)
    y = np.tile([1.0, 3.0, 5.0, 7.0], 4) + rng.uniform(-0.3, 0.3, 16)
    q = (1.0 + 0.01 * x + 0.3 * np.sin(y)) * 1e-6 + 1e-7 * rng.normal(size=16)
    return x, y, q


def test_block_mean_is_mean_of_point_kriging(meters):
    # Kriging is linear in the data, so the block-kriged mean of the rectangle equals the mean of
    # the point-kriged grid on the same nodes (Journel & Huijbregts 1978, block kriging; common practice).
    # The point grid is computed here with pykrige directly.
    x, y, q = meters
    bed = krige_bed_flux(x, y, q)
    scale = np.std(q)
    ok = OrdinaryKriging(x, y, q / scale, variogram_model="spherical", nlags=6)
    grid, _ = ok.execute("grid", bed.x, bed.y)
    assert bed.mean_flux == pytest.approx(float(np.mean(grid)) * scale, rel=1e-8)
    np.testing.assert_allclose(bed.flux, np.asarray(grid) * scale, rtol=1e-10)


def test_total_and_interval(meters):
    x, y, q = meters
    bed = krige_bed_flux(x, y, q)
    assert bed.area == pytest.approx(np.ptp(x) * np.ptp(y))
    lo, hi = bed.total_interval
    assert lo < bed.total < hi
    # The block variance of a mean is below the sill plus nugget of the fitted variogram
    # (ordinary block kriging; a block mean is better known than a point).
    assert bed.mean_sigma**2 < bed.variogram["sill [(m/s)^2]"] + bed.variogram["nugget [(m/s)^2]"]
    # The total lies within the data range times the area (kriging weights sum to one).
    assert q.min() * bed.area * 0.5 < bed.total < q.max() * bed.area * 1.5


def test_too_few_meters():
    with pytest.raises(ValueError):
        krige_bed_flux([0, 1, 2], [0, 1, 0], [1e-6, 2e-6, 3e-6])


def test_equal_fluxes_cannot_be_fitted():
    with pytest.raises(ValueError):
        krige_bed_flux([0, 10, 20, 30, 40], [0, 1, 0, 1, 0], [1e-6] * 5)
