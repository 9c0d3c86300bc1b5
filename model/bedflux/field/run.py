"""``run_field``: a folder of field sheets to checked tables, observations and figures."""
from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from bedflux.outputs.folder import output_folder
from bedflux.errors import InputError
from bedflux.outputs import figures as plots
from bedflux.field.thermal_plots import temperature_records, thermal_flux as thermal_flux_figure
from bedflux.field.thermal_summary import thermal_summary
from bedflux.field.consistency import compare_methods
from bedflux.field.flags import Flags
from bedflux.field.sheet_specs import DEFAULT_EFFICIENCY, SHEET_FILES, SITES
from bedflux.field.manometer import DEPTH_SIGMA, reduce_manometer
from bedflux.field.diagnosis import systematic_cause
from bedflux.field.mapping import BedMap, krige_bed_flux
from bedflux.field.observations import observation_table
from bedflux.field.recovery import add_ln_k_sigma, reduce_permeameter, reduce_slug
from bedflux.field.seepage import flagged_meters, reduce_seepage
from bedflux.field.sheets import Rejected, Sheet, read_sheet, reject_unknown_sites
from bedflux.field.sites import Sites, read_sites
from bedflux.field.loggers import reduce_loggers
from bedflux.field.temperature import TemperatureReduction, reduce_temperature
from bedflux.field.velocity import head_from_velocity, reduce_velocity

#: A sheet losing more than this fraction of its rows is not trusted (a systematic slip).
MAX_REJECTED_FRACTION = 0.5
#: Spreadsheet files that must be saved as CSV to be read.
_SPREADSHEETS = (".xlsx", ".xlsm", ".xls", ".ods", ".numbers")


def _why_not_read(path: Path) -> str:
    """Why a file of the sheets folder that is not a sheet is not read."""
    name = path.name
    as_sheet = f"{path.stem.lower()}.csv"
    if path.is_dir():
        return "a folder: sheets are read from the top level of the sheets folder only"
    if not path.is_file():
        return "not a regular file"
    if name.startswith("~$") or name.startswith(".~lock."):
        return "a spreadsheet program's lock file"
    if name.startswith("."):
        return "a hidden file"
    if path.suffix.lower() in _SPREADSHEETS:
        hint = f"'{as_sheet}'" if as_sheet in SHEET_FILES else "one of the sheet names"
        return f"a spreadsheet file, not CSV: save the sheet as CSV under {hint} to have it read"
    if as_sheet in SHEET_FILES:
        return f"named like a sheet but not a .csv file: rename it '{as_sheet}' to have it read"
    return "not a sheet: only " + ", ".join(SHEET_FILES) + " are read (any case)"


def _sheets(folder: Path) -> tuple[dict[str, Path], list[tuple[str, str]]]:
    """The sheets of ``folder`` by lower-case name, and every other entry with why it is not read."""
    if not folder.is_dir():
        raise InputError("is not a folder of field sheets", str(folder))
    found: dict[str, Path] = {}
    not_read: list[tuple[str, str]] = []
    for path in sorted(folder.iterdir(), key=lambda q: q.name):
        key = path.name.lower()
        if key in SHEET_FILES and path.is_file():
            if key in found:
                raise InputError(f"two files for one sheet: '{found[key].name}' and '{path.name}' (sheet names are "
                                 "read in any case); keep one", str(folder))
            found[key] = path
        elif path.suffix.lower() == ".csv" and path.is_file() and not path.name.startswith((".", "~$")):
            raise InputError(
                f"unknown sheet '{path.name}'; a sheets folder holds only: {', '.join(SHEET_FILES)} (any case), "
                "so a misnamed sheet is never skipped", str(folder))
        else:
            not_read.append((path.name, _why_not_read(path)))
    if "sites.csv" not in found:
        raise InputError("the sites sheet 'sites.csv' is missing; every reading is placed by its site",
                         str(folder))
    if len(found) == 1:
        raise InputError("no reading sheets beside sites.csv; expected one or more of: "
                         + ", ".join(n for n in SHEET_FILES if n != "sites.csv"), str(folder))
    return found, not_read


def _read(path: Path, sites: Sites, rejected: Rejected) -> Sheet:
    sheet = read_sheet(path, SHEET_FILES[path.name.lower()], rejected)
    return reject_unknown_sites(sheet, sites.known(), rejected)


def _check_trust(sheet: Sheet, rejected: Rejected, sites: Sites) -> None:
    lost = rejected.count(sheet.source)
    if lost == sheet.rows_read or lost > MAX_REJECTED_FRACTION * sheet.rows_read:
        raise InputError(
            f"{lost} of {sheet.rows_read} rows were rejected, so the sheet's result cannot be trusted; "
            f"{systematic_cause(sheet.source, rejected, sites.known())}. Fix the sheet and run again",
            sheet.source,
        )


