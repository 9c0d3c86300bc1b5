"""The peak of a run's stage: its height, its time and the width of ground it submerges.

The figures come from the stage signal itself (not from the output times, which may miss the
peak) and from the ground profile (not from the grid columns): the flooded width is the length
of the section, within the channel limits, where the piecewise-linear ground lies below the
stage at its peak (with the water-surface slope when one is given).
"""
from __future__ import annotations

import numpy as np

from bedflux.scenario.forcing import Constant
from bedflux.scenario.spec import Scenario


def flooded_width(scenario: Scenario, stage: float) -> float:
    """Length (m) of the section where the ground is below ``stage`` (held at x = 0, plus the
    slope times x), within the grid and the channel limits."""
    s = scenario.stream
    lo, hi = scenario.grid.x0, scenario.grid.x1
    if s.channel is not None:
        lo, hi = max(lo, s.channel[0]), min(hi, s.channel[1])
    px = np.array([p[0] for p in scenario.ground])
    pz = np.array([p[1] for p in scenario.ground])
    width = 0.0
    for xa, xb in zip(px[:-1], px[1:]):
        a, b = max(xa, lo), min(xb, hi)
        if b <= a:
            continue
        # depth of water over the ground, linear on the segment
        da, db = (stage + s.slope * x - np.interp(x, px, pz) for x in (a, b))
        if da > 0.0 and db > 0.0:
            width += b - a
        elif da > 0.0 or db > 0.0:
            width += (b - a) * max(da, db) / abs(da - db)
    return float(width)


def peak_attrs(scenario: Scenario) -> dict[str, float]:
    """Result attributes of a transient run whose stage varies: ``peak_stage_m``,
    ``peak_stage_time_s`` (the earliest time of the highest stage over the run) and
    ``flooded_width_m`` (ground submerged then); empty otherwise."""
    s = scenario.stream
    if s is None or scenario.time is None or isinstance(s.stage, Constant):
        return {}
    t_peak, stage = s.stage.highest(scenario.time.end)
    return {"peak_stage_m": stage, "peak_stage_time_s": t_peak, "flooded_width_m": flooded_width(scenario, stage)}


def flood_figures(attrs: dict) -> dict[str, float | str]:
    """The peak figures of a result's attributes (and the run's ``start``), for the run summary."""
    keys = ("peak_stage_m", "peak_stage_time_s", "flooded_width_m", "start")
    return {k: (attrs[k] if k == "start" else float(attrs[k])) for k in keys if k in attrs}


def flood_lines(s: dict) -> list[str]:
    """Summary lines for the peak figures (none when the summary has none)."""
    if "peak_stage_m" not in s:
        return []
    t = s["peak_stage_time_s"]
    when = f"t = {t / 3600.0:.4g} h"
    if s.get("start"):
        when += f" ({np.datetime64(s['start']) + np.timedelta64(int(round(t)), 's')})"
    return [f"peak stage: {s['peak_stage_m']:.4g} m at {when}; "
            f"ground flooded then: {s['flooded_width_m']:.4g} m wide"]
