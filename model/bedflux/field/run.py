"""``run_field``: a folder of field sheets to checked tables, observations and figures."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd

from ..outfolder import output_folder
from ..errors import InputError
from .. import plots
from .consistency import compare_methods
from .flags import Flags
from .kinds import DEFAULT_EFFICIENCY, SHEET_FILES, SITES
from .manometer import reduce_manometer
from .mapping import krige_bed_flux
from .observations import observation_table
from .recovery import reduce_permeameter, reduce_slug
from .seepage import reduce_seepage
from .sheets import Rejected, Sheet, read_sheet, reject_unknown_sites
from .sites import Sites, read_sites
from .velocity import head_from_velocity, reduce_velocity

#: A sheet losing more than this fraction of its rows is not trusted (a systematic slip).
MAX_REJECTED_FRACTION = 0.5


def _sheets(folder: Path) -> dict[str, Path]:
    if not folder.is_dir():
        raise InputError("is not a folder of field sheets", str(folder))
    found = {p.name: p for p in sorted(folder.glob("*.csv"))}
    unknown = [n for n in found if n not in SHEET_FILES]
    if unknown:
        raise InputError(
            f"unknown sheet '{unknown[0]}'; a sheets folder holds only: {', '.join(SHEET_FILES)}", str(folder)
        )
    if "sites.csv" not in found:
        raise InputError("the sites sheet 'sites.csv' is missing; every reading is placed by its site",
                         str(folder))
    if len(found) == 1:
        raise InputError("no reading sheets beside sites.csv; expected one or more of: "
                         + ", ".join(n for n in SHEET_FILES if n != "sites.csv"), str(folder))
    return found


def _read(path: Path, sites: Sites, rejected: Rejected) -> Sheet:
    sheet = read_sheet(path, SHEET_FILES[path.name], rejected)
    return reject_unknown_sites(sheet, sites.known(), rejected)


def _check_trust(sheet: Sheet, rejected: Rejected) -> None:
    lost = rejected.count(sheet.source)
    if lost == sheet.rows_read or lost > MAX_REJECTED_FRACTION * sheet.rows_read:
        first = next(r for r in rejected.rows if r[0] == sheet.source)
        raise InputError(
            f"{lost} of {sheet.rows_read} rows were rejected, so the sheet's result cannot be trusted "
            f"(first: line {first[1]}, {first[3]}); fix the sheet and run again",
            sheet.source,
        )


def _write_csv(frame: pd.DataFrame, path: Path) -> None:
    frame.to_csv(path, index=False, float_format="%.12g")


def _none_if_nan(v: float) -> float | None:
    return None if not np.isfinite(v) else float(v)


def run_field(sheets_dir: str | Path, outdir: str | Path, *, quiet: bool = False) -> dict:
    """Reduce a folder of field sheets and write tables, observations and figures.

    Parameters
    ----------
    sheets_dir
        Folder with ``sites.csv`` and one or more of ``seepage.csv``, ``manometer.csv``,
        ``slug.csv``, ``permeameter.csv``, ``velocity.csv`` (columns in docs/field.md).
    outdir
        Output folder; written all at once when the run succeeds, untouched when it fails.
    quiet
        If false, print a short summary.

    Returns
    -------
    dict
        The content of ``field_summary.json``.

    Raises
    ------
    InputError
        For a problem that makes the result untrustworthy: a missing or unknown sheet, a bad
        header or unit, a bad sites row, a mixed volume/mass sheet, or a sheet with no usable
        rows or with more than half of its rows rejected. Single bad rows are instead excluded
        and listed in ``rejected.csv``.
    """
    folder = Path(sheets_dir)
    found = _sheets(folder)
    sites = read_sites(found["sites.csv"])
    rejected, flags = Rejected(), Flags()
    sheets = {SHEET_FILES[name].kind: _read(path, sites, rejected)
              for name, path in found.items() if SHEET_FILES[name] is not SITES}

    for sheet in sheets.values():
        _check_trust(sheet, rejected)
    velocity = reduce_velocity(sheets["velocity"], rejected) if "velocity" in sheets else pd.DataFrame()
    vhead = {} if velocity.empty else {
        s: float(head_from_velocity(g["velocity [m/s]"].mean())) for s, g in velocity.groupby("site")}
    seep = reduce_seepage(sheets["seepage"], sites, rejected, flags) if "seepage" in sheets else None
    mano = (reduce_manometer(sheets["manometer"], sites, rejected, flags, vhead)
            if "manometer" in sheets else None)
    slug = reduce_slug(sheets["slug"], rejected, flags) if "slug" in sheets else pd.DataFrame(
        columns=["site", "k_hvorslev [m/s]"])
    perm = (reduce_permeameter(sheets["permeameter"], rejected, flags) if "permeameter" in sheets
            else pd.DataFrame(columns=["site", "kv [m/s]"]))
    for sheet in sheets.values():
        _check_trust(sheet, rejected)
    meters = seep.meters if seep else pd.DataFrame()
    piezos = mano.piezometers if mano else pd.DataFrame()
    comparison = compare_methods(meters, piezos, slug, perm, flags)
    observations = observation_table(meters, piezos)

    bed, map_note = None, ""
    if not meters.empty:
        try:
            bed = krige_bed_flux(meters["x [m]"], meters["y [m]"], meters["mean [m/s]"])
        except ValueError as err:
            map_note = f"no map: {err}"
    else:
        map_note = "no map: no seepage sheet"

    summary = _summary(folder, sheets, rejected, flags, meters, piezos, slug, perm, observations, bed,
                       map_note)
    with output_folder(outdir, "field") as stage:
        if seep:
            _write_csv(seep.readings, stage / "seepage_readings.csv")
            _write_csv(seep.meters, stage / "seepage_meters.csv")
            _write_csv(seep.transects, stage / "seepage_transects.csv")
            plots.transect_profiles(seep.meters, stage / "transect_profiles.png")
        if mano:
            _write_csv(mano.readings, stage / "manometer_readings.csv")
            _write_csv(mano.piezometers, stage / "piezometers.csv")
        if "slug" in sheets:
            _write_csv(slug, stage / "slug_tests.csv")
        if "permeameter" in sheets:
            _write_csv(perm, stage / "permeameter_tests.csv")
        if "velocity" in sheets:
            _write_csv(velocity, stage / "velocity_readings.csv")
        if bed is not None:
            plots.field_bed_map(bed, meters, stage / "bed_flux_map.png")
        if not comparison.empty:
            _write_csv(comparison, stage / "consistency.csv")
            plots.gradient_vs_flux(comparison, stage / "gradient_vs_flux.png")
        _write_csv(flags.frame(), stage / "flags.csv")
        _write_csv(pd.DataFrame(sorted(rejected.rows), columns=["file", "line", "column", "reason"]),
                   stage / "rejected.csv")
        _write_csv(observations, stage / "observations.csv")
        (stage / "field_summary.json").write_text(json.dumps(summary, indent=2) + "\n", encoding="utf-8")
    if not quiet:
        _print(summary)
    return summary


def _summary(folder: Path, sheets: dict[str, Sheet], rejected: Rejected, flags: Flags, meters: pd.DataFrame,
             piezos: pd.DataFrame, slug: pd.DataFrame, perm: pd.DataFrame, observations: pd.DataFrame,
             bed, map_note: str) -> dict:
    sheet_counts = {
        kind: {"file": Path(sh.source).name, "rows": sh.rows_read, "rejected": rejected.count(sh.source)}
        for kind, sh in sheets.items()
    }
    reach: dict = {"note": map_note} if bed is None else {
        "method": "ordinary kriging (pykrige), block-kriged mean over the rectangle the meters span",
        "variogram": bed.variogram,
        "area [m^2]": bed.area,
        "length [m]": float(np.ptp(bed.x)),
        "mean_flux [m/s]": bed.mean_flux,
        "mean_flux_sigma [m/s]": bed.mean_sigma,
        "total [m^3/s]": bed.total,
        "total_ci95 [m^3/s]": list(bed.total_interval),
        "per_metre_of_channel [m^2/s]": bed.total / float(np.ptp(bed.x)),
    }
    return {
        "sheets_folder": str(folder),
        "sign_convention": "flux and gradient positive upward: groundwater discharging into the stream",
        "units": "SI (m, s, m/s; gradients dimensionless)",
        "sheets": sheet_counts,
        "rejected_rows": len(rejected.rows),
        "flags": flags.counts(),
        "default_efficiency": {"value": DEFAULT_EFFICIENCY,
                               "source": "Belanger & Montgomery (1992), measured/actual in tank tests"},
        "meters": int(len(meters)),
        "piezometers": int(len(piezos)),
        "slug_tests": int(len(slug)),
        "permeameter_tests": int(len(perm)),
        "median_k_hvorslev [m/s]": _none_if_nan(float(slug["k_hvorslev [m/s]"].median())) if len(slug) else None,
        "median_kv_permeameter [m/s]": _none_if_nan(float(perm["kv [m/s]"].median())) if len(perm) else None,
        "observations": {k: int(v) for k, v in observations["kind"].value_counts().items()},
        "reach": reach,
    }


def _print(summary: dict) -> None:
    lines = [f"field sheets: {summary['sheets_folder']}"]
    for kind, c in summary["sheets"].items():
        lines.append(f"  {c['file']}: {c['rows']} rows, {c['rejected']} rejected")
    lines.append(f"  meters {summary['meters']}, piezometers {summary['piezometers']}, "
                 f"slug tests {summary['slug_tests']}, permeameter tests {summary['permeameter_tests']}")
    if summary["flags"]:
        lines.append("  flags: " + ", ".join(f"{k} {v}" for k, v in summary["flags"].items()))
    reach = summary["reach"]
    if "total [m^3/s]" in reach:
        lo, hi = reach["total_ci95 [m^3/s]"]
        lines.append(f"  reach total {reach['total [m^3/s]']:.3g} m^3/s (95 %: {lo:.3g} to {hi:.3g})")
    else:
        lines.append(f"  {reach['note']}")
    print("\n".join(lines))
