"""``bedflux fit FIT.toml -o OUTDIR``."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path



def _run(args: argparse.Namespace) -> int:
    from bedflux.outputs.files import copy_inputs
    from bedflux.outputs.folder import output_folder
    from bedflux.forward.sensitivity import Forward
    from bedflux.calibration.estimate import calibrate
    from bedflux.calibration.outputs import fit_summary_text, write_fit
    from bedflux.calibration.spec import load_fit

    spec = load_fit(args.fitfile)
    with output_folder(args.output, "fit") as stage:
        forward = Forward(spec.scenario, spec.observations, spec.free, spec.pan_diameter,
                          source=spec.observations_source)
        say = (lambda line: print(line, file=sys.stderr)) if not args.quiet else None
        result = calibrate(forward, starts=spec.starts, seed=spec.seed, sample=spec.sample, progress=say)
        write_fit(result, spec.scenario, stage)
        copy_inputs(stage, [Path(args.fitfile)])
    if not args.quiet:
        print(fit_summary_text(result), end="")
        print(f"outputs written to {args.output}/")
    return 0


def register(sub) -> None:
    """Add the ``fit`` verb."""
    p = sub.add_parser("fit", help="calibrate conductivities (and more) to observations",
                       description="Fit the free parameters named in FIT.toml to the observations "
                                   "(heads, vertical gradients, seepage fluxes) by weighted least squares "
                                   "with analytic sensitivities; report intervals, correlations, "
                                   "identifiability, residuals and the calibrated scenario.")
    p.add_argument("fitfile", help="fit file (TOML)")
    p.add_argument("-o", "--output", default="bedflux-fit", help="output folder (default: bedflux-fit)")
    p.add_argument("-q", "--quiet", action="store_true", help="no progress or summary on screen")
    p.set_defaults(func=_run)
