"""Distributions of uncertain values, optionally truncated, drawn by the inverse of their CDF.

``lognormal``: log10 of the value is normal with the log10 of ``median`` as mean and ``sd_log10``
(decades) as standard deviation; ``normal``: ``mean`` and ``sd``; ``uniform``: ``min`` to ``max``;
``triangular``: ``min``, ``mode``, ``max``. Any of them may be cut to ``low``..``high``: a draw is
``ppf(F(low) + u (F(high) - F(low)))`` with ``u`` uniform on [0, 1), so one uniform number makes
one value and the same seed gives the same value on any machine.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property
from typing import Any, Mapping

import numpy as np
from scipy import stats

from bedflux.errors import InputError
from bedflux.scenario import checks

#: distribution -> the keys that define it
KINDS: dict[str, tuple[str, ...]] = {
    "lognormal": ("median", "sd_log10"),
    "normal": ("mean", "sd"),
    "uniform": ("min", "max"),
    "triangular": ("min", "mode", "max"),
}
#: keys without a unit
_PLAIN = {"sd_log10"}


@dataclass(frozen=True)
class Distribution:
    """A distribution of one value (SI), with its truncation."""

    kind: str
    params: tuple[tuple[str, float], ...]
    low: float = -math.inf
    high: float = math.inf

    @cached_property
    def frozen(self):
        """The scipy distribution (before truncation)."""
        p = dict(self.params)
        if self.kind == "lognormal":
            return stats.lognorm(s=p["sd_log10"] * math.log(10.0), scale=p["median"])
        if self.kind == "normal":
            return stats.norm(loc=p["mean"], scale=p["sd"])
        if self.kind == "uniform":
            return stats.uniform(loc=p["min"], scale=p["max"] - p["min"])
        width = p["max"] - p["min"]
        return stats.triang(c=(p["mode"] - p["min"]) / width, loc=p["min"], scale=width)

    @cached_property
    def _bounds(self) -> tuple[float, float]:
        d = self.frozen
        return float(d.cdf(self.low)), float(d.cdf(self.high))

    def cdf_bounds(self) -> tuple[float, float]:
        """CDF at the truncation limits."""
        return self._bounds

    def from_uniform(self, u: float | np.ndarray) -> float | np.ndarray:
        """The value at the uniform number ``u`` (in [0, 1))."""
        a, b = self.cdf_bounds()
        return self.frozen.ppf(a + np.asarray(u) * (b - a))

    def draw(self, rng: np.random.Generator) -> float:
        """One value from one uniform number of ``rng``."""
        return float(self.from_uniform(rng.random()))

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """CDF of the truncated distribution (for goodness-of-fit checks)."""
        a, b = self.cdf_bounds()
        return np.clip((self.frozen.cdf(x) - a) / (b - a), 0.0, 1.0)

    def centre(self) -> float:
        """The median of the truncated distribution."""
        return float(self.from_uniform(0.5))


def parse_distribution(entry: Mapping[str, Any], where: str, dimension: str) -> Distribution:
    """A distribution from an ``[[uncertain]]`` table (values with units of ``dimension``).

    Raises
    ------
    InputError
        Naming ``where``: an unknown distribution, a missing or extra key, a spread that is not
        positive, limits in the wrong order, a truncation that leaves no probability.
    """
    kind = checks.choice(dict(entry), "distribution", list(KINDS), where)
    allowed = ["path", "distribution", *KINDS[kind], "low", "high"]
    checks.reject_unknown(entry, allowed, where=where)
    values = {}
    for key in KINDS[kind]:
        if key not in entry:
            raise InputError(f"a {kind} distribution needs {', '.join(KINDS[kind])}; {key} is missing",
                             where=where)
        values[key] = (checks.number(entry, key, where) if key in _PLAIN
                       else checks.quantity(entry, key, dimension, where))
    low = checks.quantity(entry, "low", dimension, where, default=-math.inf)
    high = checks.quantity(entry, "high", dimension, where, default=math.inf)
    _check(kind, values, low, high, where)
    dist = Distribution(kind, tuple(values.items()), low, high)
    a, b = dist.cdf_bounds()
    if not b - a > 1e-12:
        raise InputError(f"low = {low:g} and high = {high:g} leave no probability of this {kind} distribution; "
                         "widen them or move the distribution between them", where=where)
    return dist


def _check(kind: str, v: dict[str, float], low: float, high: float, where: str) -> None:
    if kind == "lognormal":
        if v["median"] <= 0:
            raise InputError(f"median = {v['median']:g} must be positive (a log-normal value is)", where=where)
        if not v["sd_log10"] > 0 or v["sd_log10"] > 3:
            raise InputError(f"sd_log10 = {v['sd_log10']:g} must lie in (0, 3] decades", where=where)
    if kind == "normal" and not v["sd"] > 0:
        raise InputError(f"sd = {v['sd']:g} must be positive", where=where)
    if kind in ("uniform", "triangular") and not v["min"] < v["max"]:
        raise InputError(f"min = {v['min']:g} must be below max = {v['max']:g}", where=where)
    if kind == "triangular" and not v["min"] <= v["mode"] <= v["max"]:
        raise InputError(f"mode = {v['mode']:g} must lie between min = {v['min']:g} and max = {v['max']:g}",
                         where=where)
    if not low < high:
        raise InputError(f"low = {low:g} must be below high = {high:g}", where=where)