def _write_csv(frame: pd.DataFrame, path: Path) -> None:
    frame.to_csv(path, index=False, float_format="%.12g")


def _none_if_nan(v: float) -> float | None:
    return None if not np.isfinite(v) else float(v)


def _reach(meters: pd.DataFrame) -> tuple[BedMap | None, dict]:
    """The kriged reach total of ``meters``, as a summary entry (a note when no map can be made)."""
    if meters.empty:
        return None, {"note": "no map: no seepage meters"}
    try:
        bed = krige_bed_flux(meters["x [m]"], meters["y [m]"], meters["mean [m/s]"])
    except ValueError as err:
        return None, {"note": f"no map: {err}", "meters": sorted(meters["site"].tolist())}
    length = float(np.ptp(bed.x))
    return bed, {
        "method": "ordinary kriging (pykrige), block-kriged mean over the rectangle the meters span",
        "meters": sorted(meters["site"].tolist()),
        "variogram": bed.variogram,
        "area [m^2]": bed.area,
        "length [m]": length,
        "mean_flux [m/s]": bed.mean_flux,
        "mean_flux_sigma [m/s]": bed.mean_sigma,
        "total [m^3/s]": bed.total,
        "total_ci95 [m^3/s]": list(bed.total_interval),
        "per_metre_of_channel [m^2/s]": bed.total / length,
    }


@dataclass
class FieldReduction:
    """Everything reduced from one folder of field sheets (tables in SI, as written by
    :func:`run_field`)."""

    sheets: dict[str, Sheet]
    seepage: object | None
    manometer: object | None
    slug: pd.DataFrame | None
    permeameter: pd.DataFrame | None
    velocity: pd.DataFrame
    meters: pd.DataFrame
    left_out: np.ndarray
    comparison: pd.DataFrame
    observations: pd.DataFrame
    flagged: pd.DataFrame
    flags: Flags
    rejected: Rejected
    not_read: list[tuple[str, str]]
    bed: BedMap | None
    summary: dict
    temperature: TemperatureReduction | None = None
    sites: Sites | None = None
    loggers: pd.DataFrame | None = None


def reduce_field(sheets_dir: str | Path, keep_flagged: bool = False) -> FieldReduction:
    """Reduce a folder of field sheets in memory (no files written); see :func:`run_field`."""
    folder = Path(sheets_dir)
    found, not_read = _sheets(folder)
    sites = read_sites(found["sites.csv"])
    rejected, flags = Rejected(), Flags()
    sheets = {SHEET_FILES[name].kind: _read(path, sites, rejected)
              for name, path in found.items() if SHEET_FILES[name] is not SITES}

    for sheet in sheets.values():
        _check_trust(sheet, rejected, sites)
    velocity = reduce_velocity(sheets["velocity"], rejected) if "velocity" in sheets else pd.DataFrame()
    vhead = {} if velocity.empty else {
        s: float(head_from_velocity(g["velocity [m/s]"].mean())) for s, g in velocity.groupby("site")}
    seep = reduce_seepage(sheets["seepage"], sites, rejected, flags) if "seepage" in sheets else None
    mano = (reduce_manometer(sheets["manometer"], sites, rejected, flags, vhead)
            if "manometer" in sheets else None)
    slug = reduce_slug(sheets["slug"], rejected, flags) if "slug" in sheets else None
    perm = reduce_permeameter(sheets["permeameter"], rejected, flags) if "permeameter" in sheets else None
    temp = reduce_temperature(sheets["temperature"], sites, rejected, flags) if "temperature" in sheets else None
    loggers, logger_origin = reduce_loggers(sheets["logger"], sites, rejected) if "logger" in sheets else (None, None)
    if logger_origin is not None and temp is not None and temp.origin is not None and temp.origin != logger_origin:
        # one clock for the campaign: the temperature sheet's date-time origin
        loggers["time [s]"] += (pd.Timestamp(logger_origin) - pd.Timestamp(temp.origin)).total_seconds()
        logger_origin = temp.origin
    for sheet in sheets.values():
        _check_trust(sheet, rejected, sites)
    between = {"seepage meters": seep.between} if seep else {}
    if slug is not None:
        between["slug tests (ln K)"] = add_ln_k_sigma(slug, "k_hvorslev [m/s]")
    if perm is not None:
        between["permeameter tests (ln Kv)"] = add_ln_k_sigma(perm, "kv [m/s]")
    meters = seep.meters if seep else pd.DataFrame()
    piezos = mano.piezometers if mano else pd.DataFrame()
    slug_k = slug if slug is not None else pd.DataFrame(columns=["site", "k_hvorslev [m/s]"])
    perm_k = perm if perm is not None else pd.DataFrame(columns=["site", "kv [m/s]"])
    comparison = compare_methods(meters, piezos, slug_k, perm_k, flags)
    observations, flagged = observation_table(meters, piezos, keep_flagged=keep_flagged,
                                              thermal=temp.fluxes if temp else None, loggers=loggers)

    left_out = flagged_meters(meters)
    bed_all, reach_all = _reach(meters)
    bed_clean, reach_clean = _reach(meters[~left_out]) if left_out.any() else (bed_all, reach_all)
    bed = bed_all if keep_flagged else bed_clean
    summary = _summary(folder, sheets, rejected, flags, meters, piezos, slug_k, perm_k, observations, flagged,
                       keep_flagged, reach_all, reach_clean, between, not_read)
    if temp is not None:
        summary["temperature"] = thermal_summary(temp, meters if keep_flagged else meters[~left_out], sites)
    if logger_origin is not None:
        summary["logger_time_origin"] = logger_origin
    return FieldReduction(sheets, seep, mano, slug, perm, velocity, meters, left_out, comparison, observations,
                          flagged, flags, rejected, not_read, bed, summary, temp, sites, loggers)


