"""Planning: where the next seepage meters, piezometers and temperature logger pairs go.

Modules: ``spec`` (the plan file), ``candidates`` (instrument sites; the error spread of a logger
pair from :mod:`bedflux.field.logger_pair_spread`), ``fit_start`` (starting from a
fit), ``worth`` (linear Bayesian data worth, greedy selection), ``targets`` (what to pin down),
``reading`` (when the instruments are read), ``detect`` (detectability), ``placement``
(:func:`plan`), ``outputs`` and ``command`` (the ``plan`` verb).
"""
from __future__ import annotations

from importlib import import_module
from typing import Any

__all__ = ["plan", "prior_covariance"]


def __getattr__(name: str) -> Any:
    if name in __all__:
        return getattr(import_module("bedflux.planning.placement"), name)
    raise AttributeError(f"module 'bedflux.planning' has no attribute {name!r}")
