"""One self-contained HTML report of a project folder: ``bedflux report OUTDIR``.

:func:`collect` finds what ``bedflux run``, ``field``, ``fit`` and ``plan`` wrote (by their
marker files), :mod:`.findings` turns their numbers into a few plain sentences, and
:func:`render` writes the page: figures embedded as ``data:`` URIs, tables, the scenario and fit
files reproduced, provenance, cautions and a print stylesheet.
"""
from __future__ import annotations

from pathlib import Path

from ..atomic import write_text
from ..errors import InputError
from .collect import Output, Project, collect
from .findings import Finding
from .render import render

__all__ = ["Finding", "Output", "Project", "build_report", "collect", "render"]


def build_report(folder: str | Path, output: str | Path | None = None, unit: str = "m/d") -> Path:
    """Scan ``folder`` for bedflux outputs and write the HTML report atomically.

    Parameters
    ----------
    folder
        The project folder (searched recursively).
    output
        The HTML file to write (default ``FOLDER/report.html``).
    unit
        Display unit of bed fluxes.

    Returns
    -------
    pathlib.Path
        The report written.

    Raises
    ------
    InputError
        If the folder is missing or holds no bedflux outputs, an output file is unreadable, or
        ``output`` is an existing folder.
    """
    project = collect(folder)
    target = Path(output) if output is not None else Path(folder) / "report.html"
    if target.is_dir():
        raise InputError("is a folder; give the report's file name, for example report.html", str(target))
    try:
        html = render(project, unit)
    except InputError:
        raise
    except (ValueError, TypeError, KeyError) as err:
        raise InputError(f"an output file in this folder holds a value of the wrong type or lacks a key ({err}); "
                         "re-run the bedflux command that wrote it", str(folder)) from None
    write_text(target, html)
    return target
