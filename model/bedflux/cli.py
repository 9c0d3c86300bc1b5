"""The ``bedflux`` command line.

Exit status: 0 on success, 2 for bad input (a message naming the file, key or row and what is
allowed) or an output folder that cannot take the outputs, 1 when a numerical method fails, 130
when interrupted by Ctrl-C and 143 when stopped by SIGTERM (what schedulers and container stops
send). Both signals end a transient run the same way: its outputs so far are kept, marked partial.
"""
from __future__ import annotations

import argparse
import os
import signal
import sys
import threading
from importlib import import_module, resources
from pathlib import Path
from typing import Sequence

from bedflux.version import __version__
from bedflux.errors import InputError, SolverError
from bedflux.scenario.refinement import DEFAULT_RATIO
from bedflux.outputs.verb import add_output_options, add_units_option, print_written

EXAMPLE = "gaining_channel.toml"


def example_path() -> Path:
    """Path of the built-in example scenario."""
    return Path(str(resources.files("bedflux") / "examples" / EXAMPLE))


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised where Ctrl-C would raise KeyboardInterrupt and handled the same way."""


#: SIGTERMs received during the current command.
_terminations: list[int] = []


def _on_sigterm(signum, frame) -> None:
    _terminations.append(signum)
    raise Terminated()


def _interrupt_status() -> int:
    """128 + the signal number: 130 for Ctrl-C, 143 for SIGTERM."""
    return 128 + (signal.SIGTERM if _terminations else signal.SIGINT)


def _cmd_run(args: argparse.Namespace) -> int:
    from bedflux.outputs.run import run_scenario

    scenario = Path(args.scenario) if args.scenario else example_path()
    summary = run_scenario(scenario, Path(args.output), unit=args.units, quiet=args.quiet,
                           refine=DEFAULT_RATIO if args.refinement_check else None)
    print_written(args, summary["text"], partial=bool(summary["partial"]))
    if summary["partial"]:
        print(f"bedflux run: {summary['partial']}", file=sys.stderr)
        return _interrupt_status()
    return 0


def _cmd_field(args: argparse.Namespace) -> int:
    from bedflux.field import run_field

    run_field(Path(args.sheets), Path(args.output), quiet=args.quiet, keep_flagged=args.keep_flagged)
    print_written(args)
    return 0


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb."""
    p = argparse.ArgumentParser(
        prog="bedflux",
        description="Stream-aquifer exchange through a streambed: reduce field sheets, run a "
                    "finite-difference model of the section under the channel, fit conductivities, "
                    "plan the next instruments, and write a report.",
        epilog="Run 'bedflux VERB --help' for the options of each verb.")
    p.add_argument("--version", action="version", version=f"bedflux {__version__}")
    sub = p.add_subparsers(dest="verb", metavar="VERB")

    r = sub.add_parser("run", help="run a scenario (default: the built-in example)",
                       description="Run a scenario TOML file (steady, or transient when it has a [time] "
                                   "table). Without a file, runs the built-in example: a gaining sand-bed "
                                   "channel with a silty clogging patch. Writes result.nc, summary.txt, "
                                   "summary.json and figures into OUTDIR.")
    r.add_argument("scenario", nargs="?", help="scenario TOML file (omit for the built-in example)")
    add_output_options(r, "bedflux-out", "no progress bar or summary on screen")
    add_units_option(r, "display unit of fluxes in figures (files stay SI)")
    r.add_argument("--refinement-check", action="store_true",
                   help="run again on two finer grids and steps (spacing and step divided by 1.41 and by 2) "
                        "and report for each answer its converged value and how far the run's may be from it "
                        "(summary.txt, summary.json 'refinement_check'); takes about 7 times the run's time "
                        "(steady), 15 times (transient)")
    r.set_defaults(func=_cmd_run)

    f = sub.add_parser("field", help="reduce field sheets to checked observations",
                       description="Read the CSV field sheets in SHEETS (sites, seepage meters, "
                                   "manometers, slug tests, permeameters, velocity heads, temperature records), "
                                   "compute fluxes (from temperature too), gradients and conductivities with uncertainties and flags, and write "
                                   "observations.csv for calibration with tables and figures into OUTDIR.")
    f.add_argument("sheets", help="folder with the field sheets")
    add_output_options(f, "bedflux-field", "no summary on screen")
    f.add_argument("--keep-flagged", action="store_true",
                   help="keep flagged meters and piezometers (robust outliers, scattered repeats, gradients "
                        "within the velocity head) in observations.csv; by default they are left out and "
                        "listed in flagged_observations.csv")
    f.set_defaults(func=_cmd_field)
    for extra in _EXTRA_VERBS:
        extra(sub)
    return p


#: Verbs defined in their own rooms: each module has ``register(subparsers)``.
_VERB_MODULES = ("bedflux.calibration.command", "bedflux.planning.command", "bedflux.report.command",
                 "bedflux.ensembles.command")
_EXTRA_VERBS = [import_module(name).register for name in _VERB_MODULES]


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the console script."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 0
    if hasattr(args, "output") and args.output is not None and not str(args.output).strip():
        print(f"bedflux {args.verb}: error: -o needs a folder name; got an empty one", file=sys.stderr)
        return 2
    in_main = threading.current_thread() is threading.main_thread()
    _terminations.clear()
    before = signal.signal(signal.SIGTERM, _on_sigterm) if in_main else None
    try:
        return args.func(args)
    except InputError as err:
        print(f"bedflux {args.verb}: error: {err.render()}", file=sys.stderr)
        return 2
    except (PermissionError, NotADirectoryError, IsADirectoryError, FileExistsError) as err:
        print(f"bedflux {args.verb}: error: cannot write or read {err.filename}: {err.strerror}; "
              "choose another output folder (-o)", file=sys.stderr)
        return 2
    except SolverError as err:
        print(f"bedflux {args.verb}: the solver failed: {err}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print(f"bedflux {args.verb}: {'stopped by SIGTERM' if _terminations else 'interrupted'}", file=sys.stderr)
        return _interrupt_status()
    except BrokenPipeError:
        # the reader of the screen summary stopped (e.g. `| head`): the rest goes nowhere
        # (Python docs, "Note on SIGPIPE"); files written so far are whole (atomic writes)
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        print(f"bedflux {args.verb}: the screen output's reader closed; stopped", file=sys.stderr)
        return 1
    finally:
        if in_main:
            signal.signal(signal.SIGTERM, before)


if __name__ == "__main__":
    sys.exit(main())
