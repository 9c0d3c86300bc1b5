"""The bed flux of a variably saturated run is per metre of wetted bed, as in the linear model.

Definition (docs/outputs.md, the contract in shared/design.md): ``bed_flux`` is the water flux
through the submerged part of each column's top (m/s), so the bed fluxes times the wetted widths
add up to the net exchange, which in turn equals the stream's line of the water budget (mass
conservation: what leaves the stream through its bed is what the section takes in from it).
A column at the water's edge, partly wetted, is where a flux divided by the whole column width
would show.
"""
from __future__ import annotations

import copy

import numpy as np

import bedflux
from .test_linear_limit import BASE, RETENTION


def test_bed_flux_times_wetted_width_is_the_stream_budget():
    d = copy.deepcopy(BASE)
    d["stream"] = {"stage": "0.2 m"}  # water's edge at x = 8 - 0.2 * 8 / 0.3 = 2.67 m, inside a column
    for z in d["zone"]:
        z["retention"] = RETENTION
    ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    fraction = ds["wetted_fraction"].values
    assert np.any((fraction > 0.05) & (fraction < 0.95))  # a partly wetted column is present
    width = fraction * 0.5  # dx = 0.5 m
    stream = float(ds["outflow"].sel(term="stream") - ds["inflow"].sel(term="stream"))
    assert abs(np.nansum(ds["bed_flux"].values * width) - stream) < 1e-9 * abs(stream)
    assert abs(float(ds["exchange"]) - stream) < 1e-9 * abs(stream)
