"""What a plan should make certain: the parameters, one parameter, or a prediction.

Targets (names as in plan files and ``bedflux.plan(..., target=...)``):

``"parameters"``
    all free parameters together (D-optimal: the information determinant);
a parameter path, e.g. ``"bed.kv"``
    that parameter (its spread reported in SI, to first order ``value ln(10) sd(log10)`` for a
    log parameter);
``"exchange"``
    the net exchange per metre of channel (m^2/s; time mean for a transient run);
``"reach_total"``
    the net exchange times ``length`` (m^3/s over that length of channel);
``"reversal:X"``
    the duration (s) of the bed-flux reversal at the column nearest x = X during the transient
    run (e.g. ``"reversal:2.5"``);
``"residence_time"``, ``"residence_time:A:B"``
    the flux-weighted median residence time (s) of the stream water entering the bed, or of the
    water entering it between x = A and x = B (e.g. under a riffle), from the run's flow paths
    (:func:`bedflux.flowpaths`).

A prediction's gradient with respect to the parameters is taken by central differences of the
forward model (two runs per parameter).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bedflux.errors import InputError
from bedflux.calibration.display import dimension_of, display_unit
from bedflux.forward.sensitivity import Forward
from bedflux.scenario.spec import renamed_path
from bedflux.scenario.units import DIMENSIONS, SECONDS_PER_DAY


@dataclass(frozen=True)
class Target:
    """A parsed target."""

    kind: str  # parameters | parameter | exchange | reach_total | reversal | residence
    path: str = ""
    x: float = 0.0
    length: float = 1.0
    x_range: tuple[float, float] | None = None

    def label(self) -> str:
        return {"parameters": "all free parameters (D-optimal)", "parameter": self.path,
                "exchange": "net exchange (m2/s per m)", "reach_total": f"reach total over {self.length:g} m (m3/s)",
                "reversal": f"reversal duration at x = {self.x:g} m (s)",
                "residence": "median residence time in the bed (s)" + (
                    f" of water entering at x = {self.x_range[0]:g} to {self.x_range[1]:g} m" if self.x_range else "")
                }[self.kind]

    def units(self) -> tuple[str, float, str]:
        """``(SI unit, display factor, display unit)`` of the target's spread."""
        if self.kind == "parameter":
            factor, unit = display_unit(self.path)
            return DIMENSIONS[dimension_of(self.path)][1], factor, unit
        return {"parameters": ("", 1.0, "(geometric mean in the estimation space: log10 units for log "
                                        "parameters, SI otherwise)"),
                "exchange": ("m^2/s", SECONDS_PER_DAY, "m2/d per m"),
                "reach_total": ("m^3/s", SECONDS_PER_DAY, "m3/d"),
                "reversal": ("s", 1.0 / 3600.0, "h"), "residence": ("s", 1.0 / 3600.0, "h")}[self.kind]

    def spread_text(self, spread: float) -> str:
        """A spread (SI, or estimation space for D-optimal) in the display unit."""
        _, factor, unit = self.units()
        return f"{spread * factor:.3g} {unit}"


def parse_target(text: str, paths: list[str], length: float | None = None, source: str = "plan") -> Target:
    """Read a target name (see module doc)."""
    if text == "parameters":
        return Target("parameters")
    if text in paths:
        return Target("parameter", path=text)
    if text == "exchange":
        return Target("exchange")
    if text == "reach_total":
        if length is None or length <= 0:
            raise InputError("target \"reach_total\" needs length = the metres of channel (> 0)", source=source,
                             where="target")
        return Target("reach_total", length=length)
    if text.startswith("reversal:"):
        try:
            return Target("reversal", x=float(text.split(":", 1)[1]))
        except ValueError:
            pass
    if text == "residence_time":
        return Target("residence")
    if text.startswith("residence_time:"):
        try:
            a, b = (float(v) for v in text.split(":")[1:])
            if a < b:
                return Target("residence", x_range=(a, b))
        except ValueError:
            pass
    if renamed_path(text) in paths:
        raise InputError(f"target {text!r} was renamed; write target = \"{renamed_path(text)}\"", source=source,
                         where="target")
    raise InputError(f"target {text!r} is not allowed; use \"parameters\", a free parameter path "
                     f"({', '.join(paths)}), \"exchange\", \"reach_total\", \"reversal:X\", \"residence_time\" or "
                     f"\"residence_time:A:B\" (A < B)", source=source,
                     where="target")


def prediction(forward: Forward, target: Target, m: np.ndarray) -> float:
    """The predicted quantity at parameters ``m``."""
    from bedflux.forward.predictions import mean_exchange, reversal_duration, simulated

    ds = simulated(forward.scenario_at(m))
    if target.kind in ("exchange", "reach_total"):
        return mean_exchange(ds) * (target.length if target.kind == "reach_total" else 1.0)
    if target.kind == "reversal":
        return reversal_duration(ds, target.x)
    if target.kind == "residence":
        return residence_prediction(forward.scenario_at(m), ds, target)
    raise ValueError(target.kind)


def residence_prediction(scenario, ds, target: Target) -> float:
    """The median residence time (s) a ``residence`` target asks for, from the run's flow paths."""
    from bedflux.flowpaths.hyporheic import median_residence_time
    from bedflux.flowpaths.paths import flowpaths

    value = median_residence_time(flowpaths(scenario, ds), target.x_range)
    if not np.isfinite(value):
        where = "" if target.x_range is None else f" between x = {target.x_range[0]:g} and {target.x_range[1]:g} m"
        raise InputError(f"target {target.label()!r}: " + ("no stream water enters the bed" + where if np.isnan(value)
                         else "more than half of the water is still in the ground at the horizon") + "; choose "
                         "another target", where="target")
    return value

def target_gradient(forward: Forward, target: Target, m: np.ndarray, step: float = 1e-3,
                    client=None) -> tuple[np.ndarray | None, float]:
    """The target's gradient in the estimation space (None for D-optimal) and its value.

    With a dask ``client`` the perturbed runs of a prediction run as tasks on its workers (the
    same numbers)."""
    P = forward.n_params
    if target.kind == "parameters":
        return None, float("nan")
    if target.kind == "parameter":
        j = [p.path for p in forward.free].index(target.path)
        g = np.zeros(P)
        g[j] = 1.0
        return g, forward.free[j].natural(m[j])
    steps = np.zeros(P)
    points = [m]
    for j, p in enumerate(forward.free):
        steps[j] = step if p.log else step * (abs(m[j]) if m[j] else (p.high - p.low))
        up, dn = m.copy(), m.copy()
        up[j] += steps[j]
        dn[j] -= steps[j]
        points += [up, dn]
    if client is None:
        values = [prediction(forward, target, point) for point in points]
    else:
        from bedflux.calibration.cluster import task_map

        values = task_map(client, prediction, (forward, target), points)
    g = (np.array(values[1::2]) - np.array(values[2::2])) / (2 * steps)
    return g, values[0]


def to_natural(forward: Forward, target: Target, m: np.ndarray, spread: float) -> float:
    """A spread in the estimation space expressed in the target's natural units."""
    if target.kind == "parameter":
        j = [p.path for p in forward.free].index(target.path)
        p = forward.free[j]
        return spread * p.dnatural(m[j])
    return spread
