"""One member: its scenario with the drawn values and fields, run, and reduced to its answers.

A member keeps what the ensemble's answers need: the net exchange and the stage (per output
time), the bed flux per column, and for a transient run its events
(:func:`bedflux.section.events.exchange_events`). A member whose run fails (no convergence, a
water budget that does not close, a drawn value the scenario does not allow) is kept with its
values and the reason; it never stops the ensemble.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from bedflux.ensembles.spec import EnsembleSpec, MemberDraw
from bedflux.section.events import exchange_events
from bedflux.section.grid import build_grid
from bedflux.section.simulate import simulate

#: the event answers of a member (SI), in the order of the ensemble Dataset
EVENTS = ("reversal_start", "reversal_end", "reversal_duration", "bank_storage", "returned_volume",
          "peak_losing_exchange", "penetration_depth")


@dataclass
class MemberResult:
    """The answers of one member, or why it failed (``failure``; then the arrays are None)."""

    index: int
    values: dict[str, float]
    failure: str = ""
    times: np.ndarray | None = None
    exchange: np.ndarray | None = None
    stage: np.ndarray | None = None
    bed_flux: np.ndarray | None = None
    events: dict[str, float] = field(default_factory=dict)
    seconds: float = 0.0


def run_member(spec: EnsembleSpec, draw: MemberDraw) -> MemberResult:
    """Run member ``draw.index`` of ``spec`` (on whatever process holds it)."""
    start = time.perf_counter()
    try:
        scenario = spec.scenario.with_values(draw.values) if draw.values else spec.scenario
        multipliers: dict[str, np.ndarray] = {}
        if spec.fields:
            grid = build_grid(scenario)
            for rf, seed in zip(spec.fields, draw.field_seeds):
                median = scenario.value_at(f"{rf.zone}.{rf.property}") if rf.condition else None
                multipliers.update(rf.multipliers(grid, seed, median))
        ds = simulate(scenario, fields=multipliers or None)
        times = ds["time"].values if "time" in ds.dims else None
        result = MemberResult(draw.index, draw.values, times=times, exchange=ds["exchange"].values,
                              stage=ds["stage"].values, bed_flux=ds["bed_flux"].values)
        if "time" in ds.dims:
            result.events = member_events(ds)
    except Exception as err:  # any failure is the member's: recorded, and the ensemble goes on
        reason = str(err).strip() or type(err).__name__
        result = MemberResult(draw.index, draw.values, failure=f"{type(err).__name__}: {reason}")
    result.seconds = time.perf_counter() - start
    return result


def member_events(ds) -> dict[str, float]:
    """The event answers of a transient run (NaN where there is none: no reversal, or a
    reversal still running at the end has no end)."""
    _, reach = exchange_events(ds)
    rev = reach["reversals"]
    nan = math.nan
    return {
        "reversal_start": rev[0][0] if rev else nan,
        "reversal_end": (nan if rev[-1][1] is None else rev[-1][1]) if rev else nan,
        "reversal_duration": reach["reversed_duration"],
        "bank_storage": float(reach["bank_storage_volume"]),
        "returned_volume": float(reach["returned_volume"]),
        "peak_losing_exchange": reach["peak_losing_exchange"],
        "penetration_depth": reach["max_penetration_depth"],
    }
