"""Plan files (TOML); every key is described in docs/planning.md.

```
fit = "../project/fit"             # optional: a fit output folder to start from (relative to the
                                   # plan file); without it a fit is looked for beside the plan;
                                   # fit = false starts from the scenario's values
scenario = "calibrated.toml"       # relative to the plan file (default with a fit: its calibrated.toml)
n = 4                              # instruments to choose
target = "bed.kv"                  # "parameters", a free path, "exchange", "reach_total", "reversal:X", "residence_time[:A:B]"
length = "400 m"                   # channel length for "reach_total"
existing = "field"                 # optional: instruments kept that the fit did not use
min_spacing = "5 m"                # between new instruments of one kind
max_per_transect = 2               # with a candidates table that has a transect column
pan_diameter = "57 cm"
reading_time = "6 h"               # transient scenarios: when the instruments are read

[candidates]                       # generated over the submerged bed ...
seepage_spacing = "5 m"            # > 0; leave out for no seepage meters
piezometer_spacing = "10 m"        # > 0; leave out for no piezometers
depths = ["10 cm", "20 cm", "30 cm"]
max_depth = "30 cm"                # push limit of hand-driven piezometers
logger_spacing = "10 m"            # > 0; leave out for no temperature logger pairs
logger_depths = ["5 cm", "15 cm"]  # the two sensors of a pair below the bed
logger_max_depth = "50 cm"         # push limit of a logger rod
# table = "candidates.csv"         # ... or listed: kind, x, depth[, transect, sigma, time,
                                   #   shallow_depth, deep_depth]

[instruments]
seepage_relative_sd = 0.3
seepage_floor = "0.01 m/d"
head_resolution = "0.1 mm"
logger_accuracy = "0.1 degC"       # +/- of a temperature sensor
daily_amplitude = "2 degC"         # of the stream temperature (default: the scenario's [heat] wave)

[[free]]                           # as in fit files (default with a fit: the fit's parameters)
path = "bed.kv"
low = "0.01 m/d"
high = "50 m/d"
```
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from bedflux.scenario import checks
from bedflux.errors import InputError
from bedflux.calibration.spec import free_tables, observations_from, read_toml
from bedflux.scenario.spec import Scenario, load
from bedflux.planning.candidates import (DEFAULT_LOGGER_DEPTHS, DEFAULT_LOGGER_MAX_DEPTH, DEFAULT_MAX_DEPTH,
                                         Instruments, check_candidates, generate)
from bedflux.planning.fit_start import FitStart, fits_beside, read_fit

_KEYS = ["fit", "scenario", "n", "target", "length", "existing", "min_spacing", "max_per_transect", "pan_diameter",
         "reading_time", "candidates", "instruments", "free"]
CANDIDATE_KEYS = ["seepage_spacing", "piezometer_spacing", "depths", "max_depth", "logger_spacing", "logger_depths",
                  "logger_max_depth", "table"]
INSTRUMENT_KEYS = ["seepage_relative_sd", "seepage_floor", "head_resolution", "logger_accuracy", "daily_amplitude"]


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
    free: list[dict] | None
    depths: list[float]
    max_depth: float
    fit: FitStart | None = None
    reading_time: float | None = None
    logger_max_depth: float = DEFAULT_LOGGER_MAX_DEPTH


def _fit(d: dict, path: Path, source: str, output: Path | None) -> FitStart | None:
    """The fit a plan starts from: the ``fit`` key, else one found beside the plan, else None."""
    value = d.get("fit")
    if value is False:
        return None
    if isinstance(value, str) and value:
        return read_fit(path.parent / value, source, "fit")
    if value is not None:
        raise InputError(f"fit = {value!r} is not allowed: give the folder of a fit's outputs (text, relative to "
                         "the plan file), or false to start from the scenario's values", source=source, where="fit")
    scen_path = path.parent / d["scenario"] if isinstance(d.get("scenario"), str) else None
    title = load(scen_path).title if scen_path is not None and scen_path.is_file() else ""
    found = fits_beside(scen_path, output, title)
    if len(found) > 1:
        raise InputError(f"several fits of this scenario lie beside the plan ({', '.join(str(f) for f in found)}): "
                         "name one with fit = \"FOLDER\", or write fit = false", source=source, where="fit")
    return read_fit(found[0], source, "fit") if found else None


def load_plan(path: str | Path, output: str | Path | None = None) -> PlanSpec:
    """Read and check a plan file.

    Parameters
    ----------
    path
        The plan file.
    output
        The plan's output folder: a fit among its siblings is one found beside the plan.

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
        fit = _fit(d, path, source, None if output is None else Path(output))
        if "scenario" in d or fit is None:
            scen = load(path.parent / checks.text(d, "scenario", "top level"))
        else:
            scen = load(fit.folder / "calibrated.toml")
        reading_time = checks.quantity(d, "reading_time", "time", "top level", default=None, low=0.0)
        n = checks.integer(d, "n", "top level", low=1, high=200)
        target = checks.text(d, "target", "top level", default="parameters")
        length = checks.quantity(d, "length", "length", "top level", default=None, low=0.0, low_inclusive=False)
        min_spacing = checks.quantity(d, "min_spacing", "length", "top level", default=0.0, low=0.0)
        mpt = d.get("max_per_transect")
        mpt = None if mpt is None else checks.integer(d, "max_per_transect", "top level", low=1)
        pan = checks.quantity(d, "pan_diameter", "length", "top level", default=0.57, low=0.0, low_inclusive=False)
        c = checks.table(d, "candidates", "top level", required=True)
        checks.reject_unknown(c, CANDIDATE_KEYS, where="[candidates]")
        max_depth = checks.quantity(c, "max_depth", "length", "[candidates]", default=DEFAULT_MAX_DEPTH,
                                    low=0.0, low_inclusive=False)
        depths_raw = c.get("depths", [0.1, 0.2, max_depth])
        if not isinstance(depths_raw, list) or not depths_raw:
            raise InputError("depths must be a list of depths below the bed", where="[candidates]")
        depths = [checks.quantity({"depths": v}, "depths", "length", "[candidates]", low=0.0, low_inclusive=False)
                  for v in depths_raw]
        logger_max_depth = checks.quantity(c, "logger_max_depth", "length", "[candidates]",
                                           default=DEFAULT_LOGGER_MAX_DEPTH, low=0.0, low_inclusive=False, high=5.0)
        logger_raw = c.get("logger_depths", list(DEFAULT_LOGGER_DEPTHS))
        if not isinstance(logger_raw, list) or len(logger_raw) != 2:
            raise InputError("logger_depths must be a list of the two sensor depths of a pair below the bed, "
                             "shallow first, e.g. [\"5 cm\", \"15 cm\"]", where="[candidates]")
        logger_depths = tuple(checks.quantity({"logger_depths": v}, "logger_depths", "length", "[candidates]")
                              for v in logger_raw)
        ins = checks.table(d, "instruments", "top level")
        checks.reject_unknown(ins, INSTRUMENT_KEYS, where="[instruments]")
        default = Instruments()
        instruments = Instruments(
            checks.number(ins, "seepage_relative_sd", "[instruments]", default=default.seepage_relative_sd,
                          low=0.0, high=5.0),
            checks.quantity(ins, "seepage_floor", "velocity", "[instruments]", default=default.seepage_floor, low=0.0),
            checks.quantity(ins, "head_resolution", "length", "[instruments]", default=default.head_resolution,
                            low=0.0, low_inclusive=False, high=0.1),
            checks.quantity(ins, "logger_accuracy", "temperature_difference", "[instruments]",
                            default=default.logger_accuracy, low=0.0, low_inclusive=False, high=5.0),
            checks.quantity(ins, "daily_amplitude", "temperature_difference", "[instruments]", default=None,
                            low=0.0, low_inclusive=False, high=30.0))
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
        cand = check_candidates(table, str(tpath), max_depth, logger_max_depth)
    else:
        from bedflux.forward.geometry import bed_geometry

        geo = bed_geometry(scen, 0.0)
        wet = geo.submerged
        if not wet.any():
            raise InputError("the scenario has no submerged bed at t = 0 to place instruments on", source=source,
                             where="[candidates]")
        try:
            sspace = checks.quantity(c, "seepage_spacing", "length", "[candidates]", default=None)
            pspace = checks.quantity(c, "piezometer_spacing", "length", "[candidates]", default=None)
            lspace = checks.quantity(c, "logger_spacing", "length", "[candidates]", default=None)
            cand = generate(geo.x[wet], sspace, pspace, depths, max_depth, lspace, logger_depths, logger_max_depth)
        except InputError as err:
            raise err.located(source=source) from None
    existing = None
    if "existing" in d:
        existing = observations_from(path.parent / str(d["existing"]), source, scen)
    free = free_tables(d, source, scen) if "free" in d or fit is None else None
    return PlanSpec(source, scen, n, target, length, existing, min_spacing, mpt, pan, cand, instruments, free, depths,
                    max_depth, fit, reading_time, logger_max_depth)
