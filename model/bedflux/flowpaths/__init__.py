"""Flow paths and residence times of stream water in the bed (floor 3, beside ``forward``).

``field`` (face flows and pore velocities of every cell of a solved state), ``tracer`` (exact
cell-by-cell tracing of many paths at once, Pollock 1988), ``release`` (release points at equal
shares of the downwelling flow), ``statistics`` (flux-weighted residence time quantiles),
``paths`` (``flowpaths``: scenario and result in, path Dataset out), ``hyporheic`` (the summary
block of a run).

The room shares its name with the public function ``bedflux.flowpaths``; the module object is
itself callable, so ``bedflux.flowpaths(scenario, ...)`` works whether or not this package was
imported first.
"""
from __future__ import annotations

import sys
import types


class _CallableModule(types.ModuleType):
    def __call__(self, *args, **kwargs):
        from bedflux.flowpaths.paths import flowpaths

        return flowpaths(*args, **kwargs)


sys.modules[__name__].__class__ = _CallableModule
