"""Calibration: fit scenario parameters to observed heads, gradients and seepage fluxes.

Modules: ``spec`` (the fit file), ``estimate`` (weighted least squares, intervals, verdicts and
:func:`fit`), ``display`` (values with their units), ``outputs`` (files and figures), ``command``
(the ``fit`` verb). The model is reached only through :class:`bedflux.forward.sensitivity.Forward`.
"""
from __future__ import annotations

from importlib import import_module
from typing import Any

__all__ = ["fit", "FitResult"]


def __getattr__(name: str) -> Any:
    if name in __all__:
        return getattr(import_module("bedflux.calibration.estimate"), name)
    raise AttributeError(f"module 'bedflux.calibration' has no attribute {name!r}")
