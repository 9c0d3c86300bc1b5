"""Steady solve with the active set of seepage faces and evapotranspiration branches.

Each pass assembles ``(L + diag conductance) u = r`` for the current active set, solves it, and updates the
set from the heads; it stops when the set no longer changes. A set that keeps changing is
reported with the columns involved.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bedflux.errors import InputError, SolverError
from bedflux.section.linear import Factor, choose_method, factorize
from bedflux.section.discretisation import ActiveSet, Section, Term

MAX_PASSES = 60


@dataclass
class SteadySolution:
    """Relative heads ``u`` (head = u + h_ref), the terms and active set that produced them."""

    u: np.ndarray
    terms: list[Term]
    state: ActiveSet
    passes: int
    method: str
    factor: Factor


def solve_steady(section: Section, t: float = 0.0, method: str = "auto", reuse: bool = False,
                 state: ActiveSet | None = None) -> SteadySolution:
    """Solve the steady problem for the forcing at time ``t``.

    Parameters
    ----------
    section
        The discretised scenario.
    t
        Time (s) whose stage and boundary values are used.
    method
        ``"direct"``, ``"amg-cg"`` or ``"auto"`` (by size, see :func:`choose_method`).
    reuse
        The caller will reuse the factorization (forces a direct factorization under ``auto``).
    state
        Starting active set (default: no seepage faces, ET on its linear branch).

    Raises
    ------
    InputError
        If no head is fixed for the forcing at ``t`` (e.g. the stage is below the whole bed).
    SolverError
        If the active set does not settle.
    """
    if method == "auto":
        method = choose_method(section.n, reuse)
    state = section.initial_active_set() if state is None else state.copy()
    history: list[ActiveSet] = []
    for passes in range(1, MAX_PASSES + 1):
        terms = section.terms(t, state, steady=True)
        if not any(np.any(term.conductance > 0) for term in terms):
            if section.scenario.recharge > 0 and not state.seepage.any():
                state.seepage[:] = ~section.submerged(t)
                continue
            raise InputError(
                f"no head is fixed at t = {t:g} s: the stage is below the ground in every channel column "
                "and no side or bottom head is given", source=section.scenario.source, where="[stream]")
        factor = factorize(section.matrix(terms), method)
        u = factor.solve(section.rhs(terms))
        new = section.update_active_set(u, terms, t, state)
        if new.same(state):
            return SteadySolution(u, terms, state, passes, method, factor)
        if any(new.same(h) for h in history):
            changing = np.nonzero(new.seepage != state.seepage)[0]
            break
        history.append(state)
        state = new
    else:
        changing = np.nonzero(new.seepage != state.seepage)[0]
    xs = ", ".join(f"{x:g}" for x in section.grid.xc[changing][:8])
    raise SolverError(f"the seepage-face / evapotranspiration active set did not settle after {passes} "
                      f"passes; faces keep switching at x = {xs or 'ET cells'} m. Refine the grid near "
                      "these columns or smooth the ground profile.")
