"""Writing and reading run outputs: result.nc, summary.txt, summary.json."""
from __future__ import annotations

import json
from pathlib import Path

import xarray as xr

from .atomic import write_text, write_with
from .summary import summarise, summary_text


def write_result(ds: xr.Dataset, path: str | Path) -> Path:
    """Write the Dataset as netCDF (classic format, readable by ``xarray.open_dataset``)."""
    path = Path(path)
    write_with(path, lambda tmp: ds.to_netcdf(tmp, engine="scipy"))
    return path


def read_result(path: str | Path) -> xr.Dataset:
    """Read a result written by :func:`write_result` (fully loaded, file closed)."""
    with xr.open_dataset(path, engine="scipy") as ds:
        return ds.load()


def write_summary(ds: xr.Dataset, outdir: str | Path) -> dict:
    """Write summary.txt and summary.json into ``outdir`` (with the exchange events of a
    transient run, also events.csv); return the summary with its ``text``."""
    outdir = Path(outdir)
    s = summarise(ds)
    text = summary_text(s)
    if "time" in ds.dims and ds.sizes["time"] > 1:
        from .events import events_text, exchange_events

        table, reach = exchange_events(ds)
        write_with(outdir / "events.csv", lambda tmp: table.to_csv(tmp, index=False))
        s["events"] = {k: (v if k != "reversals" else [list(r) for r in v]) for k, v in reach.items()}
        text += events_text(reach, table)
    if ds.attrs.get("partial"):
        s["partial"] = ds.attrs["partial"]
        text += f"PARTIAL RESULT: {ds.attrs['partial']}\n"
    write_text(outdir / "summary.txt", text)
    write_text(outdir / "summary.json", json.dumps(s, indent=2, allow_nan=True) + "\n")
    s["text"] = text
    return s
