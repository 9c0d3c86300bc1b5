"""bedflux: stream-aquifer exchange through a streambed.

Field sheets -> checked observations -> a finite-difference model of the section under the
channel -> calibration with sensitivities -> placement of the next instruments -> figures and a
report.

The public names are imported when first used, so ``import bedflux`` and ``bedflux --help`` stay
quick: ``bedflux.load``, ``bedflux.simulate``, ``bedflux.fit``, ``bedflux.plan``, ``bedflux.flowpaths``,
``bedflux.ensemble``,
``bedflux.Scenario``.
"""
from __future__ import annotations

from importlib import import_module
from typing import Any

from bedflux.errors import InputError, SolverError
from bedflux.version import __version__

#: public name -> module that defines it
_PUBLIC = {
    "Scenario": "bedflux.scenario.spec",
    "load": "bedflux.scenario.spec",
    "simulate": "bedflux.section.simulate",
    "fit": "bedflux.calibration.estimate",
    "plan": "bedflux.planning.placement",
    "flowpaths": "bedflux.flowpaths",
    "ensemble": "bedflux.ensembles.run",
}

__all__ = ["InputError", "SolverError", "Scenario", "load", "simulate", "fit", "plan", "flowpaths", "ensemble",
           "__version__"]


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        module = import_module(_PUBLIC[name])
        # bedflux.flowpaths is a callable module (the room and the function share the name)
        value = module if name == "flowpaths" else getattr(module, name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'bedflux' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC))
