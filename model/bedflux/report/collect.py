"""Find what ``bedflux run``, ``field``, ``fit`` and ``plan`` wrote under a project folder.

Each kind of output is recognised by its marker file:

=========  ===========================================================
run        ``summary.json`` with a net exchange (beside ``result.nc``)
field      ``field_summary.json``
fit        ``fit_results.json``
plan       ``plan_summary.json`` or ``plan_table.csv``
=========  ===========================================================

The folder is searched recursively; hidden folders (staging folders of a run in progress) are
skipped. Nothing here interprets the numbers: that is :mod:`bedflux.report.findings`.
"""
from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from ..errors import InputError

#: Figures of each kind of output, in the order the report shows them.
RUN_FIGURES = ("section.png", "bed_flux_map.png", "exchange.png", "animation.gif")
FIELD_FIGURES = ("transect_profiles.png", "bed_flux_map.png", "gradient_vs_flux.png")
FIT_FIGURES = ("observed_vs_simulated.png", "residuals.png", "parameter_intervals.png")
PLAN_FIGURES = ("plan_map.png", "detectability.png")
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
        ``run``, ``field``, ``fit`` or ``plan``.
    folder
        The folder holding the marker file.
    label
        The folder relative to the project folder (``.`` for the project folder itself).
    data
        The parsed marker file(s): ``summary`` (run), ``field_summary`` (field), ``fit_results``
        (fit), ``plan_summary`` and ``plan_table`` (plan; either may be None).
    figures
        Figure files present, in display order.
    inputs
        Input files copied by the command (``inputs/``), and for a fit the calibrated scenario.
    tables
        Tables present (name -> path).
    """

    kind: str
    folder: Path
    label: str
    data: dict[str, Any] = field(default_factory=dict)
    figures: list[Path] = field(default_factory=list)
    inputs: list[Path] = field(default_factory=list)
    tables: dict[str, Path] = field(default_factory=dict)

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

    def of_kind(self, kind: str) -> list[Output]:
        """The outputs of one kind, in folder order."""
        return [o for o in self.outputs if o.kind == kind]

    @property
    def files_read(self) -> list[Path]:
        """Every file the report reads, for the provenance table."""
        files: list[Path] = []
        for o in self.outputs:
            for name in ("summary.json", "provenance.json", "events.csv", "field_summary.json",
                         "fit_results.json", "residuals.csv", "plan_summary.json", "plan_table.csv"):
                p = o.folder / name
                if p.is_file() and p not in files:
                    files.append(p)
            files += [p for p in o.figures + o.inputs + list(o.tables.values()) if p not in files]
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


def _present(folder: Path, names: tuple[str, ...]) -> list[Path]:
    return [folder / n for n in names if (folder / n).is_file()]


def _inputs(folder: Path) -> list[Path]:
    inp = folder / "inputs"
    return sorted(p for p in inp.rglob("*") if p.is_file()) if inp.is_dir() else []


def _run(folder: Path, root: Path) -> Output | None:
    summary = read_json(folder / "summary.json")
    if "exchange_m2_per_s" not in summary:
        return None
    prov = read_json(folder / "provenance.json") if (folder / "provenance.json").is_file() else {}
    out = Output("run", folder, _label(folder, root), {"summary": summary, "provenance": prov},
                 _present(folder, RUN_FIGURES), _inputs(folder))
    if (folder / "events.csv").is_file():
        out.tables["events.csv"] = folder / "events.csv"
    if (folder / "animation.mp4").is_file():
        out.data["movie"] = folder / "animation.mp4"
    return out


def _field(folder: Path, root: Path) -> Output:
    out = Output("field", folder, _label(folder, root),
                 {"field_summary": read_json(folder / "field_summary.json")},
                 _present(folder, FIELD_FIGURES), _inputs(folder))
    for name in FIELD_TABLES:
        if (folder / name).is_file():
            out.tables[name] = folder / name
    return out


def _fit(folder: Path, root: Path) -> Output:
    results = read_json(folder / "fit_results.json")
    for key in ("best", "ci95"):
        if not isinstance(results.get(key), dict):
            raise InputError(f"the key '{key}' is missing or not a table; re-run bedflux fit",
                             str(folder / "fit_results.json"))
    inputs = _inputs(folder)
    if (folder / "calibrated.toml").is_file():
        inputs.append(folder / "calibrated.toml")
    out = Output("fit", folder, _label(folder, root), {"fit_results": results},
                 _present(folder, FIT_FIGURES), inputs)
    if (folder / "residuals.csv").is_file():
        out.tables["residuals.csv"] = folder / "residuals.csv"
    return out


def _plan(folder: Path, root: Path) -> Output:
    summary = read_json(folder / "plan_summary.json") if (folder / "plan_summary.json").is_file() else None
    table = read_table(folder / "plan_table.csv") if (folder / "plan_table.csv").is_file() else None
    out = Output("plan", folder, _label(folder, root), {"plan_summary": summary, "plan_table": table},
                 _present(folder, PLAN_FIGURES), _inputs(folder))
    if table is not None:
        out.tables["plan_table.csv"] = folder / "plan_table.csv"
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
    markers = {
        "summary.json": ("run", _run),
        "field_summary.json": ("field", _field),
        "fit_results.json": ("fit", _fit),
        "plan_summary.json": ("plan", _plan),
        "plan_table.csv": ("plan", _plan),
    }
    for name, (kind, reader) in markers.items():
        for marker in sorted(root.rglob(name)):
            if not marker.is_file() or not _visible(marker, root):
                continue
            key = (kind, marker.parent)
            if key in found:
                continue
            out = reader(marker.parent, root)
            if out is not None:
                found[key] = out
    if not found:
        raise InputError("no bedflux outputs found here (looked for summary.json of bedflux run, "
                         "field_summary.json of bedflux field, fit_results.json of bedflux fit and "
                         "plan_summary.json or plan_table.csv of bedflux plan, in this folder and "
                         "below); run those commands with -o inside this folder first", str(root))
    order = {"run": 0, "field": 1, "fit": 2, "plan": 3}
    outputs = sorted(found.values(), key=lambda o: (order[o.kind], o.label))
    return Project(root, outputs)
