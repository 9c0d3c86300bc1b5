"""Find what ``bedflux run``, ``field``, ``fit`` and ``plan`` wrote under a project folder.

Each kind of output is recognised by its marker file:

=========  ===========================================================
run        ``summary.json`` with a net exchange (beside ``result.nc``)
field      ``field_summary.json``
fit        ``fit_results.json``
plan       ``plan_summary.json`` or ``plan_table.csv``
ensemble   ``ensemble_summary.json``
=========  ===========================================================

The folder is searched recursively; hidden folders (staging folders of a run in progress) are
skipped. Each output is read only through the manifest its command wrote last
(``run_manifest.json``, ...; see :mod:`bedflux.outputs.manifest`): one consistent output per folder, and
only files the manifest names, that are regular files inside the project folder and whose
SHA-256 still matches. Anything else found there (an unfinished or older output, a file changed
since, a symbolic link leaving the folder) is listed in :attr:`Project.skipped`, never read.
Nothing here interprets the numbers: that is :mod:`bedflux.report.findings`.
"""
from __future__ import annotations

import json
import os
import stat
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from bedflux.outputs import manifest
from bedflux.errors import InputError

#: Figures of each kind of output, in the order the report shows them.
RUN_FIGURES = ("section.png", "bed_flux_map.png", "exchange.png", "flowpaths.png", "residence_times.png",
               "bank_storage_return.png", "animation.gif")
FIELD_FIGURES = ("transect_profiles.png", "bed_flux_map.png", "gradient_vs_flux.png", "temperature_records.png",
                 "thermal_flux.png")
FIT_FIGURES = ("observed_vs_simulated.png", "residuals.png", "parameter_intervals.png")
PLAN_FIGURES = ("plan_map.png", "detectability.png")
ENSEMBLE_FIGURES = ("ensemble_fan.png", "ensemble_losing.png", "ensemble_histograms.png")
#: Field tables shown in the report (others are listed by name).
FIELD_TABLES = ("seepage_meters.csv", "piezometers.csv", "slug_tests.csv", "permeameter_tests.csv",
                "consistency.csv", "flags.csv", "flagged_observations.csv", "rejected.csv", "not_read.csv")
#: Input files reproduced as text (larger ones are listed with their hash only).
TEXT_SUFFIXES = (".toml", ".csv", ".txt")
MAX_REPRODUCED_BYTES = 60_000


@dataclass
class Output:
    """One folder of outputs of one command.

    Attributes
    ----------
    kind
        ``run``, ``field``, ``fit``, ``plan`` or ``ensemble``.
    folder
        The folder holding the marker file.
    label
        The folder relative to the project folder (``.`` for the project folder itself).
    data
        The parsed marker file(s): ``summary`` (run), ``field_summary`` (field), ``fit_results``
        (fit), ``plan_summary`` and ``plan_table`` (plan; either may be None),
        ``ensemble_summary`` (ensemble).
    figures
        Figure files present, in display order.
    inputs
        Input files copied by the command (``inputs/``), and for a fit the calibrated scenario.
    tables
        Tables present (name -> path).
    files
        Other files read (the marker, the manifest, provenance).
    """

    kind: str
    folder: Path
    label: str
    data: dict[str, Any] = field(default_factory=dict)
    figures: list[Path] = field(default_factory=list)
    inputs: list[Path] = field(default_factory=list)
    tables: dict[str, Path] = field(default_factory=dict)
    files: list[Path] = field(default_factory=list)

    @property
    def anchor(self) -> str:
        """An id for links inside the report."""
        slug = "".join(c if c.isalnum() else "-" for c in self.label).strip("-") or "top"
        return f"{self.kind}-{slug}"


@dataclass
class Project:
    """Everything found under one folder."""

    folder: Path
    outputs: list[Output]
    skipped: list[tuple[Path, str]] = field(default_factory=list)

    def of_kind(self, kind: str) -> list[Output]:
        """The outputs of one kind, in folder order."""
        return [o for o in self.outputs if o.kind == kind]

    @property
    def files_read(self) -> list[Path]:
        """Every file the report reads, for the provenance table."""
        files: list[Path] = []
        for o in self.outputs:
            files += [p for p in o.files + o.figures + o.inputs + list(o.tables.values()) if p not in files]
        return files


