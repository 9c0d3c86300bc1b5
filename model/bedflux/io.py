"""Writing and reading run outputs: result.nc, summary.txt, summary.json."""
from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import xarray as xr

from .atomic import write_text, write_with
from .scenario import Scenario
from .summary import build_summary, summary_json


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
    s, text, table = build_summary(ds)
    if table is not None:
        write_with(outdir / "events.csv", lambda tmp: table.to_csv(tmp, index=False))
    write_text(outdir / "summary.txt", text)
    write_text(outdir / "summary.json", summary_json(s))
    s["text"] = text
    return s


def referenced_files(scenario: Scenario) -> list[str]:
    """The CSV files a scenario reads (stage and side-head series), relative to its folder."""
    raw = scenario.raw
    names = [(raw.get("stream") or {}).get("stage_csv")]
    names += [side.get("head_csv") for side in (raw.get("sides") or {}).values() if isinstance(side, dict)]
    return [n for n in names if n]


def input_files(scenario: Scenario) -> list[Path]:
    """The scenario file and every CSV it reads."""
    base = Path(scenario.base_dir)
    return [Path(scenario.source)] + [base / n for n in referenced_files(scenario)]


def sha256(path: Path) -> str:
    """Hex SHA-256 of a file, read in blocks."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def copy_inputs(outdir: Path, files: list[Path]) -> dict[str, str]:
    """Copy input files into ``outdir/inputs``; return their SHA-256 by file name."""
    inputs = Path(outdir) / "inputs"
    inputs.mkdir(exist_ok=True)
    digests = {}
    for f in files:
        shutil.copy2(f, inputs / f.name)
        digests[f.name] = sha256(f)
    return digests
