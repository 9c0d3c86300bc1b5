"""Fit files (TOML): the scenario, the observation table and the free parameters.

```
scenario = "reach.toml"            # relative to the fit file
observations = "field"             # an observations CSV, or a folder of field sheets
observation_times = ["0 d", "8 d"] # optional: only rows timed inside [a, b] (empty times kept)
kinds = ["seepage", "vhg"]         # optional: only rows of these kinds (default: every kind)
pan_diameter = "57 cm"             # seepage-meter footprint (default 0.57 m)
starts = 3                         # starting points (default 1)
seed = 1
sample = 0                         # posterior samples per walker with emcee (0: none)

[[free]]
path = "bed.kv"                    # a scenario parameter path
low = "0.01 m/d"
high = "50 m/d"
start = "1 m/d"                    # default: the scenario's value
log = true                         # default: true for kh, kv, specific_storage, leakance
prior = "2 m/d"                    # optional Gaussian prior and its spread (both or neither)
prior_sd = "1 m/d"
```
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from bedflux.scenario import checks, inputfile
from bedflux.errors import InputError
from bedflux.forward.observe import DEFAULT_PAN_DIAMETER, KINDS, check_observations, read_observations
from bedflux.scenario.spec import Scenario, load
from bedflux.forward.sensitivity import FreeParameter, free_parameters
from bedflux.calibration.display import dimension_of

_KEYS = ["scenario", "observations", "observation_times", "kinds", "pan_diameter", "starts", "seed", "sample",
         "free"]
_FREE_KEYS = ["path", "low", "high", "start", "log", "prior", "prior_sd"]


@dataclass
class FitSpec:
    """A validated fit file."""

    source: str
    scenario_path: Path
    scenario: Scenario
    observations: pd.DataFrame
    observations_source: str
    free: list[FreeParameter]
    pan_diameter: float
    starts: int
    seed: int
    sample: int


def observations_from(path: Path, source: str, scenario: Scenario | None = None) -> pd.DataFrame:
    """An observation table from a CSV file, or reduced from a folder of field sheets.

    From a folder, the rows of logger readings (``temperature``) are kept only when ``scenario``
    is None or has a ``[heat]`` table: a scenario without heat does not predict them.
    """
    if path.is_dir():
        from bedflux.field import reduce_field

        table = reduce_field(path).observations
        # A folder of sheets may yield kinds the model does not predict; the fit uses the kinds it
        # knows. A CSV table must hold known kinds only.
        known = [k for k in KINDS if k != "temperature" or scenario is None or scenario.heat is not None]
        table = table[table["kind"].isin(known)].reset_index(drop=True)
        return check_observations(table, f"{path} (field sheets)")
    if not path.exists():
        raise InputError(f"observations '{path}' not found (a CSV table or a folder of field sheets)",
                         source=source, where="observations")
    return read_observations(path)


def within_times(table: pd.DataFrame, window: tuple[float, float] | None, source: str) -> pd.DataFrame:
    """The rows of ``table`` timed inside ``window`` (s, both ends included); rows without a time
    (a steady table) are kept. ``window`` None keeps every row.

    Raises
    ------
    InputError
        Naming the fit file's ``observation_times`` when no row is left.
    """
    if window is None:
        return table
    t = table["time"]
    keep = t.isna() | ((t >= window[0]) & (t <= window[1]))
    if not keep.any():
        raise InputError(f"no observation is timed inside [{window[0]:g}, {window[1]:g}] s",
                         source=source, where="observation_times")
    return table[keep].reset_index(drop=True)


def of_kinds(table: pd.DataFrame, d: dict, source: str) -> pd.DataFrame:
    """The rows of ``table`` whose kind the fit file's ``kinds`` lists (every row without it).

    Raises
    ------
    InputError
        Naming ``kinds``: not a list of known kinds, or no row of them left.
    """
    if "kinds" not in d:
        return table
    kinds = d["kinds"]
    if not isinstance(kinds, list) or not kinds or any(k not in KINDS for k in kinds):
        raise InputError(f"kinds must be a list of observation kinds from {', '.join(KINDS)}; got {kinds!r}",
                         source=source, where="kinds")
    keep = table["kind"].isin(kinds)
    if not keep.any():
        why = ("; temperature rows are read only for a scenario with a [heat] table" if "temperature" in kinds
               else "")
        raise InputError(f"no observation of the kinds {', '.join(kinds)} is left{why}", source=source, where="kinds")
    return table[keep].reset_index(drop=True)


def read_toml(path: Path, what: str) -> dict:
    """A TOML file as a dict, or an InputError naming the file."""
    return inputfile.read_toml(path, what)


def free_tables(d: dict, source: str, scenario: Scenario | None = None) -> list[dict]:
    """The ``[[free]]`` tables of a fit or plan file as SI dicts (units parsed by parameter).

    With ``scenario``, each path is checked first, so an unknown path is reported as such.
    """
    raw = d.get("free")
    if not isinstance(raw, list) or not raw:
        raise InputError("at least one [[free]] parameter is required", source=source, where="top level")
    out = []
    for i, f in enumerate(raw):
        if not isinstance(f, dict) or "path" not in f:
            raise InputError("each [[free]] needs a path", source=source, where=f"free parameter {i + 1}")
        if not isinstance(f["path"], str):
            raise InputError(f"path must be text such as \"bed.kv\"; got {f['path']!r}", source=source,
                             where=f"free parameter {i + 1}")
        where = f"free parameter '{f['path']}'"
        if scenario is not None:
            try:
                scenario.value_at(f["path"])
            except InputError as err:
                raise InputError(err.message, source=source, where=where) from None
        try:
            checks.reject_unknown(f, _FREE_KEYS, where=where)
            item = {"path": str(f["path"])}
            for key in ("low", "high", "start", "prior", "prior_sd"):
                if key in f:
                    item[key] = checks.quantity(f, key, dimension_of(item["path"]), where)
            if "log" in f:
                item["log"] = checks.flag(f, "log", where)
        except InputError as err:
            raise err.located(source=source) from None
        out.append(item)
    return out


def load_fit(path: str | Path) -> FitSpec:
    """Read and check a fit file.

    Raises
    ------
    InputError
        Naming the fit file and key: unknown keys, missing scenario or observations, unknown
        parameter paths, bounds that exclude the start.
    """
    path = Path(path)
    source = str(path)
    d = read_toml(path, "fit file")
    try:
        checks.reject_unknown(d, _KEYS, where="top level")
        scen_name = checks.text(d, "scenario", "top level")
        obs_name = checks.text(d, "observations", "top level")
        window = checks.interval(d, "observation_times", "top level", dimension="time", default=None)
        pan = checks.quantity(d, "pan_diameter", "length", "top level", default=DEFAULT_PAN_DIAMETER,
                              low=0.0, low_inclusive=False, high=5.0)
        starts = checks.integer(d, "starts", "top level", default=1, low=1, high=100)
        seed = checks.integer(d, "seed", "top level", default=0, low=0)
        sample = checks.integer(d, "sample", "top level", default=0, low=0, high=1000000)
    except InputError as err:
        raise err.located(source=source) from None
    scenario = load(path.parent / scen_name)
    observations = observations_from(path.parent / obs_name, source, scenario)
    observations = within_times(of_kinds(observations, d, source), window, source)
    free_si = free_tables(d, source, scenario)
    free = free_parameters(scenario, free_si, source)
    return FitSpec(source, path.parent / scen_name, scenario, check_observations(observations, obs_name, scenario.transient),
                   str(path.parent / obs_name), free, pan, starts, seed, sample)