def read_json(path: Path) -> dict:
    """Read a JSON output file, as an :class:`InputError` naming the file when it is unreadable."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError) as err:
        raise InputError(f"cannot read the file: {err}", str(path)) from None
    except json.JSONDecodeError as err:
        raise InputError(f"not valid JSON (line {err.lineno}, column {err.colno}); re-run the "
                         "command that wrote it", str(path)) from None
    except RecursionError:
        raise InputError("nested too deeply to be an output of bedflux; re-run the command that wrote it",
                         str(path)) from None
    if not isinstance(data, dict):
        raise InputError("expected a JSON object (a table of keys); re-run the command that wrote it",
                         str(path))
    return data


def read_table(path: Path) -> pd.DataFrame:
    """Read a CSV output table, as an :class:`InputError` naming the file when it is unreadable."""
    try:
        return pd.read_csv(path)
    except pd.errors.EmptyDataError:
        return pd.DataFrame()
    except (OSError, UnicodeDecodeError, pd.errors.ParserError) as err:
        raise InputError(f"cannot read the table: {err}", str(path)) from None


def _visible(path: Path, root: Path) -> bool:
    rel = path.relative_to(root)
    return not any(part.startswith(".") for part in rel.parts[:-1])


def _label(folder: Path, root: Path) -> str:
    rel = folder.relative_to(root)
    return "." if rel == Path(".") else rel.as_posix()


class _Trusted:
    """The files of one output that its manifest vouches for; the rest go to ``skipped``."""

    def __init__(self, folder: Path, kind: str, root: Path, skipped: list[tuple[Path, str]]):
        self.folder, self.root, self.skipped = folder, root, skipped
        self.manifest = manifest.read(folder, kind)
        self.others = {f for v in manifest.VERBS if v != kind for f in manifest.listed(folder, v)}

    def __call__(self, rel: str) -> bool:
        """True when ``folder/rel`` may be read; a present file that may not is listed."""
        path = self.folder / rel
        if not os.path.lexists(path):
            return False
        reason = manifest.untrusted_reason(self.folder, rel, self.manifest, self.root)
        if reason:
            self.skipped.append((path, reason))
        return reason is None

    def present(self, names: tuple[str, ...]) -> list[Path]:
        return [self.folder / n for n in names if self(n)]

    def inputs(self) -> list[Path]:
        """Files of ``inputs/`` the manifest names; every other entry there is listed, not read."""
        named = sorted(r for r in self.manifest["files"] if r.startswith("inputs/"))
        out = [self.folder / r for r in named if self(r)]
        inp = self.folder / "inputs"
        if inp.is_dir() and not inp.is_symlink():
            for dirpath, dirs, names in os.walk(inp):
                for n in dirs + names:
                    p = Path(dirpath) / n
                    rel = p.relative_to(self.folder).as_posix()
                    known = rel in self.manifest["files"] or rel in self.others
                    if known or (p.is_dir() and not p.is_symlink()):
                        continue
                    if stat.S_ISLNK(p.lstat().st_mode):
                        target = Path(os.path.realpath(p))
                        where = "inside" if target.is_relative_to(self.root) else "outside"
                        why = f"a symbolic link to {target} ({where} the project folder); not followed"
                    else:
                        why = "not named by the manifest of the command that wrote this folder"
                    self.skipped.append((p, why))
        return out


def _run(folder: Path, root: Path, trust: _Trusted) -> Output | None:
    summary = read_json(folder / "summary.json")
    if "exchange_m2_per_s" not in summary:
        return None
    prov = read_json(folder / "provenance.json") if trust("provenance.json") else {}
    out = Output("run", folder, _label(folder, root), {"summary": summary, "provenance": prov},
                 trust.present(RUN_FIGURES), trust.inputs())
    out.files = [folder / "summary.json"] + ([folder / "provenance.json"] if prov else [])
    if trust("events.csv"):
        out.tables["events.csv"] = folder / "events.csv"
    if trust("animation.mp4"):
        out.data["movie"] = folder / "animation.mp4"
    return out


def _field(folder: Path, root: Path, trust: _Trusted) -> Output:
    out = Output("field", folder, _label(folder, root),
                 {"field_summary": read_json(folder / "field_summary.json")},
                 trust.present(FIELD_FIGURES), trust.inputs(), files=[folder / "field_summary.json"])
    for name in FIELD_TABLES:
        if trust(name):
            out.tables[name] = folder / name
    return out


def _fit(folder: Path, root: Path, trust: _Trusted) -> Output:
    results = read_json(folder / "fit_results.json")
    for key in ("best", "ci95"):
        if not isinstance(results.get(key), dict):
            raise InputError(f"the key '{key}' is missing or not a table; re-run bedflux fit",
                             str(folder / "fit_results.json"))
    inputs = trust.inputs()
    if trust("calibrated.toml"):
        inputs.append(folder / "calibrated.toml")
    out = Output("fit", folder, _label(folder, root), {"fit_results": results},
                 trust.present(FIT_FIGURES), inputs, files=[folder / "fit_results.json"])
    if trust("residuals.csv"):
        out.tables["residuals.csv"] = folder / "residuals.csv"
    return out


def _plan(folder: Path, root: Path, trust: _Trusted) -> Output:
    summary = read_json(folder / "plan_summary.json") if trust("plan_summary.json") else None
    table = read_table(folder / "plan_table.csv") if trust("plan_table.csv") else None
    out = Output("plan", folder, _label(folder, root), {"plan_summary": summary, "plan_table": table},
                 trust.present(PLAN_FIGURES), trust.inputs(),
                 files=[folder / "plan_summary.json"] if summary is not None else [])
    if table is not None:
        out.tables["plan_table.csv"] = folder / "plan_table.csv"
    return out


def _ensemble(folder: Path, root: Path, trust: _Trusted) -> Output:
    summary = read_json(folder / "ensemble_summary.json")
    if not isinstance(summary.get("answers"), dict):
        raise InputError("the key 'answers' is missing or not a table; re-run bedflux ensemble",
                         str(folder / "ensemble_summary.json"))
    out = Output("ensemble", folder, _label(folder, root), {"ensemble_summary": summary},
                 trust.present(ENSEMBLE_FIGURES), trust.inputs(), files=[folder / "ensemble_summary.json"])
    if trust("ensemble_failed.csv"):
        out.tables["ensemble_failed.csv"] = folder / "ensemble_failed.csv"
    return out


def _read_output(marker: Path, kind: str, reader, root: Path, skipped: list[tuple[Path, str]]) -> Output | None:
    """One output through its manifest, or None (with the reason in ``skipped``)."""
    folder = marker.parent
    name = manifest.manifest_name(kind)
    if not stat.S_ISREG(marker.lstat().st_mode):
        trust = None
    else:
        try:
            trust = _Trusted(folder, kind, root, skipped)
        except InputError as err:
            skipped.append((folder / name, err.message))
            return None
    if trust is None or trust.manifest is None:
        why = ("a symbolic link or not a regular file; not followed" if trust is None else
               f"no {name} beside it: not a complete output of bedflux {kind} (an unfinished command, or "
               "one of an earlier bedflux); run the command again")
        skipped.append((marker, why))
        return None
    if marker.name not in trust.manifest["files"]:
        skipped.append((marker, f"not named by {name}"))
        return None
    out = reader(folder, root, trust)
    if out is None:
        return None
    reason = manifest.untrusted_reason(folder, marker.name, trust.manifest, root)
    if reason:
        skipped.append((marker, reason + "; the whole output is left out"))
        return None
    out.files.insert(1, folder / name)
    return out


def collect(folder: str | Path) -> Project:
    """Scan a project folder for bedflux outputs.

    Parameters
    ----------
    folder
        The folder to search (recursively).

    Returns
    -------
    Project
        The outputs found, sorted by folder.

    Raises
    ------
    InputError
        If the folder does not exist, is not a folder, or holds no recognisable outputs.
    """
    root = Path(folder)
    if not root.exists():
        raise InputError("the folder does not exist; give the folder that bedflux run, field, fit "
                         "or plan wrote into", str(root))
    if not root.is_dir():
        raise InputError("not a folder; give the folder that bedflux run, field, fit or plan wrote "
                         "into", str(root))
    root = root.resolve()
    found: dict[tuple[str, Path], Output] = {}
    skipped: list[tuple[Path, str]] = []
    markers = {
        "summary.json": ("run", _run),
        "field_summary.json": ("field", _field),
        "fit_results.json": ("fit", _fit),
        "plan_summary.json": ("plan", _plan),
        "plan_table.csv": ("plan", _plan),
        "ensemble_summary.json": ("ensemble", _ensemble),
    }
    tried: set[tuple[str, Path]] = set()
    for name, (kind, reader) in markers.items():
        for marker in sorted(root.rglob(name)):
            if not os.path.lexists(marker) or marker.is_dir() or not _visible(marker, root):
                continue
            key = (kind, marker.parent)
            if key in tried:
                continue
            tried.add(key)
            out = _read_output(marker, kind, reader, root, skipped)
            if out is not None:
                found[key] = out
    if not found:
        why = "".join(f"; {p.relative_to(root).as_posix()}: {r}" for p, r in skipped[:5])
        raise InputError("no bedflux outputs found here (looked for summary.json of bedflux run, "
                         "field_summary.json of bedflux field, fit_results.json of bedflux fit and "
                         "plan_summary.json or plan_table.csv of bedflux plan, each with the manifest "
                         "its command writes, in this folder and below); run those commands with -o "
                         f"inside this folder first{why}", str(root))
    order = {"run": 0, "field": 1, "fit": 2, "plan": 3, "ensemble": 4}
    outputs = sorted(found.values(), key=lambda o: (order[o.kind], o.label))
    return Project(root, outputs, sorted(set(skipped)))
