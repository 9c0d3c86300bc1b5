"""Writing an ensemble's outputs: ensemble.nc (or ensemble.zarr), the summary, the failed members and the figures."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr

from bedflux.outputs.atomic import write_text, write_with
from bedflux.outputs.files import write_result
from bedflux.ensembles.figures import ensemble_figures
from bedflux.ensembles.members import MemberResult
from bedflux.ensembles.summary import deterministic_answers, summarise, summary_text

#: estimated size above which an ensemble is stored as zarr unless the file or command says
#: otherwise (bytes, uncompressed)
ZARR_ABOVE = 2_000_000_000
#: bytes per member beyond its time series: the events, the values and the failure text
MEMBER_OVERHEAD = 400


def ensemble_size(members: int, times: int, columns: int, parameters: int) -> tuple[int, str]:
    """Estimated size of ensemble.nc in bytes, and how it was estimated (uncompressed)."""
    per_member = 8 * (times * (columns + 2) + parameters) + MEMBER_OVERHEAD
    return members * per_member, (f"{members:,} members x {times:,} output times x ({columns:,} columns + 2) "
                                  "x 8 bytes")


def store_format(chosen: str, size: int) -> str:
    """``netcdf`` or ``zarr``: ``chosen`` unless it is ``auto``, else zarr when the estimated
    ``size`` (bytes) is above :data:`ZARR_ABOVE`."""
    if chosen != "auto":
        return chosen
    return "zarr" if size > ZARR_ABOVE else "netcdf"


def write_ensemble(ds: xr.Dataset, outdir: Path, reference: MemberResult | None = None,
                   netcdf: bool = True) -> dict:
    """All outputs of ``bedflux ensemble`` into ``outdir`` (a staging folder); return the summary
    with its ``text``. Without ``netcdf`` the members are already in ``outdir/ensemble.zarr``."""
    transient = "time" in ds.dims
    if netcdf:
        write_result(ds, outdir / "ensemble.nc")
    det = deterministic_answers(reference, transient) if reference is not None else None
    s = summarise(ds, det or None)
    if reference is not None and reference.failure:
        s["deterministic_failure"] = reference.failure
    text = summary_text(s)
    write_text(outdir / "ensemble_summary.txt", text)
    write_text(outdir / "ensemble_summary.json", json.dumps(s, indent=2) + "\n")
    failed = pd.DataFrame([{"member": f["member"], "reason": f["reason"], **f["values"]} for f in s["failed"]],
                          columns=["member", "reason", *[str(p) for p in ds["parameter"].values]])
    write_with(outdir / "ensemble_failed.csv", lambda tmp: failed.to_csv(tmp, index=False))
    det_exchange = None
    if reference is not None and not reference.failure and transient:
        det_exchange = np.asarray(reference.exchange, dtype=float)
    ensemble_figures(ds, outdir, det_exchange)
    s["text"] = text
    return s
