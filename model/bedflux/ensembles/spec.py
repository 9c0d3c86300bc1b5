"""Ensemble files (TOML) and the API's arguments, checked into one :class:`EnsembleSpec`.

```
scenario = "flood_pulse_bed.toml"   # relative to the ensemble file
members = 200
seed = 7
from_fit = "project/fit"            # optional: the calibrated values from a fit's posterior

[[uncertain]]
path = "bed.kv"                     # a scenario parameter path
distribution = "lognormal"          # lognormal (median, sd_log10), normal (mean, sd),
median = "0.3 m/d"                  # uniform (min, max), triangular (min, mode, max)
sd_log10 = 0.4
low = "0.001 m/d"                   # optional truncation (low and/or high)

[[random_field]]
zone = "bed"                        # a zone of the scenario
property = "k"                      # kh, kv, or k (both, keeping the zone's anisotropy)
sd_log10 = 0.3                      # spread of log10 K about the zone's value (its median)
along = "3 m"                       # correlation length along the layering (x)
across = "20 cm"                    # and across it (z)
model = "exponential"               # exponential, gaussian or matern (with nu)
condition = "field"                 # optional: a field folder (relative to this file), or
                                    # [{x, depth, k}, ...]; kh from slug tests, kv from permeameters
```

An optional top-level ``format = "netcdf"`` or ``"zarr"`` chooses how the members are stored
(default: by size, see :func:`bedflux.ensembles.outputs.store_format`).

Member ``i`` draws its values from ``numpy.random.default_rng(SeedSequence([seed, i]))``: first
one uniform number per ``[[uncertain]]`` entry in file order, then the fit's values, then one
seed per random field. A member's numbers therefore depend on ``seed`` and ``i`` alone.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np

from bedflux.errors import InputError
from bedflux.scenario import checks
from bedflux.scenario.inputfile import read_toml
from bedflux.scenario.spec import Scenario, load
from bedflux.calibration.display import dimension_of
from bedflux.ensembles.distributions import Distribution, parse_distribution
from bedflux.ensembles.fields import RandomField, parse_field
from bedflux.ensembles.posterior import FitPosterior, read_fit

_KEYS = ["scenario", "members", "seed", "from_fit", "uncertain", "random_field", "format"]
#: how the members may be stored (``auto``: by size)
FORMATS = ("netcdf", "zarr")
#: most members one ensemble may have
MEMBERS_MAX = 1_000_000


@dataclass(frozen=True)
class MemberDraw:
    """What member ``index`` runs with: values by path (SI) and one seed per random field."""

    index: int
    values: dict[str, float]
    field_seeds: tuple[int, ...]


@dataclass(frozen=True)
class EnsembleSpec:
    """A checked ensemble: the scenario, the member count and seed, and what varies."""

    scenario: Scenario
    members: int
    seed: int
    uncertain: tuple[tuple[str, Distribution], ...] = ()
    fit: FitPosterior | None = None
    fields: tuple[RandomField, ...] = ()
    source: str = "ensemble"
    format: str = "auto"

    @property
    def parameters(self) -> list[str]:
        """Paths of the drawn values, in drawing order."""
        return [p for p, _ in self.uncertain] + (list(self.fit.paths) if self.fit else [])

    def draw(self, index: int) -> MemberDraw:
        """The draws of member ``index`` (from ``SeedSequence([seed, index])``)."""
        rng = np.random.default_rng(np.random.SeedSequence([self.seed, index]))
        values = {p: d.draw(rng) for p, d in self.uncertain}
        if self.fit is not None:
            values.update(self.fit.draw(rng))
        seeds = tuple(int(s) for s in rng.integers(0, 2**31 - 1, size=len(self.fields)))
        return MemberDraw(index, values, seeds)


def build_spec(scenario: Scenario, members: int, uncertain: Sequence[Mapping[str, Any]] = (),
               random_fields: Sequence[Mapping[str, Any]] = (), seed: int = 0,
               from_fit: str | Path | None = None, source: str = "ensemble") -> EnsembleSpec:
    """Check the API's arguments (dicts keyed as in the file; values SI or with units).

    Raises
    ------
    InputError
        Naming ``source`` and the entry: a bad member count or seed, an unknown parameter path,
        a path given twice, a bad distribution or random field.
    """
    try:
        if isinstance(members, bool) or not isinstance(members, (int, np.integer)) or not 1 <= members <= MEMBERS_MAX:
            raise InputError(f"members = {members!r} must be a whole number from 1 to {MEMBERS_MAX}",
                             where="members")
        if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
            raise InputError(f"seed = {seed!r} must be a whole number >= 0", where="seed")
        drawn = tuple(_uncertain(scenario, entry, i) for i, entry in enumerate(uncertain))
        fit = read_fit(from_fit) if from_fit is not None else None
        paths = [p for p, _ in drawn] + (list(fit.paths) if fit else [])
        twice = sorted({p for p in paths if paths.count(p) > 1})
        if twice:
            raise InputError(f"{twice[0]} is drawn twice (two [[uncertain]] entries, or one and the fit's "
                             "values); keep one", where="uncertain")
        for path in fit.paths if fit else ():
            _check_path(scenario, path, fit.draw(np.random.default_rng(0))[path], "from_fit")
        fields = tuple(parse_field(f, f"random field {i + 1}", scenario.zone_names())
                       for i, f in enumerate(random_fields))
        names = [f.name for f in fields]
        if len(set(names)) < len(names):
            raise InputError("two random fields on the same zone and property; keep one", where="random_field")
    except InputError as err:
        raise err.located(source=source) from None
    return EnsembleSpec(scenario, int(members), int(seed), drawn, fit, fields, source)


def _uncertain(scenario: Scenario, entry: Mapping[str, Any], i: int) -> tuple[str, Distribution]:
    if not isinstance(entry, Mapping) or not isinstance(entry.get("path"), str):
        raise InputError("each [[uncertain]] needs path = \"ZONE.PROPERTY\" (e.g. \"bed.kv\") and a distribution",
                         where=f"uncertain {i + 1}")
    path = entry["path"]
    where = f"uncertain '{path}'"
    _known_path(scenario, path, where)
    dist = parse_distribution(entry, where, dimension_of(path))
    _check_path(scenario, path, dist.centre(), where)
    return path, dist


def _known_path(scenario: Scenario, path: str, where: str) -> None:
    """The path must name a value of the scenario (a table value such as ``stream.pulse.peak``
    has no resolved SI value of its own but is a known path)."""
    try:
        scenario.value_at(path)
    except InputError as err:
        if "has no single SI value" not in err.message:
            raise InputError(err.message, where=where) from None


def _check_path(scenario: Scenario, path: str, value: float, where: str) -> None:
    """The path must name a value of the scenario, and the distribution's centre must be allowed there."""
    try:
        scenario.with_values({path: value})
    except InputError as err:
        raise InputError(err.message, where=f"{where} ({err.where or path})") from None


