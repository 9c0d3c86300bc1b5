"""Predictions of the section model that planning targets: the run at a parameter vector, the
mean net exchange, and the reversal duration at a place."""
from __future__ import annotations

import numpy as np
import xarray as xr

from bedflux.errors import InputError
from bedflux.scenario.spec import Scenario


def simulated(scenario: Scenario) -> xr.Dataset:
    """The result Dataset of ``scenario`` (:func:`bedflux.simulate`)."""
    from bedflux.section.simulate import simulate

    return simulate(scenario)


def mean_exchange(ds: xr.Dataset) -> float:
    """Net exchange (m^2/s), averaged over the run by the trapezoidal rule for a transient run."""
    ex = ds["exchange"].values
    if "time" not in ds.dims:
        return float(ex)
    t = ds["time"].values
    return float(np.sum(0.5 * (ex[1:] + ex[:-1]) * np.diff(t)) / (t[-1] - t[0]))


def reversal_duration(ds: xr.Dataset, x: float) -> float:
    """How long (s) the bed flux of the column nearest ``x`` is reversed during a transient run."""
    from bedflux.section.events import exchange_events

    if "time" not in ds.dims:
        raise InputError("a reversal target needs a transient scenario (a [time] table)", where="target")
    table, _ = exchange_events(ds)
    if table.empty:
        raise InputError("the scenario has no submerged bed: no reversal to predict", where="target")
    row = table.iloc[int(np.argmin(np.abs(table["x"].to_numpy() - x)))]
    return float(row["reversed_duration"])
