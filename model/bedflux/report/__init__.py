"""One self-contained HTML report of a project folder: ``bedflux report OUTDIR``.

:func:`collect` finds what ``bedflux run``, ``field``, ``fit`` and ``plan`` wrote (by their
marker files), :mod:`.findings` turns their numbers into a few plain sentences, and
:func:`render` writes the page: figures embedded as ``data:`` URIs, tables, the scenario and fit
files reproduced, provenance, cautions and a print stylesheet.
"""
from __future__ import annotations

from importlib import import_module
from typing import Any

#: public name -> module that defines it
_PUBLIC = {"build_report": "bedflux.report.build", "check_target": "bedflux.report.build",
           "Output": "bedflux.report.collect", "Project": "bedflux.report.collect",
           "Finding": "bedflux.report.findings"}
__all__ = sorted(_PUBLIC)


def __getattr__(name: str) -> Any:
    if name in _PUBLIC:
        return getattr(import_module(_PUBLIC[name]), name)
    raise AttributeError(f"module 'bedflux.report' has no attribute {name!r}")
