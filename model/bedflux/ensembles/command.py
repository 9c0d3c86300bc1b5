"""``bedflux ensemble FILE -o OUTDIR [--scheduler ADDRESS] [--workers N]``."""
from __future__ import annotations

import argparse
import math
from pathlib import Path

from bedflux.outputs.verb import add_output_options, print_written, staged_outputs


def _run(args: argparse.Namespace) -> int:
    from bedflux.outputs.files import input_files
    from bedflux.outputs.progress import ProgressBar
    from bedflux.section.grid import build_grid
    from bedflux.ensembles.engine import Engine, chunk_size
    from bedflux.ensembles.members import run_member
    from bedflux.ensembles.outputs import ensemble_size, store_format, write_ensemble
    from bedflux.ensembles.run import run_spec
    from bedflux.ensembles.spec import MemberDraw, load_ensemble

    spec = load_ensemble(args.file)
    engine = Engine(args.scheduler, args.workers)
    grid = build_grid(spec.scenario)
    t = spec.scenario.time
    times = 1 if t is None else math.floor(t.end / t.output_every + 1e-9) + 2
    need, how = ensemble_size(spec.members, times, grid.nx, len(spec.parameters))
    fmt = store_format(args.format or spec.format, need)
    inputs = [Path(args.file), *input_files(spec.scenario)]
    with staged_outputs(args.output, "ensemble", inputs, need, how, provenance=True) as stage:
        with engine:
            # the scenario as written (with a fit's best values), for the answers beside the ranges
            reference = run_member(spec, MemberDraw(-1, spec.fit.best() if spec.fit else {}, ()))
            bar = ProgressBar(enabled=not args.quiet, label="members")
            try:
                ds = run_spec(spec, engine.client, bar.update, scratch=stage.parent,
                              chunk=chunk_size(reference.seconds),
                              store=stage / "ensemble.zarr" if fmt == "zarr" else None)
            finally:
                bar.close()
            summary = write_ensemble(ds, stage, reference, netcdf=fmt == "netcdf")
            ds.close()
    print_written(args, summary["text"])
    return 0


def register(sub) -> None:
    """Add the ``ensemble`` verb."""
    p = sub.add_parser("ensemble", help="run an ensemble over uncertain values and heterogeneous beds",
                       description="Run the members of an ensemble file (TOML): the scenario with values drawn "
                                   "from their distributions (or a fit's posterior) and random conductivity "
                                   "fields, on a local dask cluster (one single-threaded worker per core) or "
                                   "on a running cluster (--scheduler). Writes ensemble.nc (or ensemble.zarr), "
                                   "ensemble_summary.txt/.json (medians, 5-95 % ranges, probabilities of "
                                   "reversal and of losing), ensemble_failed.csv and figures into OUTDIR.")
    p.add_argument("file", help="ensemble file (TOML)")
    add_output_options(p, "bedflux-ensemble", "no progress bar or summary on screen")
    p.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help="address of a running dask scheduler (e.g. tcp://10.0.0.5:8786); default: start a "
                        "local cluster")
    p.add_argument("--workers", metavar="N", type=int, default=None,
                   help="worker processes of the local cluster (default: one per core; 0: no cluster, the "
                        "members run one after another in this process)")
    p.add_argument("--format", choices=["netcdf", "zarr"], default=None,
                   help="how the members are stored: ensemble.nc or ensemble.zarr (chunked by member); overrides "
                        "the file's format; default: zarr when the estimated size is above 2 GB")
    p.set_defaults(func=_run)
