"""The nonlinear iteration of one Richards step: Newton with a backtracking line search, or
modified Picard, and the linear solves of their (non-symmetric) Jacobians.

Each iteration solves ``J d = -F``. Newton moves along ``d`` by the largest of 1, 1/2, 1/4, ...
that lowers ``|F|`` by the Armijo rule (``|F(psi + l d)| <= (1 - 1e-4 l) |F(psi)|``, Dennis &
Schnabel 1983, sec. 6.3); modified Picard takes the full step. The iteration stops when the
sum of the absolute cell residuals is below ``tolerance`` times the throughput of the step (the sum of the absolute boundary flows,
uptake and storage changes), or when a Newton step leaves 90 % of the residual while it is
within 100 times that or at the round-off of the heads psi + z (large sections, heads of tens of
metres, no flow at all): the water budget then closes to that fraction.

Linear solves: the Newton Jacobian is not symmetric (upstream Kr), so the direct solver is
SuperLU with minimum-degree ordering on A^T + A (the matrix is structurally symmetric) and
diagonal pivots, which the diagonally dominant Jacobians allow; the residual of that solve is
checked and a factorization with threshold partial pivoting replaces it when it is poor. Above
:data:`bedflux.section.linear.DIRECT_LIMIT` unknowns GMRES preconditioned by a Ruge-Stuben
algebraic multigrid hierarchy (pyamg) built on the first Jacobian of the step and kept for the
step's other iterations.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from bedflux.errors import SolverError
from bedflux.section.linear import DIRECT_LIMIT
from bedflux.section.richards import Evaluation, RichardsSystem, Storage, StepForcing

NEWTON = "newton"
PICARD = "picard"
#: Iterations allowed per step before the step is cut.
MAX_ITERATIONS = 20
#: Sum of absolute cell residuals allowed, relative to the step's throughput.
TOLERANCE = 1e-10
#: A Newton step that leaves more than this fraction of the residual makes no progress.
STALL = 0.9
#: Halvings of the step length tried by the line search.
LINE_SEARCH_HALVINGS = 6
#: Relative residual accepted from the diagonal-pivot factorization before partial pivoting is used.
DIRECT_CHECK = 1e-10
#: Relative residual accepted from preconditioned GMRES.
GMRES_TOLERANCE = 1e-9


class JacobianSolver:
    """Factorizes the successive Jacobians of a run; counts factorizations and solves.

    ``method`` is ``"direct"``, ``"amg-gmres"`` or ``"auto"`` (by size).
    """

    def __init__(self, n: int, method: str = "auto"):
        if method == "auto":
            method = "direct" if n <= DIRECT_LIMIT else "amg-gmres"
        if method not in ("direct", "amg-gmres"):
            raise ValueError(f"unknown Jacobian solver {method!r}")
        self.method = method
        self.factorizations = 0
        self.solves = 0

    def factor(self, J: sp.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        """A solver of ``J d = b`` for this Jacobian."""
        self.factorizations += 1
        if self.method == "direct":
            return self._direct(J)
        return self._gmres(J)

    def _direct(self, J: sp.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        A = J.tocsc()
        try:
            lu = spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
        except RuntimeError:
            lu = None
        pivoted = None

        def solve(b: np.ndarray) -> np.ndarray:
            nonlocal lu, pivoted
            self.solves += 1
            if lu is not None:
                x = lu.solve(b)
                if np.linalg.norm(J @ x - b) <= DIRECT_CHECK * np.linalg.norm(b):
                    return x
            if pivoted is None:
                try:
                    pivoted = spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.1)
                except RuntimeError as err:
                    raise SolverError(f"the Jacobian is singular ({err}); is a head fixed somewhere?") from None
                lu = None
            return pivoted.solve(b)

        return solve

    def _gmres(self, J: sp.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        import pyamg

        M = pyamg.ruge_stuben_solver(J.tocsr()).aspreconditioner(cycle="V")

        def solve(b: np.ndarray) -> np.ndarray:
            self.solves += 1
            bnorm = np.linalg.norm(b)
            if bnorm == 0.0:
                return np.zeros_like(b)
            x, _ = spla.gmres(J, b, M=M, rtol=GMRES_TOLERANCE, atol=0.0, restart=40, maxiter=10)
            if np.linalg.norm(b - J @ x) > 10 * GMRES_TOLERANCE * bnorm:
                raise SolverError("AMG-preconditioned GMRES did not converge on the Richards Jacobian; "
                                  "use the direct solver")
            return x

        return solve


@dataclass
class Outcome:
    """The result of the iteration of one step."""

    evaluation: Evaluation
    iterations: int
    converged: bool

    @property
    def psi(self) -> np.ndarray:
        return self.evaluation.psi


def iterate(system: RichardsSystem, psi: np.ndarray, forcing: StepForcing, storage: Storage | None,
            solver: JacobianSolver, method: str = NEWTON, max_iterations: int = MAX_ITERATIONS,
            tolerance: float = TOLERANCE) -> Outcome:
    """Solve ``F(psi) = 0`` for one step (``storage`` given) or the steady state (``None``).

    Every iteration factorizes the Jacobian of its own iterate (keeping a factorization for later
    iterations, a chord step, was measured: the slower convergence cost more steps than it saved;
    docs/performance.md). Returns the last iterate with ``converged`` False when the iteration
    failed (the caller cuts the step or changes strategy).
    """
    ev = system.evaluate(psi, forcing, storage)
    newton = method == NEWTON
    for it in range(max_iterations + 1):
        if ev.converged(tolerance):
            return Outcome(ev, it, True)
        if it == max_iterations or not np.all(np.isfinite(ev.residual)):
            break
        try:
            d = solver.factor(system.jacobian(ev, forcing, storage, newton=newton))(-ev.residual)
        except SolverError:
            break
        if not np.all(np.isfinite(d)):
            break
        if not newton:
            # modified Picard takes the full step (its direction need not lower |F|)
            ev = system.evaluate(ev.psi + d, forcing, storage)
            continue
        f0 = np.linalg.norm(ev.residual)
        step = 1.0
        for _ in range(LINE_SEARCH_HALVINGS + 1):
            trial = system.evaluate(ev.psi + step * d, forcing, storage)
            if np.linalg.norm(trial.residual) <= (1.0 - 1e-4 * step) * f0:
                break
            step *= 0.5
        else:
            if trial.norm > 1e2 * tolerance * trial.scale + trial.floor:
                return Outcome(trial, it + 1, False)
        if trial.norm > STALL * ev.norm and trial.norm <= 1e2 * tolerance * trial.scale + trial.floor:
            # no progress near the tolerance: the residual is at the round-off of the heads
            # (psi + z, large sections with heads of tens of metres) and cannot fall further
            return Outcome(trial, it + 1, True)
        ev = trial
    return Outcome(ev, max_iterations, False)
