"""What the verbs share: the ``-o``/``-q`` (and ``--units``) options, the staging of an output
folder with copies of the input files, and the lines printed when the outputs are written."""
from __future__ import annotations

import argparse
import json
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator, Sequence

from bedflux.scenario.units import FLUX_UNITS


def add_output_options(parser: argparse.ArgumentParser, default: str | None, quiet_help: str,
                       output_help: str | None = None) -> None:
    """Add ``-o/--output`` (default ``default``) and ``-q/--quiet`` to a verb's parser."""
    parser.add_argument("-o", "--output", default=default,
                        help=output_help or f"output folder (default: {default})")
    parser.add_argument("-q", "--quiet", action="store_true", help=quiet_help)


def add_units_option(parser: argparse.ArgumentParser, help: str) -> None:
    """Add ``--units``: the display unit of fluxes, one of :data:`FLUX_UNITS` (default m/d)."""
    parser.add_argument("--units", default="m/d", choices=list(FLUX_UNITS), help=help)


@contextmanager
def staged_outputs(outdir: str | Path, verb: str, inputs: Sequence[Path] = (), need: int = 0,
                   need_text: str = "", provenance: bool = False) -> Iterator[Path]:
    """Stage ``verb``'s outputs in ``outdir`` (:func:`bedflux.outputs.folder.output_folder`):
    yield the staging folder; after the block, copy ``inputs`` into its ``inputs/`` (the first
    is the verb's own file) and, with ``provenance``, write ``provenance.json`` (the version and
    every input's SHA-256 and path); then commit."""
    from bedflux.outputs.atomic import write_text
    from bedflux.outputs.files import copy_inputs
    from bedflux.outputs.folder import output_folder
    from bedflux.version import __version__

    with output_folder(outdir, verb, need, need_text) as stage:
        yield stage
        copied = copy_inputs(stage, list(inputs)) if inputs else {}
        if provenance:
            prov = {"bedflux_version": __version__,
                    "inputs": {name: c["sha256"] for name, c in copied.items()},
                    "input_paths": {name: c["path"] for name, c in copied.items()}}
            write_text(stage / "provenance.json", json.dumps(prov, indent=2) + "\n")


def print_written(args: argparse.Namespace, summary: str = "", partial: bool = False) -> None:
    """Unless ``-q``: print the verb's summary and where its outputs were written."""
    if not args.quiet:
        print(summary, end="")
        print(f"{'partial ' if partial else ''}outputs written to {args.output}/")
