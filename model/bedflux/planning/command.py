"""``bedflux plan PLAN.toml -o OUTDIR [--scheduler ADDRESS] [--workers N]``."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

from bedflux.calibration.cluster import add_engine_options
from bedflux.outputs.verb import add_output_options, print_written, staged_outputs


def _run(args: argparse.Namespace) -> int:
    from bedflux.calibration.cluster import optional_engine
    from bedflux.planning import plan
    from bedflux.planning.detect import detectability
    from bedflux.planning.outputs import plan_summary_text, write_plan
    from bedflux.planning.spec import load_plan

    engine = optional_engine(args.scheduler, args.workers)
    spec = load_plan(args.planfile, args.output)
    with staged_outputs(args.output, "plan", [Path(args.planfile)]) as stage, engine as tasks:
        table = plan(spec.scenario, spec.free, spec.candidates, spec.n, spec.target, existing=spec.existing,
                     instruments=spec.instruments, min_spacing=spec.min_spacing,
                     max_per_transect=spec.max_per_transect, length=spec.length, pan_diameter=spec.pan_diameter,
                     max_depth=spec.max_depth, fit=spec.fit, reading_time=spec.reading_time,
                     logger_max_depth=spec.logger_max_depth, source=spec.source,
                     client=tasks.client)
        scenario = spec.scenario.with_values(spec.fit.best) if spec.fit is not None else spec.scenario
        detect = None
        if scenario.transient:
            from bedflux.forward.predictions import simulated

            ds = simulated(scenario)
            detect = detectability(ds, np.asarray(spec.depths), spec.instruments.head_resolution,
                                   spec.instruments.seepage_floor)
        write_plan(table, scenario, stage, detect)
    print_written(args, plan_summary_text(table))
    for warning in table.attrs.get("warnings", []):
        print(f"bedflux plan: warning: {warning}", file=sys.stderr)
    return 0


def register(sub) -> None:
    """Add the ``plan`` verb."""
    p = sub.add_parser("plan", help="choose where the next seepage meters, piezometers and logger pairs go",
                       description="Rank candidate seepage meters, piezometers and temperature logger pairs by how "
                                   "much each is expected "
                                   "to reduce the uncertainty of the target (the parameters, one of them, or a "
                                   "prediction), by linear Bayesian data worth with the model's sensitivities; "
                                   "map the picks and, for transient scenarios, where a reversal is detectable. "
                                   "With a fit (the plan file's fit key, or a fit output folder beside the plan's "
                                   "output) the plan starts from the calibrated values and the fit's covariance.")
    p.add_argument("planfile", help="plan file (TOML)")
    add_output_options(p, "bedflux-plan", "no summary on screen")
    add_engine_options(p, "perturbed runs of a prediction target")
    p.set_defaults(func=_run)
