"""``bedflux fit FIT.toml -o OUTDIR [--scheduler ADDRESS] [--workers N]``."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from bedflux.calibration.cluster import add_engine_options
from bedflux.outputs.verb import add_output_options, print_written, staged_outputs


def _run(args: argparse.Namespace) -> int:
    from bedflux.forward.sensitivity import Forward
    from bedflux.calibration.estimate import calibrate
    from bedflux.calibration.outputs import fit_summary_text, write_fit
    from bedflux.calibration.cluster import optional_engine
    from bedflux.calibration.spec import load_fit

    engine = optional_engine(args.scheduler, args.workers)
    spec = load_fit(args.fitfile)
    with staged_outputs(args.output, "fit", [Path(args.fitfile)]) as stage, engine as tasks:
        forward = Forward(spec.scenario, spec.observations, spec.free, spec.pan_diameter,
                          source=spec.observations_source)
        say = (lambda line: print(line, file=sys.stderr)) if not args.quiet else None
        result = calibrate(forward, starts=spec.starts, seed=spec.seed, sample=spec.sample, progress=say,
                           client=tasks.client)
        write_fit(result, spec.scenario, stage)
    print_written(args, fit_summary_text(result))
    return 0


def register(sub) -> None:
    """Add the ``fit`` verb."""
    p = sub.add_parser("fit", help="calibrate conductivities (and more) to observations",
                       description="Fit the free parameters named in FIT.toml to the observations "
                                   "(heads, vertical gradients, seepage fluxes) by weighted least squares "
                                   "with analytic sensitivities; report intervals, correlations, "
                                   "identifiability, residuals and the calibrated scenario.")
    p.add_argument("fitfile", help="fit file (TOML)")
    add_output_options(p, "bedflux-fit", "no progress or summary on screen")
    add_engine_options(p, "starts and the posterior sampler's walkers")
    p.set_defaults(func=_run)
