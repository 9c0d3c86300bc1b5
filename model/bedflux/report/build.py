"""Build the report of a project folder: check the target, collect, render, write."""
from __future__ import annotations

import os
import stat
from pathlib import Path

from bedflux.outputs.atomic import write_text
from bedflux.errors import InputError
from bedflux.report.collect import collect
from bedflux.report.render import render

#: Marks a file as a bedflux report (the page's generator tag), so that it may be replaced.
REPORT_MARK = b'<meta name="generator" content="bedflux'


def check_target(target: Path, force: bool = False) -> None:
    """Refuse a report file name that is not ``.html``, or a file that is not an earlier report.

    Raises
    ------
    InputError
        If ``target`` is a folder, does not end in ``.html``, or is an existing file that is not
        a bedflux report (unless ``force``).
    """
    if target.is_dir():
        raise InputError("is a folder; give the report's file name, for example report.html", str(target))
    if target.suffix.lower() != ".html":
        raise InputError("the report is an HTML page: give a file name ending in .html, for example "
                         "report.html", str(target))
    if force or not os.path.lexists(target):
        return
    try:
        with open(target, "rb") as f:
            head = f.read(4096) if stat.S_ISREG(os.fstat(f.fileno()).st_mode) else b""
    except OSError:
        head = b""
    if REPORT_MARK not in head:
        raise InputError("exists and is not a report written by bedflux; it is left as it is. Give another "
                         "file name, or add --force to replace it", str(target))


def build_report(folder: str | Path, output: str | Path | None = None, unit: str = "m/d",
                 force: bool = False) -> Path:
    """Scan ``folder`` for bedflux outputs and write the HTML report atomically.

    Parameters
    ----------
    folder
        The project folder (searched recursively).
    output
        The HTML file to write (default ``FOLDER/report.html``).
    unit
        Display unit of bed fluxes.
    force
        Replace ``output`` even when it is not an earlier bedflux report.

    Returns
    -------
    pathlib.Path
        The report written.

    Raises
    ------
    InputError
        If the folder is missing or holds no bedflux outputs, an output file is unreadable, or
        ``output`` is refused by :func:`check_target`.
    """
    target = Path(output) if output is not None else Path(folder) / "report.html"
    check_target(target, force)
    project = collect(folder)
    try:
        html = render(project, unit)
    except InputError:
        raise
    except (ValueError, TypeError, KeyError) as err:
        raise InputError(f"an output file in this folder holds a value of the wrong type or lacks a key ({err}); "
                         "re-run the bedflux command that wrote it", str(folder)) from None
    write_text(target, html)
    return target
