"""Flux-weighted statistics of a set of paths: residence time quantiles, depth, where water goes.

A path that has not left within the horizon has an unknown residence time longer than the time
it was tracked; it counts as +inf in the quantiles (a quantile that falls among such paths is
inf: "longer than the horizon") and is left out of the mean, whose share of the weight is
reported beside it (``not_out_fraction``).
"""
from __future__ import annotations

import numpy as np

#: Quantiles of the residence time reported with every set of paths (per cent).
QUANTILES = (10, 25, 50, 75, 90)


def weighted_quantile(values: np.ndarray, weights: np.ndarray, q: float) -> float:
    """The ``q`` quantile (0..1) of ``values`` weighted by ``weights``: the value where the
    cumulative weight, counted to the middle of each value's weight, reaches ``q`` of the total
    (linear between neighbours; the end values outside the first and last middles). NaN when the
    weights sum to 0; inf when it falls among infinite values."""
    values = np.asarray(values, dtype=float)
    weights = np.asarray(weights, dtype=float)
    total = weights.sum()
    if values.size == 0 or not total > 0.0:
        return float("nan")
    order = np.argsort(values, kind="stable")
    v, w = values[order], weights[order]
    mid = (np.cumsum(w) - 0.5 * w) / total
    i = int(np.searchsorted(mid, q))
    if i == 0:
        return float(v[0])
    if i >= v.size:
        return float(v[-1])
    if not np.isfinite(v[i]):
        return float("inf")
    f = (q - mid[i - 1]) / (mid[i] - mid[i - 1]) if mid[i] > mid[i - 1] else 1.0
    return float(v[i - 1] + f * (v[i] - v[i - 1]))


def residence_statistics(residence_time: np.ndarray, weight: np.ndarray, left: np.ndarray) -> dict[str, float]:
    """``median_residence_time``, ``mean_residence_time`` (of the paths that left),
    ``residence_time_qNN`` for :data:`QUANTILES` and ``not_out_fraction`` (all flux-weighted, s)."""
    t = np.where(left, residence_time, np.inf)
    total = float(weight.sum())
    out = {f"residence_time_q{q:02d}": weighted_quantile(t, weight, q / 100.0) for q in QUANTILES}
    out["median_residence_time"] = out["residence_time_q50"]
    w_left = float(weight[left].sum())
    out["mean_residence_time"] = float(np.sum(weight[left] * residence_time[left]) / w_left) if w_left > 0 else float("nan")
    out["not_out_fraction"] = 1.0 - w_left / total if total > 0 else float("nan")
    return out
