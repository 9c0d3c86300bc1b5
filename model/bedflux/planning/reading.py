"""When the planned instruments are read, the stage then, and a warning at a flood.

A steady scenario has no clock: the instruments are read whenever the stream stands at the
modelled stage. In a transient scenario every candidate is read at one time (``reading_time``,
or a candidate's ``time``); by default when the stage departs most from its starting value,
which for a flood is its peak. A reading in the upper half of a flood (the stage more than half
of the largest rise above its starting value) is flagged: wading a stream in flood is dangerous,
and meters and manometers are hard to read in fast water (common practice of field safety).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from bedflux.scenario.spec import Scenario

#: Samples of the stage over the run when looking for its extremes.
_SAMPLES = 2001
#: A reading with the stage above this fraction of the flood's rise counts as at the flood peak.
FLOOD_FRACTION = 0.5


def default_reading_time(scenario: Scenario) -> float:
    """0 for a steady run, else when the stage departs most from its start."""
    if not scenario.transient or scenario.stream is None:
        return 0.0
    t = np.linspace(0.0, scenario.time.end, _SAMPLES)
    s = scenario.stream.stage(t)
    return float(t[int(np.argmax(np.abs(s - s[0])))])


@dataclass
class Reading:
    """The reading times of a plan, the stage then (where the stage signal holds, x = 0), text and
    warnings."""

    times: list[float]
    stages: list[float]
    text: str
    warnings: list[str] = field(default_factory=list)


def _hours(t: float) -> str:
    return f"{t / 3600.0:.3g} h"


def describe_reading(scenario: Scenario, times: np.ndarray) -> Reading:
    """The reading times and stages of the candidates, in words, with a warning for each time
    that falls in the upper half of a flood."""
    stream = scenario.stream
    if not scenario.transient:
        stage = float(stream.stage(0.0)) if stream is not None else float("nan")
        where = " at x = 0" if stream is not None and stream.slope else ""
        text = ("steady scenario: read the instruments while the stream stands at the modelled stage"
                + (f", {stage:.4g} m{where}" if np.isfinite(stage) else ""))
        return Reading([0.0], [stage], text)
    unique = sorted({float(t) for t in np.atleast_1d(times)})
    stages = [float(stream.stage(t)) if stream is not None else float("nan") for t in unique]
    text = "; ".join(f"read at t = {_hours(t)}, stage {s:.4g} m" for t, s in zip(unique, stages))
    warnings = []
    if stream is not None:
        grid = np.linspace(0.0, scenario.time.end, _SAMPLES)
        series = stream.stage(grid)
        rise = series - series[0]
        peak = float(rise.max())
        if peak > 0.0:
            k = int(np.argmax(rise))
            for t, s in zip(unique, stages):
                if s - series[0] >= FLOOD_FRACTION * peak:
                    warnings.append(
                        f"the instruments are read at t = {_hours(t)} with the stage at {s:.4g} m, in the upper "
                        f"half of the flood (peak {series[k]:.4g} m at t = {_hours(float(grid[k]))}): wading a "
                        "stream in flood is dangerous and readings in fast water are poor; choose a reading_time "
                        "before or after the flood unless the work can be done safely")
    return Reading(unique, stages, text, warnings)
