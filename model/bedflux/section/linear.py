"""Sparse SPD solves: a direct factorization that can be reused, or AMG-preconditioned CG.

The choice is made by size: a direct factorization (SuperLU, symmetric mode, minimum-degree
ordering on A^T + A) for small systems and whenever the factor will be reused (transient runs,
sensitivities); conjugate gradients preconditioned by a Ruge-Stuben algebraic multigrid
hierarchy (pyamg) for a large single solve. CG is accepted on its true residual.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from bedflux.errors import SolverError

#: Above this many unknowns a single solve uses AMG-preconditioned CG.
DIRECT_LIMIT = 100_000
#: Right-hand sides per back-substitution call.
SOLVE_BLOCK = 16
#: Relative true-residual tolerance accepted from CG (double precision reaches a few 1e-10 at best).
CG_TOLERANCE = 1e-9


def choose_method(n: int, reuse: bool) -> str:
    """``"direct"`` or ``"amg-cg"`` for ``n`` unknowns."""
    return "direct" if reuse or n <= DIRECT_LIMIT else "amg-cg"


@dataclass
class Factor:
    """A factorized SPD matrix; ``solve(b)`` reuses it."""

    method: str
    matrix: sp.csr_matrix
    _lu: object = None
    _amg: object = None

    def solve(self, b: np.ndarray) -> np.ndarray:
        """Solve ``A x = b`` (``b`` may be ``(n,)`` or ``(n, k)``)."""
        if self.method == "direct":
            if b.ndim == 2 and b.shape[1] > SOLVE_BLOCK:
                # SuperLU's multi-column solve slows down sharply for wide blocks; go in blocks
                return np.column_stack([self._lu.solve(np.ascontiguousarray(b[:, i:i + SOLVE_BLOCK]))
                                        for i in range(0, b.shape[1], SOLVE_BLOCK)])
            return self._lu.solve(b)
        if b.ndim == 2:
            return np.column_stack([self.solve(b[:, j]) for j in range(b.shape[1])])
        return _cg(self.matrix, b, self._amg)


def factorize(A: sp.spmatrix, method: str = "direct") -> Factor:
    """Factorize ``A`` by ``method`` (``"direct"`` or ``"amg-cg"``)."""
    if not isinstance(A, sp.csr_matrix):
        A = sp.csr_matrix(A)
    if method == "direct":
        try:
            lu = spla.splu(A.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                           options={"SymmetricMode": True})
        except RuntimeError as err:
            raise SolverError(f"the system matrix is singular ({err}); is a head fixed somewhere?") from None
        return Factor("direct", A, _lu=lu)
    if method == "amg-cg":
        import pyamg

        # the hierarchy in single precision: a preconditioner only has to approximate A^-1, and
        # CG (double precision, accepted on its true residual) corrects the rest; it halves the
        # hierarchy's memory and speeds its cycles
        single = sp.csr_matrix((A.data.astype(np.float32), A.indices, A.indptr), shape=A.shape, copy=False)
        ml = pyamg.ruge_stuben_solver(single)
        cycle = ml.aspreconditioner(cycle="V")
        M = spla.LinearOperator(A.shape, matvec=lambda x: cycle @ x.astype(np.float32), dtype=np.float64)
        return Factor("amg-cg", A, _amg=M)
    raise ValueError(f"unknown solver method {method!r}")


def _cg(A: sp.csr_matrix, b: np.ndarray, M) -> np.ndarray:
    bnorm = np.linalg.norm(b)
    if bnorm == 0.0:
        return np.zeros_like(b)
    x = np.zeros_like(b)
    for _ in range(3):
        r = b - A @ x
        dx, info = spla.cg(A, r, rtol=CG_TOLERANCE * 0.1 * bnorm / max(np.linalg.norm(r), 1e-300),
                           atol=0.0, M=M, maxiter=500)
        x = x + dx
        true = np.linalg.norm(b - A @ x) / bnorm
        if true <= CG_TOLERANCE:
            return x
    raise SolverError(f"AMG-preconditioned CG stalled at a relative residual of {true:.2e} "
                      f"(needs {CG_TOLERANCE:g}); use the direct solver")
