"""The sites sheet: where each instrument stands (x along the reach, y across, bed elevation)."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from bedflux.errors import InputError
from bedflux.field.sheet_specs import SITES
from bedflux.field.sheets import Rejected, read_sheet


@dataclass(frozen=True)
class Sites:
    """Site ids with their coordinates (m) and optional transect and station labels."""

    ids: np.ndarray
    x: np.ndarray
    y: np.ndarray
    bed_elevation: np.ndarray
    transect: np.ndarray
    station: np.ndarray
    #: The sheet's optional per-site columns (bed thermal properties), by column name.
    optional: dict[str, np.ndarray] = field(default_factory=dict)

    def index(self, site_id: str) -> int:
        """Position of ``site_id`` in the arrays."""
        return int(np.flatnonzero(self.ids == site_id)[0])

    def known(self) -> set[str]:
        """The set of site ids."""
        return set(self.ids.tolist())


def read_sites(path: str | Path) -> Sites:
    """Read and check the sites sheet.

    Raises
    ------
    InputError
        For any bad row or a repeated site id: every reading hangs on its site, so a wrong site
        row would misplace readings silently.
    """
    rejected = Rejected()
    sheet = read_sheet(path, SITES, rejected)
    if rejected.rows:
        _, line, column, reason = rejected.rows[0]
        raise InputError(
            f"{reason} (every site must be valid: readings are placed by their site; "
            f"{len(rejected.rows)} bad row(s) in all)",
            sheet.source,
            f"line {line}" + (f", column '{column}'" if column else ""),
        )
    ids = sheet.texts["site"]
    seen: dict[str, int] = {}
    for k, s in enumerate(ids):
        if s in seen:
            raise InputError(f"site '{s}' is listed twice (first at line {seen[s]}); site ids must be unique",
                             sheet.source, f"line {sheet.line[k]}")
        seen[s] = int(sheet.line[k])
    n = sheet.numbers
    optional = {c: n[c] for c in ("thermal_conductivity", "heat_capacity", "porosity")}
    optional["sediment"] = sheet.texts["sediment"]
    optional["line"] = sheet.line
    return Sites(ids, n["x"], n["y"], n["bed_elevation"], sheet.texts["transect"], sheet.texts["station"],
                 optional)
