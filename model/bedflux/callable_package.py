"""Packages that can be called: ``bedflux.fit(...)`` and ``bedflux.plan(...)`` as the contract asks,
while ``bedflux.fit`` and ``bedflux.plan`` stay packages with their modules."""
from __future__ import annotations

import sys
import types
from typing import Callable


def call_as(module_name: str, function: Callable) -> None:
    """Make the package ``module_name`` callable; a call runs ``function``."""

    class CallablePackage(types.ModuleType):
        def __call__(self, *args, **kwargs):
            return function(*args, **kwargs)

    sys.modules[module_name].__class__ = CallablePackage
