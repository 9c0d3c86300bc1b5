"""Where paths start: on the submerged bed where stream water enters it, one path per equal share
of the inflow.

The downwelling flow of a column (m^2/s per metre of channel) is its bed flux, where negative,
times its wetted width, spread evenly across the column's top face (its flux is uniform there in
the discrete model). Paths are put at the midpoints of ``n`` equal shares of the cumulative
inflow along the section, so each carries ``total / n`` (its *weight*, m^2/s), and the flux-weighted
residence time distribution is the plain distribution over paths. Refining the release (a larger
``n``) converges it like a midpoint rule over the inflow; docs/verification.md shows the rate.
"""
from __future__ import annotations

import numpy as np


def downwelling_flow(bed_flux: np.ndarray, wetted_fraction: np.ndarray, dx: np.ndarray) -> np.ndarray:
    """Stream water entering the bed through each column (m^2/s, >= 0): ``max(-bed_flux, 0)``
    times the wetted width (0 where the column is dry)."""
    q = np.nan_to_num(np.asarray(bed_flux, dtype=float), nan=0.0)
    return np.maximum(-q, 0.0) * np.asarray(wetted_fraction, dtype=float) * dx


def release_points(inflow: np.ndarray, x_edges: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``n`` release points at equal shares of the inflow: their x (m), column and weight (m^2/s).

    ``inflow`` is the downwelling flow of each column (:func:`downwelling_flow`); nothing is
    released (empty arrays) when it is zero everywhere or ``n`` is 0.
    """
    total = float(inflow.sum())
    if n <= 0 or not total > 0.0:
        empty = np.zeros(0)
        return empty, np.zeros(0, dtype=np.int64), empty
    cumulative = np.concatenate([[0.0], np.cumsum(inflow)])
    share = (np.arange(n) + 0.5) * total / n
    col = np.clip(np.searchsorted(cumulative, share, side="right") - 1, 0, inflow.size - 1)
    # columns with no inflow have zero-length steps in the cumulative flow and are never chosen
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.clip((share - cumulative[col]) / inflow[col], 0.0, 1.0)
    x = x_edges[col] + np.nan_to_num(frac) * (x_edges[col + 1] - x_edges[col])
    return x, col, np.full(n, total / n)


def path_count(per_metre: float, submerged_length: float) -> int:
    """Number of paths for ``per_metre`` paths per metre of submerged bed (at least one)."""
    return max(1, int(round(per_metre * submerged_length)))
