"""Linear (first-order) Bayesian data worth and greedy selection of instruments.

With a Gaussian prior on the parameters (estimation space, covariance ``C0``) and candidate data
``d_i = j_i . m + e_i`` with independent errors of standard deviation ``sigma_i``, the posterior
covariance after observing a set S is

    C_S = (C0^-1 + sum_{i in S} j_i j_i^T / sigma_i^2)^-1

and adding one datum updates it by the rank-one formula (Sherman-Morrison)

    C' = C - (C j)(C j)^T / (sigma^2 + j^T C j).

The expected posterior variance of a target with sensitivity ``g`` (a parameter: a unit vector;
a prediction: its gradient) is ``g^T C g``; D-optimal selection maximises ``log det C^-1``, whose
increase for one datum is ``log(1 + j^T C j / sigma^2)`` (matrix determinant lemma).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def posterior(C0: np.ndarray, J: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """Posterior covariance of the parameters after data with sensitivities ``J`` (rows).

    In the gain form ``C0 - C0 J^T (J C0 J^T + R)^-1 J C0`` (R = diag(sigma^2)), which stays
    accurate when the data are far more informative than the prior (no inverse of ``C0``).
    """
    if J.size == 0:
        return C0.copy()
    CJt = C0 @ J.T
    S = J @ CJt + np.diag(sigma**2)
    C = C0 - CJt @ np.linalg.solve(S, CJt.T)
    return 0.5 * (C + C.T)


def add_one(C: np.ndarray, j: np.ndarray, sigma: float) -> np.ndarray:
    """Rank-one update of the covariance for one more datum."""
    Cj = C @ j
    return C - np.outer(Cj, Cj) / (sigma**2 + j @ Cj)


def target_spread(C: np.ndarray, g: np.ndarray | None) -> float:
    """Expected posterior spread: ``sqrt(g^T C g)``, or for D-optimal (``g`` None) the geometric
    mean standard deviation ``det(C)^(1/(2P))``."""
    if g is None:
        sign, logdet = np.linalg.slogdet(C)
        return float(np.exp(logdet / (2 * C.shape[0])))
    return float(np.sqrt(max(g @ C @ g, 0.0)))


@dataclass
class Pick:
    """One selected instrument: its candidate index and the spread before and after it."""

    index: int
    before: float
    after: float

    @property
    def reduction(self) -> float:
        """Fractional reduction of the target's spread that this pick brings."""
        return 0.0 if self.before == 0 else (self.before - self.after) / self.before


def greedy(C0: np.ndarray, J: np.ndarray, sigma: np.ndarray, n: int, g: np.ndarray | None = None,
           allowed=None) -> list[Pick]:
    """Choose ``n`` candidates one at a time, each the largest expected reduction of the target.

    Parameters
    ----------
    C0
        Covariance before any pick (prior and instruments kept).
    J, sigma
        Sensitivities (rows) and error spreads of the candidates.
    g
        Target gradient (None: D-optimal).
    allowed
        ``allowed(index, picked_indices) -> bool`` for spacing and per-transect limits.
    """
    C = C0.copy()
    picks: list[Pick] = []
    chosen: list[int] = []
    for _ in range(n):
        before = target_spread(C, g)
        CJ = J @ C  # rows: (C j_i)^T
        denom = sigma**2 + np.einsum("ij,ij->i", CJ, J)
        if g is None:
            score = np.log1p(np.einsum("ij,ij->i", CJ, J) / sigma**2)
        else:
            score = (CJ @ g) ** 2 / denom
        order = np.argsort(-score, kind="stable")
        pick = None
        for i in order:
            if i in chosen:
                continue
            if allowed is None or allowed(int(i), chosen):
                pick = int(i)
                break
        if pick is None:
            break
        C = add_one(C, J[pick], sigma[pick])
        chosen.append(pick)
        picks.append(Pick(pick, before, target_spread(C, g)))
    return picks
