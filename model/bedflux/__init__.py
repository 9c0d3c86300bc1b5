"""bedflux: stream-aquifer exchange through a streambed.

Field sheets -> checked observations -> a finite-difference model of the section under the
channel -> calibration with sensitivities -> placement of the next instruments -> figures and a
report.
"""
from __future__ import annotations

__version__ = "0.1.0"

from .errors import InputError, SolverError  # noqa: E402
from .scenario import Scenario, load  # noqa: E402
from .simulate import simulate  # noqa: E402
from . import fit, plan  # noqa: E402,F401  (callable packages: bedflux.fit(...), bedflux.plan(...))

__all__ = ["InputError", "SolverError", "Scenario", "load", "simulate", "fit", "plan", "__version__"]
