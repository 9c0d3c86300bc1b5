"""Plan files (TOML).

```
scenario = "calibrated.toml"       # relative to the plan file
n = 4                              # instruments to choose
target = "bed.kv"                  # "parameters", a free path, "exchange", "reach_total", "reversal:X"
length = "400 m"                   # channel length for "reach_total"
existing = "field"                 # optional: instruments kept (observations CSV or field sheets folder)
min_spacing = "5 m"                # between new instruments of one kind
max_per_transect = 2               # with a candidates table that has a transect column
pan_diameter = "57 cm"

[candidates]                       # generated over the submerged bed ...
seepage_spacing = "5 m"
piezometer_spacing = "10 m"
depths = ["10 cm", "20 cm", "30 cm"]
max_depth = "30 cm"                # push limit of hand-driven piezometers
# table = "candidates.csv"         # ... or listed: kind, x, depth[, transect, sigma, time]

[instruments]
seepage_relative_sd = 0.3
seepage_floor = "0.01 m/d"
head_resolution = "0.1 mm"

[[free]]                           # as in fit files; prior_sd sets the prior spread
path = "bed.kv"
low = "0.01 m/d"
high = "50 m/d"
```
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from .. import checks
from ..errors import InputError
from ..fit.spec import free_tables, observations_from, read_toml
from ..scenario import Scenario, load
from .candidates import DEFAULT_MAX_DEPTH, Instruments, check_candidates, generate

_KEYS = ["scenario", "n", "target", "length", "existing", "min_spacing", "max_per_transect", "pan_diameter",
         "candidates", "instruments", "free"]


@dataclass
class PlanSpec:
    """A validated plan file."""

    source: str
    scenario: Scenario
    n: int
    target: str
    length: float | None
    existing: pd.DataFrame | None
    min_spacing: float
    max_per_transect: int | None
    pan_diameter: float
    candidates: pd.DataFrame
    instruments: Instruments
    free: list[dict]
    depths: list[float]
    max_depth: float


def load_plan(path: str | Path) -> PlanSpec:
    """Read and check a plan file.

    Raises
    ------
    InputError
        Naming the plan file and the key.
    """
    path = Path(path)
    source = str(path)
    d = read_toml(path, "plan file")
    try:
        checks.reject_unknown(d, _KEYS, where="top level")
        scen = load(path.parent / checks.text(d, "scenario", "top level"))
        n = checks.integer(d, "n", "top level", low=1, high=200)
        target = checks.text(d, "target", "top level", default="parameters")
        length = checks.quantity(d, "length", "length", "top level", default=None, low=0.0, low_inclusive=False)
        min_spacing = checks.quantity(d, "min_spacing", "length", "top level", default=0.0, low=0.0)
        mpt = d.get("max_per_transect")
        mpt = None if mpt is None else checks.integer(d, "max_per_transect", "top level", low=1)
        pan = checks.quantity(d, "pan_diameter", "length", "top level", default=0.57, low=0.0, low_inclusive=False)
        c = checks.table(d, "candidates", "top level", required=True)
        checks.reject_unknown(c, ["seepage_spacing", "piezometer_spacing", "depths", "max_depth", "table"],
                              where="[candidates]")
        max_depth = checks.quantity(c, "max_depth", "length", "[candidates]", default=DEFAULT_MAX_DEPTH,
                                    low=0.0, low_inclusive=False)
        depths_raw = c.get("depths", [0.1, 0.2, max_depth])
        if not isinstance(depths_raw, list) or not depths_raw:
            raise InputError("depths must be a list of depths below the bed", where="[candidates]")
        depths = [checks.quantity({"depths": v}, "depths", "length", "[candidates]", low=0.0, low_inclusive=False)
                  for v in depths_raw]
        ins = checks.table(d, "instruments", "top level")
        checks.reject_unknown(ins, ["seepage_relative_sd", "seepage_floor", "head_resolution"], where="[instruments]")
        instruments = Instruments(
            checks.number(ins, "seepage_relative_sd", "[instruments]", default=0.3, low=0.0, high=5.0),
            checks.quantity(ins, "seepage_floor", "velocity", "[instruments]", default=0.01 / 86400.0, low=0.0),
            checks.quantity(ins, "head_resolution", "length", "[instruments]", default=1e-4, low=0.0,
                            low_inclusive=False, high=0.1))
    except InputError as err:
        raise err.located(source=source) from None
    if "table" in c:
        tpath = path.parent / str(c["table"])
        if not tpath.is_file():
            raise InputError("candidate table not found", source=str(tpath))
        try:
            table = pd.read_csv(tpath)
        except UnicodeDecodeError:
            raise InputError("not a UTF-8 text file (save the candidates as CSV in UTF-8)", source=str(tpath)) from None
        except (pd.errors.EmptyDataError, pd.errors.ParserError) as err:
            raise InputError(f"cannot read as a candidate table: {err}", source=str(tpath)) from None
        cand = check_candidates(table, str(tpath), max_depth)
    else:
        from ..solve.section import discretise

        sec = discretise(scen)
        wet = sec.submerged(0.0)
        if not wet.any():
            raise InputError("the scenario has no submerged bed at t = 0 to place instruments on", source=source,
                             where="[candidates]")
        try:
            sspace = checks.quantity(c, "seepage_spacing", "length", "[candidates]", default=0.0, low=0.0)
            pspace = checks.quantity(c, "piezometer_spacing", "length", "[candidates]", default=0.0, low=0.0)
            cand = generate(sec.grid.xc[wet], sspace, pspace, depths, max_depth)
        except InputError as err:
            raise err.located(source=source) from None
    existing = None
    if "existing" in d:
        existing = observations_from(path.parent / str(d["existing"]), source)
    free = free_tables(d, source, scen)
    return PlanSpec(source, scen, n, target, length, existing, min_spacing, mpt, pan, cand, instruments, free, depths,
                    max_depth)
