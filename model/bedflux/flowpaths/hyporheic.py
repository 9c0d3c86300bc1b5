"""The hyporheic figures of a set of paths: how much stream water enters the bed, how long and
how deep it stays, where it goes; in a transient run, when the bank-storage water comes back.

Every share is of the exchanged water, weighted by what each path carries (its weight in a
steady run, its volume in a transient run). A path not out within the horizon counts as longer
than the horizon in the quantiles (:mod:`bedflux.flowpaths.statistics`).
"""
from __future__ import annotations

import numpy as np
import xarray as xr

from bedflux.flowpaths.statistics import QUANTILES, weighted_quantile

#: Exit kinds grouped by where the water goes (keys of ``fate`` in the block).
FATE = {"returns_to_stream": ("bed",), "to_aquifer": ("side", "base"), "seepage_face": ("seepage face",),
        "taken_up_in_cells": ("sink",), "to_ground_surface": ("ground",),
        "not_out_within_horizon": ("not out within the horizon",)}
#: Share of the exchanged water the reported depth holds above it.
DEPTH_SHARE = 0.9


def carried(fp: xr.Dataset) -> np.ndarray:
    """What each path carries: its volume (m^2) in a transient run, its weight (m^2/s) in a steady one."""
    return fp["volume"].values if "volume" in fp else fp["weight"].values


def hyporheic_block(fp: xr.Dataset) -> dict:
    """The ``hyporheic`` block of a run summary (SI; None where a figure does not exist)."""
    w = carried(fp)
    kind = fp["exit_kind"].values.astype(str)
    total = float(w.sum())
    block = {
        "paths": int(fp.sizes["path"]),
        "exchange_flux_m_per_s": fp.attrs["exchange_flux"],
        "median_residence_time_s": fp.attrs["median_residence_time"],
        "mean_residence_time_s": fp.attrs["mean_residence_time"],
        "residence_time_quantiles_s": {str(q): fp.attrs[f"residence_time_q{q:02d}"] for q in QUANTILES},
        f"depth_holding_{round(100 * DEPTH_SHARE)}_percent_m": weighted_quantile(fp["depth_reached"].values, w,
                                                                                 DEPTH_SHARE),
        "fate": {name: (float(w[np.isin(kind, kinds)].sum()) / total if total > 0 else None)
                 for name, kinds in FATE.items()},
        "horizon_s": fp.attrs["horizon"],
    }
    if "volume" in fp:
        block.update(bank_storage_return(fp))
    else:
        block["downwelling_m2_per_s"] = total
    return block


def returned_over_time(fp: xr.Dataset, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cumulative volume (m^2, m^3 per metre) of stream water that has entered the bed, and of
    that which has come back through the bed, by each of ``times`` (transient paths)."""
    release = fp["release_time"].values
    back = fp["exit_kind"].values.astype(str) == "bed"
    out_at = np.where(back, release + np.nan_to_num(fp["residence_time"].values, nan=np.inf), np.inf)
    vol = fp["volume"].values
    order_in, order_out = np.argsort(release), np.argsort(out_at)
    cum_in = np.concatenate([[0.0], np.cumsum(vol[order_in])])
    cum_out = np.concatenate([[0.0], np.cumsum(vol[order_out])])
    entered = cum_in[np.searchsorted(release[order_in], times, side="right")]
    returned = cum_out[np.searchsorted(out_at[order_out], times, side="right")]
    return entered, returned


def bank_storage_return(fp: xr.Dataset) -> dict:
    """When the stream water that went into the bed comes back: volume entered and returned by
    the end, and the quantiles of the return time (water that does not come back through the
    bed by the end counts as never)."""
    vol = fp["volume"].values
    back = fp["exit_kind"].values.astype(str) == "bed"
    t_back = np.where(back, fp["residence_time"].values, np.inf)
    entered = float(vol.sum())
    returned = float(vol[back].sum())
    return {
        "water_entered_m2": entered,
        "water_returned_m2": returned,
        "returned_fraction": returned / entered if entered > 0 else None,
        "return_time_quantiles_s": {str(q): weighted_quantile(t_back, vol, q / 100.0) for q in QUANTILES},
    }


def bedform_exchange_closed_form(scenario) -> float | None:
    """Mean downwelling flux (m/s) of bedform pumping over the whole bed, Elliott & Brooks (1997)
    for a flat bed of finite depth with no flow at its base, anisotropic by scaling x:
    ``sqrt(kh kv) k h_m tanh(k sqrt(kh / kv) d) / pi`` with ``k = 2 pi / wavelength``; None unless
    the scenario has a bedform over flat ground in a single zone (its own base flux, if any, is
    not included)."""
    stream = scenario.stream
    if stream is None or stream.bedform is None or len(scenario.zones) != 1:
        return None
    ground = np.asarray(scenario.ground)[:, 1]
    if np.ptp(ground) > 0.0:
        return None
    zone = scenario.zones[0]
    k = 2.0 * np.pi / stream.bedform.wavelength
    depth = float(ground[0] - scenario.grid.bottom)
    kp = k * np.sqrt(zone.kh / zone.kv)
    return float(np.sqrt(zone.kh * zone.kv) * k * abs(stream.bedform.amplitude) * np.tanh(kp * depth) / np.pi)


def median_residence_time(fp: xr.Dataset, x_range: tuple[float, float] | None = None) -> float:
    """Flux-weighted median residence time (s) of the water entering the bed, or only of the
    water entering between ``x_range = (a, b)``; inf when more than half of it is not out within
    the horizon, NaN when none enters there."""
    enter = fp["entry_x"].values
    chosen = np.ones(enter.size, dtype=bool) if x_range is None else (enter >= x_range[0]) & (enter <= x_range[1])
    left = fp["exit_kind"].values.astype(str) != "not out within the horizon"
    t = np.where(left, fp["time_tracked"].values, np.inf)
    return weighted_quantile(t[chosen], carried(fp)[chosen], 0.5)
