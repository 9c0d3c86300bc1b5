"""Spatially correlated random fields over a zone, made with GSTools.

A field makes a zone's conductivity log-normal in space: in every cell the zone's value is
multiplied by ``10 ** (sd_log10 * Z)``, where ``Z`` is a stationary Gaussian field of mean 0 and
variance 1 with a covariance model (exponential, Gaussian or Matern) and correlation lengths
along the layering (x) and across it (z). The zone's value is then the median of the field, and
``sd_log10`` the standard deviation of its log10. GSTools (Mueller et al. 2022) draws ``Z`` by the
randomisation method (Heße et al. 2014) at the cell centres, from a seed that the member's seed
gives, so a member's field is the same on any worker.

Conditioning: ``condition = [{x, depth, k}, ...]`` gives measured conductivities (depth below the
ground at x), ``condition = "FOLDER"`` those of a field folder's slug tests (kh) or permeameters
(kv). The field then honours them: ``Z`` is simple kriging of the data's
``(log10 k - log10 median) / sd_log10`` plus a simulated residual (GSTools' ``CondSRF``: an
unconditioned field minus its own kriging from the data points; Journel & Huijbregts 1978), so
every member passes exactly through the data and keeps the full spread far from them. The
median is the zone's value in the member's scenario.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from bedflux.errors import InputError
from bedflux.scenario import checks

#: covariance model words -> GSTools model class names
MODELS = {"exponential": "Exponential", "gaussian": "Gaussian", "matern": "Matern"}
#: which properties a field multiplies: ``k`` is both kh and kv (the zone keeps its anisotropy)
PROPERTIES = {"kh": ("kh",), "kv": ("kv",), "k": ("kh", "kv")}
_KEYS = ["zone", "property", "sd_log10", "along", "across", "model", "nu", "condition"]


@dataclass(frozen=True)
class RandomField:
    """A log-normal random field over one zone's conductivity."""

    zone: str
    property: str
    sd_log10: float
    along: float
    across: float
    model: str = "exponential"
    nu: float = 1.5
    condition: tuple[tuple[float, float, float], ...] = ()

    @property
    def name(self) -> str:
        """``ZONE.PROPERTY`` as written in the ensemble file."""
        return f"{self.zone}.{self.property}"

    def covariance_model(self):
        """The GSTools covariance model (unit variance; length scales along x and z)."""
        import gstools as gs

        extra = {"nu": self.nu} if self.model == "matern" else {}
        return getattr(gs, MODELS[self.model])(dim=2, var=1.0, len_scale=[self.along, self.across], **extra)

    def standard_normal(self, x: np.ndarray, z: np.ndarray, seed: int,
                        data: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None) -> np.ndarray:
        """``Z`` (mean 0, variance 1) at the points ``(x, z)``; with ``data = (x, z, Z)``
        conditioned to pass through those values."""
        import gstools as gs

        pos = (np.ravel(x), np.ravel(z))
        if data is None:
            values = gs.SRF(self.covariance_model(), seed=int(seed))(pos)
        else:
            krige = gs.krige.Simple(self.covariance_model(), cond_pos=(data[0], data[1]), cond_val=data[2],
                                    mean=0.0)
            values = gs.CondSRF(krige)(pos, seed=int(seed))
        return np.asarray(values, dtype=float).reshape(np.shape(x))

    def multipliers(self, grid, seed: int, median: float | None = None) -> dict[str, np.ndarray]:
        """Per-cell multipliers ``ZONE.PROPERTY -> (nz, nx)`` (1 in inactive cells) for
        :func:`bedflux.section.materials.materials`; ``median`` (the zone's value) is needed
        when the field is conditioned."""
        active = grid.active
        xc = np.broadcast_to(grid.xc[None, :], active.shape)
        data = None
        if self.condition:
            cx, depth, k = (np.array(c) for c in zip(*self.condition))
            cz = np.interp(cx, grid.xc, grid.ground) - depth
            data = (cx, cz, (np.log10(k) - np.log10(median)) / self.sd_log10)
        m = np.ones(active.shape)
        m[active] = 10.0 ** (self.sd_log10 * self.standard_normal(xc[active], grid.z_centre[active], seed, data))
        return {f"{self.zone}.{p}": m for p in PROPERTIES[self.property]}


def parse_field(entry: Mapping[str, Any], where: str, zones: list[str]) -> RandomField:
    """A ``[[random_field]]`` table (or the API's dict) as a :class:`RandomField`.

    Raises
    ------
    InputError
        Naming ``where``: unknown keys or zone, a property other than kh, kv or k, a spread or
        length that is not positive, an unknown covariance model.
    """
    if not isinstance(entry, Mapping):
        raise InputError("must be a table with zone, property, sd_log10, along, across", where=where)
    entry = dict(entry)
    checks.reject_unknown(entry, _KEYS, where=where)
    zone = checks.text(entry, "zone", where)
    if zone not in zones:
        raise InputError(f"zone = {zone!r} is not a zone of the scenario; its zones are {', '.join(zones)}",
                         where=where)
    prop = checks.choice(entry, "property", list(PROPERTIES), where)
    sd = checks.number(entry, "sd_log10", where, low=0.0, high=3.0)
    if sd == 0:
        raise InputError("sd_log10 = 0 makes no field; give a spread in decades, e.g. 0.3", where=where)
    along = checks.quantity(entry, "along", "length", where, low=0.0, low_inclusive=False)
    across = checks.quantity(entry, "across", "length", where, low=0.0, low_inclusive=False)
    model = checks.choice(entry, "model", list(MODELS), where, default="exponential")
    nu = checks.number(entry, "nu", where, default=1.5, low=0.2, high=20.0)
    if "nu" in entry and model != "matern":
        raise InputError("nu (the smoothness) belongs to model = \"matern\" only", where=where)
    condition = _conditions(entry, prop, where)
    return RandomField(zone, prop, sd, along, across, model, nu, condition)


def _conditions(entry: dict, prop: str, where: str) -> tuple[tuple[float, float, float], ...]:
    """``condition = [{x, depth, k}, ...]`` as (x, depth, k) in SI, or ``condition = "FOLDER"``:
    the tests of a field folder (:mod:`bedflux.ensembles.field_conditions`)."""
    raw = entry.get("condition", [])
    if isinstance(raw, str):
        from bedflux.ensembles.field_conditions import field_conditions

        return field_conditions(raw, prop, where)
    if not isinstance(raw, list) or not all(isinstance(c, Mapping) for c in raw):
        raise InputError("condition is a list of measured values: condition = [{x = 3.0, depth = \"20 cm\", "
                         "k = \"0.5 m/d\"}, ...], or a field folder: condition = \"field\"", where=where)
    if raw and prop == "k":
        raise InputError("a conditioned field is on kh (slug tests) or kv (permeameters); property = \"k\" "
                         "cannot be conditioned", where=where)
    out = []
    for i, c in enumerate(raw):
        w = f"{where} condition {i + 1}"
        c = dict(c)
        checks.reject_unknown(c, ["x", "depth", "k"], where=w)
        out.append((checks.quantity(c, "x", "length", w), checks.quantity(c, "depth", "length", w, low=0.0),
                    checks.quantity(c, "k", "velocity", w, low=0.0, low_inclusive=False, high=1.0)))
    if len({(x, d) for x, d, _ in out}) < len(out):
        raise InputError("two conditioning values at the same place; give their mean once", where=where)
    return tuple(out)
