"""``bedflux report OUTDIR [-o report.html]``."""
from __future__ import annotations

import argparse
from pathlib import Path

from bedflux.outputs.verb import add_output_options, add_units_option


def _run(args: argparse.Namespace) -> int:
    from bedflux.report import build_report

    path = build_report(Path(args.folder), Path(args.output) if args.output else None, unit=args.units,
                        force=args.force)
    if not args.quiet:
        print(f"report written to {path}")
    return 0


def register(sub) -> None:
    """Add the ``report`` verb."""
    p = sub.add_parser("report", help="write one self-contained HTML report of a project folder",
                       description="Search OUTDIR (and the folders below it) for what bedflux run, "
                                   "field, fit and plan wrote, and write one HTML file with the findings "
                                   "in plain words, the figures embedded, the tables, the scenario and fit "
                                   "files, provenance and cautions. Print it to PDF from a browser.")
    p.add_argument("folder", metavar="OUTDIR", help="project folder with bedflux outputs")
    add_output_options(p, None, "print nothing on success",
                       output_help="report file ending in .html (default: OUTDIR/report.html); an existing "
                                   "file is replaced only when it is an earlier bedflux report")
    p.add_argument("--force", action="store_true",
                   help="replace the -o file even when it is not an earlier bedflux report")
    add_units_option(p, "display unit of bed fluxes (default: m/d)")
    p.set_defaults(func=_run)