def run_field(sheets_dir: str | Path, outdir: str | Path, *, quiet: bool = False,
              keep_flagged: bool = False) -> dict:
    """Reduce a folder of field sheets and write tables, observations and figures.

    Parameters
    ----------
    sheets_dir
        Folder with ``sites.csv`` and one or more of ``seepage.csv``, ``manometer.csv``,
        ``slug.csv``, ``permeameter.csv``, ``velocity.csv`` (columns in docs/field.md; names
        in any case). Every other file of the folder is listed, with why it was not read.
    outdir
        Output folder; written all at once when the run succeeds, untouched when it fails.
    quiet
        If false, print a short summary.
    keep_flagged
        Keep the observations of flagged meters and piezometers (robust outliers, scattered
        repeats, gradients within the velocity head) in ``observations.csv``; by default they
        are left out and listed in ``flagged_observations.csv``.

    Returns
    -------
    dict
        The content of ``field_summary.json``.

    Raises
    ------
    InputError
        For a problem that makes the result untrustworthy: a missing or unknown sheet, two files
        for one sheet, a bad header or unit, a value outside its plausible range, a bad sites
        row, a mixed volume/mass sheet, or a sheet with no usable rows or with more than half of
        its rows rejected (the message names the likely systematic cause). Single bad rows are
        instead excluded and listed in ``rejected.csv``.
    """
    r = reduce_field(sheets_dir, keep_flagged)
    seep, mano, slug, perm, sheets = r.seepage, r.manometer, r.slug, r.permeameter, r.sheets
    meters, left_out, comparison, flags, rejected = r.meters, r.left_out, r.comparison, r.flags, r.rejected
    with output_folder(outdir, "field") as stage:
        if seep:
            _write_csv(seep.readings, stage / "seepage_readings.csv")
            _write_csv(seep.meters, stage / "seepage_meters.csv")
            _write_csv(seep.transects, stage / "seepage_transects.csv")
            plots.transect_profiles(seep.meters, stage / "transect_profiles.png")
        if mano:
            _write_csv(mano.readings, stage / "manometer_readings.csv")
            _write_csv(mano.piezometers, stage / "piezometers.csv")
        if slug is not None:
            _write_csv(slug, stage / "slug_tests.csv")
        if perm is not None:
            _write_csv(perm, stage / "permeameter_tests.csv")
        if "velocity" in sheets:
            _write_csv(r.velocity, stage / "velocity_readings.csv")
        if r.temperature is not None:
            _write_csv(r.temperature.fluxes, stage / "thermal_flux.csv")
            temperature_records(r.temperature.readings, stage / "temperature_records.png")
            thermal_flux_figure(r.temperature.fluxes, meters, stage / "thermal_flux.png")
        if r.loggers is not None:
            _write_csv(r.loggers, stage / "logger_readings.csv")
        if r.bed is not None:
            plots.field_bed_map(r.bed, meters if keep_flagged else meters[~left_out], stage / "bed_flux_map.png")
        if not comparison.empty:
            _write_csv(comparison, stage / "consistency.csv")
            plots.gradient_vs_flux(comparison, stage / "gradient_vs_flux.png")
        _write_csv(flags.frame(), stage / "flags.csv")
        _write_csv(pd.DataFrame(sorted(rejected.rows), columns=["file", "line", "column", "reason"]),
                   stage / "rejected.csv")
        _write_csv(pd.DataFrame(r.not_read, columns=["file", "reason"]), stage / "not_read.csv")
        _write_csv(r.observations, stage / "observations.csv")
        _write_csv(r.flagged, stage / "flagged_observations.csv")
        (stage / "field_summary.json").write_text(json.dumps(r.summary, indent=2) + "\n", encoding="utf-8")
    if not quiet:
        _print(r.summary)
    return r.summary


