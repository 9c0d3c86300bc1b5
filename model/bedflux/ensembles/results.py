"""The ensemble Dataset: members' answers along a ``member`` dimension.

Variables (SI): ``parameter_value`` (member, parameter) with the drawn values; ``exchange`` and
``stage`` (member[, time]); ``bed_flux`` (member[, time], x); for transient runs the events
(member): ``reversal_start``, ``reversal_end``, ``reversal_duration``, ``bank_storage``,
``returned_volume``, ``peak_losing_exchange``, ``penetration_depth``; ``failed`` and ``failure``
(the reason, "" for a member that ran) and ``run_seconds``. A failed member's answers are NaN.
"""
from __future__ import annotations

import json
from typing import Sequence

import numpy as np
import xarray as xr

from bedflux.version import __version__
from bedflux.ensembles.members import EVENTS, MemberResult
from bedflux.ensembles.spec import EnsembleSpec

#: name -> (units, long name)
VARIABLES = {
    "parameter_value": ("SI", "drawn value of each uncertain parameter"),
    "exchange": ("m2 s-1", "net exchange with the stream per metre of channel, positive when gaining"),
    "stage": ("m", "stream stage"),
    "bed_flux": ("m s-1", "flux through the submerged bed, positive upward (gaining); NaN where dry"),
    "reversal_start": ("s", "start of the first reversal of the net exchange (NaN: none)"),
    "reversal_end": ("s", "end of the last reversal (NaN: none, or still reversed at the end of the run)"),
    "reversal_duration": ("s", "time the net exchange spends reversed"),
    "bank_storage": ("m3 m-1", "water the stream gave to the banks relative to the exchange at the start"),
    "returned_volume": ("m3 m-1", "water returned to the stream by the end of the run"),
    "peak_losing_exchange": ("m2 s-1", "most negative net exchange (0 when the reach never loses)"),
    "penetration_depth": ("m", "deepest point below the ground stream water reaches"),
    "failed": ("1", "1 where the member's run failed"),
    "failure": ("", "why the member failed (empty when it ran)"),
    "run_seconds": ("s", "wall time of the member's run on its worker"),
}


def members_dataset(spec: EnsembleSpec, results: Sequence[MemberResult], x: np.ndarray,
                    times: np.ndarray | None) -> xr.Dataset:
    """The Dataset of ``results`` (any members, any order; sorted by member)."""
    results = sorted(results, key=lambda r: r.index)
    n = len(results)
    params = spec.parameters
    lead = ("member",) if times is None else ("member", "time")
    nt = () if times is None else (times.size,)
    exchange = np.full((n,) + nt, np.nan)
    stage = np.full((n,) + nt, np.nan)
    bed = np.full((n,) + nt + (x.size,), np.nan)
    events = {k: np.full(n, np.nan) for k in EVENTS}
    for k, r in enumerate(results):
        if r.failure:
            continue
        exchange[k], stage[k], bed[k] = r.exchange, r.stage, r.bed_flux
        for name, v in r.events.items():
            events[name][k] = v
    data = {
        "parameter_value": (("member", "parameter"),
                            np.array([[r.values.get(p, np.nan) for p in params] for r in results],
                                     dtype=float).reshape(n, len(params))),
        "exchange": (lead, exchange),
        "stage": (lead, stage),
        "bed_flux": (lead + ("x",), bed),
        "failed": (("member",), np.array([bool(r.failure) for r in results], dtype=np.int8)),
        "failure": (("member",), np.array([r.failure for r in results], dtype=object)),
        "run_seconds": (("member",), np.array([r.seconds for r in results])),
    }
    if times is not None:
        data.update({k: (("member",), v) for k, v in events.items()})
    coords = {"member": ("member", np.array([r.index for r in results], dtype=np.int64)),
              "parameter": ("parameter", np.array(params, dtype=object)),
              "x": ("x", x, {"units": "m", "long_name": "column centre along the section"})}
    if times is not None:
        coords["time"] = ("time", times, {"units": "s", "long_name": "time since start"})
    ds = xr.Dataset(data, coords=coords)
    for name, (units, long) in VARIABLES.items():
        if name in ds:
            ds[name].attrs.update({"units": units, "long_name": long} if units else {"long_name": long})
    ds.attrs.update(ensemble_attrs(spec))
    return ds


def ensemble_attrs(spec: EnsembleSpec) -> dict:
    """What the ensemble was: title, seed, members, distributions and fields (as JSON text)."""
    return {
        "title": f"ensemble of {spec.scenario.title}",
        "scenario_source": spec.scenario.source,
        "ensemble_source": spec.source,
        "seed": spec.seed,
        "members": spec.members,
        "seeding": "member i draws from numpy SeedSequence([seed, i])",
        "uncertain": json.dumps([{"path": p, "distribution": d.kind, **dict(d.params),
                                  "low": d.low, "high": d.high} for p, d in spec.uncertain]),
        "from_fit": spec.fit.source if spec.fit else "",
        "random_fields": json.dumps([vars(f) for f in spec.fields]),
        "sign_convention": "bed flux and exchange positive upward (gaining stream)",
        "bedflux_version": __version__,
    }
