"""The nonlinear iteration of one Richards step: Newton with a backtracking line search, or
modified Picard, and the linear solves of their (non-symmetric) Jacobians.

Each iteration solves ``J d = -F``. Newton moves along ``d`` by the largest of 1, 1/2, 1/4, ...
that lowers ``|F|`` by the Armijo rule (``|F(psi + l d)| <= (1 - 1e-4 l) |F(psi)|``, Dennis &
Schnabel 1983, sec. 6.3); modified Picard takes the full step. The iteration stops when the
sum of the absolute cell residuals is below ``tolerance`` times the throughput of the step (the sum of the absolute boundary flows,
uptake and storage changes), or when a Newton step leaves 90 % of the residual while it is
within 100 times that or at the round-off of the heads psi + z (large sections, heads of tens of
metres, no flow at all): the water budget then closes to that fraction. A transient step whose
Newton iteration stalls otherwise (the line search fails, or the iterations run out; typically
at the kink of Mualem's Kr at saturation for van Genuchten n < 2) is accepted at its best
iterate when that is within :data:`STALL_FACTOR` tolerances and the step's water budget closes
to :data:`CLOSURE_TARGET` (:func:`stalled_closed`).

Linear solves (:class:`JacobianSolver`): the Newton Jacobian is not symmetric (upstream Kr), so
the direct solver is SuperLU with minimum-degree ordering on A^T + A (the matrix is structurally
symmetric) and diagonal pivots, which the diagonally dominant Jacobians allow (threshold partial
pivoting when that solves poorly). Above :data:`bedflux.section.linear.DIRECT_LIMIT` unknowns the
preconditioner is a Ruge-Stuben algebraic multigrid hierarchy (pyamg). Either is kept across
iterations and steps as the preconditioner of a right-preconditioned GMRES and rebuilt only when
GMRES stalls with it; each system is solved to :data:`LINEAR_FORCING` of its right-hand side
(inexact Newton).
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
#: A stalled Newton iteration (:func:`stalled_closed`) is accepted with its residual up to this
#: many tolerances ...
STALL_FACTOR = 1e3
#: ... when the relative water budget of its step closes to this (the mass-balance target of a
#: step with direct solves).
CLOSURE_TARGET = 1e-8
#: Halvings of the step length tried by the line search.
LINE_SEARCH_HALVINGS = 6
#: Relative residual of every Newton system (direct or GMRES).
GMRES_TOLERANCE = 1e-9
#: Relative residual asked of each Newton system (an inexact Newton method, Dembo, Eisenstat &
#: Steihaug 1982: the linear residual a fixed small fraction of the nonlinear one).
LINEAR_FORCING = 1e-4
#: GMRES iterations allowed with a kept factorization before a new one is built.
KEPT_ITERATIONS = 8
#: GMRES iterations allowed with a new AMG hierarchy.
AMG_ITERATIONS = 400
#: GMRES restart length.
GMRES_RESTART = 40


class JacobianSolver:
    """Solves the Newton systems ``J d = b`` of a run, keeping a preconditioner between them.

    ``method`` is ``"direct"`` (a sparse LU factorization), ``"amg-gmres"`` (an algebraic
    multigrid hierarchy) or ``"auto"`` (by size). The factorization or hierarchy built on one
    Jacobian is kept for the following systems, of later iterations and steps: each is solved by
    GMRES preconditioned with it, and a new one is built on the current Jacobian only when GMRES
    does not reach :data:`GMRES_TOLERANCE` within :data:`KEPT_ITERATIONS` iterations (the
    Jacobian has moved too far: a column flooded, a front moved). The Newton step is then the
    exact one to that tolerance, so the iteration keeps Newton's convergence, unlike a chord
    iteration on a stale matrix. ``keep=False`` builds a new preconditioner for every system
    (the direct method then solves with the factorization alone).
    Counts ``factorizations`` (preconditioners built), ``solves`` and ``krylov_iterations``.
    """

    def __init__(self, n: int, method: str = "auto", keep: bool = True):
        if method == "auto":
            method = "direct" if n <= DIRECT_LIMIT else "amg-gmres"
        if method not in ("direct", "amg-gmres"):
            raise ValueError(f"unknown Jacobian solver {method!r}")
        self.method = method
        self.keep = keep
        self.factorizations = 0
        self.solves = 0
        self.krylov_iterations = 0
        self._kept: Callable[[np.ndarray], np.ndarray] | None = None

    def solve(self, J: sp.csr_matrix, b: np.ndarray, rtol: float = 0.0) -> np.ndarray:
        """The solution of ``J d = b`` to the relative residual ``rtol`` (at least
        :data:`GMRES_TOLERANCE`)."""
        rtol = max(rtol, GMRES_TOLERANCE)
        self.solves += 1
        bnorm = np.linalg.norm(b)
        if bnorm == 0.0:
            return np.zeros_like(b)
        if self.keep and self._kept is not None:
            x = self._krylov(J, b, bnorm, self._kept, KEPT_ITERATIONS, rtol)
            if x is not None:
                return x
        self.factorizations += 1
        if self.method == "direct":
            for pivots in (False, True):
                self._kept = self._direct(J, pivots)
                x = self._kept(b)
                if np.all(np.isfinite(x)) and np.linalg.norm(J @ x - b) <= GMRES_TOLERANCE * bnorm:
                    return x
                x = self._krylov(J, b, bnorm, self._kept, KEPT_ITERATIONS, rtol)
                if x is not None:
                    return x
            raise SolverError("the Richards Jacobian could not be solved to its tolerance")
        import pyamg

        hierarchy = pyamg.ruge_stuben_solver(J.tocsr())
        self._kept = hierarchy.aspreconditioner(cycle="V").matvec
        x = self._krylov(J, b, bnorm, self._kept, AMG_ITERATIONS, rtol)
        if x is None:
            raise SolverError("AMG-preconditioned GMRES did not converge on the Richards Jacobian; "
                              "use the direct solver")
        return x

    def factor(self, J: sp.csr_matrix) -> Callable[[np.ndarray], np.ndarray]:
        """A solver of ``J d = b`` for this Jacobian alone, built afresh (benchmarks)."""
        return lambda b: JacobianSolver(J.shape[0], self.method, keep=False).solve(J, b)

    def _krylov(self, J: sp.csr_matrix, b: np.ndarray, bnorm: float, apply: Callable[[np.ndarray], np.ndarray],
                limit: int, rtol: float) -> np.ndarray | None:
        """GMRES with the preconditioner ``apply``; None when it misses the tolerance in ``limit``
        iterations."""
        x, iterations = right_gmres(J, b, apply, rtol * bnorm, limit, GMRES_RESTART)
        self.krylov_iterations += iterations
        return x  # None, or within the tolerance on the true residual

    def _direct(self, J: sp.csr_matrix, pivots: bool) -> Callable[[np.ndarray], np.ndarray]:
        """The LU factorization of ``J`` (minimum-degree ordering on A^T + A): diagonal pivots, or
        threshold partial pivoting."""
        A = J.tocsc()
        try:
            if not pivots:
                return spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                                 options={"SymmetricMode": True}).solve
            return spla.splu(A, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.1).solve
        except RuntimeError as err:
            if not pivots:
                return lambda b: np.full_like(b, np.nan)
            raise SolverError(f"the Jacobian is singular ({err}); is a head fixed somewhere?") from None


def right_gmres(A: sp.csr_matrix, b: np.ndarray, apply: Callable[[np.ndarray], np.ndarray], tolerance: float,
                limit: int, restart: int) -> tuple[np.ndarray | None, int]:
    """Restarted GMRES with right preconditioning (Saad 2003, algorithm 9.5): the residual it
    minimises is the true residual ``b - A x``, so the stopping test is on that. The preconditioned
    vectors are kept (as in flexible GMRES, Saad 2003, algorithm 9.6), so that the update costs no
    further application of the preconditioner.

    Returns ``x`` with ``|b - A x| <= tolerance`` (None when ``limit`` iterations do not reach
    it) and the iterations done.
    """
    n = b.size
    x = np.zeros(n)
    r = b.copy()
    done = 0
    while done < limit:
        beta = np.linalg.norm(r)
        if beta <= tolerance:
            return x, done
        m = min(restart, limit - done)
        V = np.empty((m + 1, n))
        Z = np.empty((m, n))
        H = np.zeros((m + 1, m))
        V[0] = r / beta
        g = np.zeros(m + 1)
        g[0] = beta
        cs, sn = np.zeros(m), np.zeros(m)
        k = 0
        for k in range(m):
            Z[k] = apply(V[k])
            w = A @ Z[k]
            for _ in range(2):  # classical Gram-Schmidt, twice (Giraud et al. 2005)
                h = V[: k + 1] @ w
                w -= h @ V[: k + 1]
                H[: k + 1, k] += h
            hn = np.linalg.norm(w)
            H[k + 1, k] = hn
            if hn > 0.0:
                V[k + 1] = w / hn
            for i in range(k):  # the earlier Givens rotations on the new column
                H[i, k], H[i + 1, k] = cs[i] * H[i, k] + sn[i] * H[i + 1, k], -sn[i] * H[i, k] + cs[i] * H[i + 1, k]
            d = np.hypot(H[k, k], H[k + 1, k])
            if d == 0.0:
                return None, done + k + 1
            cs[k], sn[k] = H[k, k] / d, H[k + 1, k] / d
            H[k, k], H[k + 1, k] = d, 0.0
            g[k + 1] = -sn[k] * g[k]
            g[k] = cs[k] * g[k]
            if abs(g[k + 1]) <= tolerance or hn == 0.0:  # converged, or the space is exhausted
                break
        k += 1
        y = np.linalg.solve(np.triu(H[:k, :k]), g[:k]) if k else np.zeros(0)
        x = x + y @ Z[:k]
        done += k
        r = b - A @ x
        if not np.all(np.isfinite(r)):
            return None, done
        if np.linalg.norm(r) <= tolerance:
            return x, done
    return None, done


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
    best = ev
    newton = method == NEWTON
    for it in range(max_iterations + 1):
        if ev.converged(tolerance):
            return Outcome(ev, it, True)
        if it == max_iterations or not np.all(np.isfinite(ev.residual)):
            break
        try:
            d = solver.solve(system.jacobian(ev, forcing, storage, newton=newton), -ev.residual, LINEAR_FORCING)
        except SolverError:
            break
        if not np.all(np.isfinite(d)):
            break
        if not newton:
            # modified Picard takes the full step (its direction need not lower |F|)
            ev = system.evaluate(ev.psi + d, forcing, storage)
            best = ev if ev.norm < best.norm else best
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
                if stalled_closed(best, tolerance, storage):
                    return Outcome(best, it + 1, True)
                return Outcome(trial, it + 1, False)
        best = trial if trial.norm < best.norm else best
        if trial.norm > STALL * ev.norm and trial.norm <= 1e2 * tolerance * trial.scale + trial.floor:
            # no progress near the tolerance: the residual is at the round-off of the heads
            # (psi + z, large sections with heads of tens of metres) and cannot fall further
            return Outcome(trial, it + 1, True)
        ev = trial
    if stalled_closed(best, tolerance, storage):
        return Outcome(best, max_iterations, True)
    return Outcome(ev, max_iterations, False)


def stalled_closed(ev: Evaluation, tolerance: float, storage: Storage | None) -> bool:
    """Whether an iterate at which Newton stalls is accepted: its residual is within
    :data:`STALL_FACTOR` of the tolerance and the water budget of the step closes to
    :data:`CLOSURE_TARGET` (transient steps only).

    The stall arises at the kink of Mualem's Kr at saturation: for van Genuchten ``n < 2``,
    ``dKr/dpsi ~ |psi|^(n-2)`` is unbounded there, and a cell whose root lies within round-off
    of ``psi = 0`` sends Newton back and forth across the kink. The budget closure of the step is
    ``(in - out) / max(in, out)`` with ``in + out`` the throughput and ``in - out`` minus the sum
    of the cell residuals, so ``|sum F| <= CLOSURE_TARGET * throughput / 2`` bounds it.
    """
    if storage is None or not np.all(np.isfinite(ev.residual)):
        return False
    return (ev.norm <= STALL_FACTOR * tolerance * ev.scale + ev.floor
            and abs(float(ev.residual.sum())) <= 0.5 * CLOSURE_TARGET * ev.scale)
