"""Repeat statistics and robust outliers."""
import numpy as np
import pytest
from scipy import stats

from bedflux.field import modified_z, robust_outliers, repeat_statistics

SAMPLE = np.array([12, 15, 14, 13, 40, 16, 11], dtype=float)  # cm/d, issue 4


def test_only_40_is_an_outlier():
    # Iglewicz & Hoaglin (1993): modified z = 0.6745 (x - median) / MAD, outlier when > 3.5.
    # Median 14, MAD 2 (references 11.1); 0.6745 * 26 / 2 = 8.77 for the 40. Their 0.6745 is the
    # 0.75 quantile of the standard normal rounded to four places; the code uses the exact quantile.
    np.testing.assert_array_equal(robust_outliers(SAMPLE), SAMPLE == 40)
    assert modified_z(SAMPLE)[4] == pytest.approx(stats.norm.ppf(0.75) * 26 / 2, rel=1e-12)
    assert modified_z(SAMPLE)[4] == pytest.approx(0.6745 * 26 / 2, abs=0.5e-4 * 26 / 2)


def test_interval_of_the_rest():
    # Issue 4 / references 11.2: the rest have mean 13.5 and a t-based 95 % half-width of 1.963
    # (t with 5 degrees of freedom from scipy; s with n - 1 from numpy).
    rest = SAMPLE[SAMPLE != 40]
    s = repeat_statistics(rest)
    t5 = stats.t.ppf(0.975, 5)
    assert s.n == 6
    assert s.mean == pytest.approx(13.5, rel=1e-12)
    assert s.half_width == pytest.approx(1.963314, rel=1e-6)
    assert s.half_width == pytest.approx(t5 * np.std(rest, ddof=1) / np.sqrt(6), rel=1e-12)
    assert s.cv == pytest.approx(0.138580, rel=1e-5)


def test_all_seven():
    # References 11.3: mean 17.285714, s 10.160615, CV 0.587804.
    s = repeat_statistics(SAMPLE)
    assert (s.mean, s.std, s.cv) == pytest.approx((17.285714, 10.160615, 0.587804), rel=1e-6)
    assert s.stderr == pytest.approx(10.160615 / np.sqrt(7), rel=1e-6)


def test_single_value_has_no_spread():
    s = repeat_statistics(np.array([3.0]))
    assert s.n == 1 and np.isnan(s.std) and np.isnan(s.half_width)


def test_equal_values_give_no_outlier():
    # MAD = 0: the modified z is undefined; nothing is called an outlier.
    assert not robust_outliers(np.array([5.0, 5.0, 5.0, 9.0])).any()
