"""Statistics of repeated field readings: mean, spread, t interval, robust outliers."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats as _st

#: Modified z-score above which a value is a robust outlier (Iglewicz & Hoaglin 1993).
MODIFIED_Z_LIMIT = 3.5


@dataclass(frozen=True)
class Summary:
    """Repeat statistics of one set of values (SI)."""

    n: int
    mean: float
    std: float
    cv: float
    stderr: float
    half_width: float

    @property
    def low(self) -> float:
        """Lower end of the 95 % interval of the mean."""
        return self.mean - self.half_width

    @property
    def high(self) -> float:
        """Upper end of the 95 % interval of the mean."""
        return self.mean + self.half_width

    def columns(self, unit: str) -> dict[str, float]:
        """The statistics as table columns whose headers carry ``unit`` (``mean [m/s]`` ...)."""
        return {"n": self.n, f"mean [{unit}]": self.mean, f"std [{unit}]": self.std, "cv [1]": self.cv,
                f"stderr [{unit}]": self.stderr, f"ci95_low [{unit}]": self.low, f"ci95_high [{unit}]": self.high}


@dataclass(frozen=True)
class BetweenTerm:
    """A between-instrument term: the scatter of one instrument's value about its neighbours'.

    Attributes
    ----------
    value
        The standard deviation (relative, or of ln K, as its user documents).
    source
        ``"estimated"`` from the campaign's own instruments, or ``"default"``.
    dof
        Degrees of freedom the campaign offered for the estimate.
    """

    value: float
    source: str
    dof: int


def repeat_statistics(values: np.ndarray, level: float = 0.95) -> Summary:
    """n, mean, sample standard deviation, coefficient of variation, standard error, t interval.

    Parameters
    ----------
    values
        The repeat values; NaN entries are ignored.
    level
        Confidence level of the two-sided t interval of the mean.

    Returns
    -------
    Summary
        ``std``, ``cv``, ``stderr`` and ``half_width`` are NaN for fewer than two values; ``cv``
        is ``std / |mean|`` (NaN for a zero mean).
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    n = int(v.size)
    if n == 0:
        return Summary(0, np.nan, np.nan, np.nan, np.nan, np.nan)
    mean = float(v.mean())
    if n < 2:
        return Summary(n, mean, np.nan, np.nan, np.nan, np.nan)
    std = float(v.std(ddof=1))
    se = std / np.sqrt(n)
    cv = std / abs(mean) if mean != 0 else np.nan
    half = float(_st.t.ppf(0.5 + level / 2, n - 1) * se)
    return Summary(n, mean, std, cv, float(se), half)


def modified_z(values: np.ndarray) -> np.ndarray:
    """Modified z-scores (x - median) / (MAD / 0.6745) (Iglewicz & Hoaglin 1993).

    The MAD is scaled to a standard deviation of normal data by scipy's
    ``median_abs_deviation(scale="normal")``, which divides by the exact 0.75 quantile of the
    standard normal (0.674490; Iglewicz & Hoaglin print it rounded to 0.6745). Returns zeros
    when the MAD is zero (more than half the values equal), where the score is undefined and no
    value is called an outlier.
    """
    v = np.asarray(values, dtype=float)
    sd = _st.median_abs_deviation(v, scale="normal")
    if sd == 0:
        return np.zeros_like(v)
    return (v - np.median(v)) / sd


def robust_outliers(values: np.ndarray, limit: float = MODIFIED_Z_LIMIT) -> np.ndarray:
    """Boolean mask of values whose |modified z| exceeds ``limit``; none for fewer than 3 values."""
    v = np.asarray(values, dtype=float)
    if v.size < 3:
        return np.zeros(v.size, dtype=bool)
    return np.abs(modified_z(v)) > limit