def _summary(folder: Path, sheets: dict[str, Sheet], rejected: Rejected, flags: Flags, meters: pd.DataFrame,
             piezos: pd.DataFrame, slug: pd.DataFrame, perm: pd.DataFrame, observations: pd.DataFrame,
             flagged: pd.DataFrame, keep_flagged: bool, reach_all: dict, reach_clean: dict,
             between: dict, not_read: list[tuple[str, str]]) -> dict:
    sheet_counts = {
        kind: {"file": Path(sh.source).name, "rows": sh.rows_read, "rejected": rejected.count(sh.source)}
        for kind, sh in sheets.items()
    }
    uncertainty = {name: {"value": b.value, "source": b.source, "degrees_of_freedom": b.dof}
                   for name, b in between.items()}
    uncertainty["piezometer opening depth [m]"] = {"value": DEPTH_SIGMA, "source": "common practice"}
    return {
        "sheets_folder": str(folder),
        "sign_convention": "flux and gradient positive upward: groundwater discharging into the stream",
        "units": "SI (m, s, m/s; gradients dimensionless)",
        "sheets": sheet_counts,
        "files_not_read": [{"file": f, "reason": r} for f, r in not_read],
        "rejected_rows": len(rejected.rows),
        "flags": flags.counts(),
        "default_efficiency": {"value": DEFAULT_EFFICIENCY,
                               "source": "Belanger & Montgomery (1992), measured/actual in tank tests"},
        "between_instrument_terms": uncertainty,
        "meters": int(len(meters)),
        "piezometers": int(len(piezos)),
        "slug_tests": int(len(slug)),
        "permeameter_tests": int(len(perm)),
        "median_k_hvorslev [m/s]": _none_if_nan(float(slug["k_hvorslev [m/s]"].median())) if len(slug) else None,
        "median_kv_permeameter [m/s]": _none_if_nan(float(perm["kv [m/s]"].median())) if len(perm) else None,
        "observations": {k: int(v) for k, v in observations["kind"].value_counts().items()},
        "flagged_observations": {
            "kept": keep_flagged,
            "rows": [{"kind": r.kind, "site": r.site, "x [m]": float(r.x), "depth [m]": float(r.depth),
                      "flags": r.flags, "reason": r.reason} for r in flagged.itertuples()],
        },
        "reach": reach_all if keep_flagged else reach_clean,
        "reach_with_flagged_meters": reach_all,
        "reach_without_flagged_meters": reach_clean,
    }


def _total(reach: dict) -> str:
    if "total [m^3/s]" not in reach:
        return reach["note"]
    lo, hi = reach["total_ci95 [m^3/s]"]
    return f"{reach['total [m^3/s]']:.3g} m^3/s (95 %: {lo:.3g} to {hi:.3g})"


def _print(summary: dict) -> None:
    lines = [f"field sheets: {summary['sheets_folder']}"]
    for kind, c in summary["sheets"].items():
        lines.append(f"  {c['file']}: {c['rows']} rows, {c['rejected']} rejected")
    for entry in summary["files_not_read"]:
        lines.append(f"  not read: {entry['file']} ({entry['reason']})")
    lines.append(f"  meters {summary['meters']}, piezometers {summary['piezometers']}, "
                 f"slug tests {summary['slug_tests']}, permeameter tests {summary['permeameter_tests']}")
    if "temperature" in summary:
        lines.append(f"  temperature: {summary['temperature']['headline']}")
    if summary["flags"]:
        lines.append("  flags: " + ", ".join(f"{k} {v}" for k, v in summary["flags"].items()))
    flagged = summary["flagged_observations"]
    if flagged["rows"]:
        items = sorted({f"{r['site']} ({r['flags']})" for r in flagged["rows"]})
        verb = "kept in" if flagged["kept"] else "left out of"
        lines.append(f"  flagged observations {verb} observations.csv: {', '.join(items)}")
    with_f, without_f = summary["reach_with_flagged_meters"], summary["reach_without_flagged_meters"]
    if with_f is without_f or with_f == without_f:
        lines.append(f"  reach total {_total(with_f)}")
    else:
        lines.append(f"  reach total without flagged meters {_total(without_f)}")
        lines.append(f"  reach total with flagged meters    {_total(with_f)}")
    print("\n".join(lines))