def load_ensemble(path: str | Path) -> EnsembleSpec:
    """Read and check an ensemble file.

    Raises
    ------
    InputError
        Naming the file and the key or entry.
    """
    path = Path(path)
    source = str(path)
    d = read_toml(path, "ensemble file")
    try:
        checks.reject_unknown(d, _KEYS, where="top level")
        scen = checks.text(d, "scenario", "top level")
        members = checks.integer(d, "members", "top level", low=1, high=MEMBERS_MAX)
        seed = checks.integer(d, "seed", "top level", default=0, low=0)
        fit = checks.text(d, "from_fit", "top level", default=None)
        fmt = d.get("format", "auto")
        if "format" in d and fmt not in FORMATS:
            raise InputError(f"format = {fmt!r} is not allowed; use one of {', '.join(map(repr, FORMATS))} "
                             "(or leave it out: zarr above a size, netcdf below)", where="format")
        uncertain = _list_of_tables(d, "uncertain")
        fields = _list_of_tables(d, "random_field")
        if not uncertain and not fields and fit is None:
            raise InputError("nothing varies: give [[uncertain]] entries, [[random_field]] entries or from_fit",
                             where="top level")
        if fit is not None and not (path.parent / fit).is_dir():
            raise InputError(f"from_fit = {fit!r}: no such folder (looked for {(path.parent / fit).absolute()}; "
                             "the path is relative to the ensemble file's folder)", where="from_fit")
    except InputError as err:
        raise err.located(source=source) from None
    scenario = load(path.parent / scen)
    fields = [{**f, "condition": str(path.parent / f["condition"])} if isinstance(f.get("condition"), str) else f
              for f in fields]
    return replace(build_spec(scenario, members, uncertain, fields, seed,
                              None if fit is None else path.parent / fit, source), format=fmt)


def _list_of_tables(d: dict, key: str) -> list:
    value = d.get(key, [])
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        raise InputError(f"{key} entries are written [[{key}]] (a list of tables)", where="top level")
    return value
