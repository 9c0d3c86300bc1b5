"""Discretisation and linear solves of the section model."""
from .section import ActiveSet, Section, Term, discretise
from .steady import SteadySolution, solve_steady

__all__ = ["ActiveSet", "Section", "Term", "discretise", "SteadySolution", "solve_steady"]
