"""Writing and reading run outputs: result.nc, summary.txt, summary.json."""
from __future__ import annotations

import os
import shutil
from pathlib import Path, PurePosixPath

import xarray as xr

from bedflux.outputs.atomic import write_text, write_with
from bedflux.outputs.manifest import safe_relative, sha256
from bedflux.scenario.spec import Scenario
from bedflux.outputs.summary import build_summary, summary_json


#: Attributes that measure the computer rather than the result; kept out of result.nc so that
#: two identical runs write identical files.
TIMING_ATTRS = ("factorization_seconds",)
#: netCDF-4 engine (HDF5 through h5py) used to write and read results.
ENGINE = "h5netcdf"
#: Lossless compression of every numeric variable: byte shuffle, then deflate at level 4.
COMPRESSION = {"zlib": True, "complevel": 4, "shuffle": True}


def write_result(ds: xr.Dataset, path: str | Path) -> Path:
    """Write the Dataset as netCDF-4 with lossless compression (deflate after a byte shuffle).

    netCDF-4 (HDF5) has none of netCDF-3's size limits, so large runs and ensembles fit. The
    file holds no time stamp (HDF5 object times are not recorded) and no timing attribute
    (:data:`TIMING_ATTRS`): two runs of the same scenario with the same bedflux and libraries
    write byte-identical files.
    """
    path = Path(path)
    out = ds.copy(deep=False)
    out.attrs = {k: v for k, v in ds.attrs.items() if k not in TIMING_ATTRS}
    encoding = {name: dict(COMPRESSION) for name, var in out.variables.items() if var.dtype.kind in "fiub"}
    write_with(path, lambda tmp: out.to_netcdf(tmp, engine=ENGINE, encoding=encoding))
    return path


def read_result(path: str | Path) -> xr.Dataset:
    """Read a result written by :func:`write_result` (fully loaded, file closed)."""
    with xr.open_dataset(path, engine=ENGINE) as ds:
        return ds.load()


def write_summary(ds: xr.Dataset, outdir: str | Path, hyporheic: dict | None = None,
                  refinement: dict | None = None) -> dict:
    """Write summary.txt and summary.json into ``outdir`` (with the exchange events of a
    transient run, also events.csv; with the ``hyporheic`` block of the run's flow paths, its
    lines before the budget closure; with a ``refinement`` check
    (:func:`bedflux.outputs.refinement.refinement_check`), its lines last); return the summary
    with its ``text``."""
    outdir = Path(outdir)
    s, text, table = build_summary(ds)
    if hyporheic is not None:
        from bedflux.outputs.hyporheic import hyporheic_lines

        s["hyporheic"] = hyporheic
        lines = text.splitlines()
        at = next((i for i, line in enumerate(lines) if line.startswith("water budget closure")), len(lines))
        text = "\n".join(lines[:at] + hyporheic_lines(hyporheic) + lines[at:]) + "\n"
    if refinement is not None:
        from bedflux.outputs.refinement import refinement_text

        s["refinement_check"] = refinement
        text = text.rstrip("\n") + "\n" + "\n".join(refinement_text(refinement)) + "\n"
    if table is not None:
        write_with(outdir / "events.csv", lambda tmp: table.to_csv(tmp, index=False))
    write_text(outdir / "summary.txt", text)
    write_text(outdir / "summary.json", summary_json(s))
    s["text"] = text
    return s


def referenced_files(scenario: Scenario) -> list[str]:
    """The CSV files a scenario reads (stage, side-head and stream-temperature series), relative to
    its folder."""
    raw = scenario.raw
    names = [(raw.get("stream") or {}).get("stage_csv"), (raw.get("heat") or {}).get("temperature_csv")]
    names += [side.get("head_csv") for side in (raw.get("sides") or {}).values() if isinstance(side, dict)]
    return [n for n in names if n]


def input_files(scenario: Scenario) -> list[Path]:
    """The scenario file and every CSV it reads."""
    base = Path(scenario.base_dir)
    return [Path(scenario.source)] + [base / n for n in referenced_files(scenario)]


def copy_inputs(outdir: Path, files: list[Path]) -> dict[str, dict[str, str]]:
    """Copy input files into ``outdir/inputs``, each under its own name.

    The first file (the scenario, fit or plan file) is stored under its name; the files it
    refers to under their path relative to its folder (``a/h.csv`` and ``b/h.csv`` stay apart);
    a file outside that folder, or a name already taken, gets a numbered name (``h-2.csv``).
    The same file named twice is stored once.

    Returns
    -------
    dict
        Stored name (relative to ``inputs/``) -> ``{"sha256": ..., "path": original path}``.
    """
    inputs = Path(outdir) / "inputs"
    inputs.mkdir(parents=True, exist_ok=True)
    stored: dict[str, dict[str, str]] = {}
    seen: set[Path] = set()
    for i, f in enumerate(files):
        original = Path(os.path.abspath(f))
        if original in seen:
            continue
        seen.add(original)
        base = Path(os.path.abspath(files[0])).parent
        rel = original.relative_to(base).as_posix() if i > 0 and original.is_relative_to(base) else original.name
        name = _unique(rel, {k.lower() for k in stored})
        dest = inputs / name
        dest.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(f, dest)
        stored[name] = {"sha256": sha256(dest), "path": str(original)}
    return stored


def _unique(name: str, taken: set[str]) -> str:
    """``name``, or ``stem-2.suffix``, ``stem-3.suffix``... when taken (compared without case)."""
    if not safe_relative(name):
        name = PurePosixPath(name).name.lstrip(".") or "input"
    p = PurePosixPath(name)
    candidate, i = name, 1
    while candidate.lower() in taken:
        i += 1
        candidate = str(p.with_name(f"{p.stem}-{i}{p.suffix}"))
    return candidate
