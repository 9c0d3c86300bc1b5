"""``bedflux run``: load a scenario, simulate, and write result.nc, the summary and figures (and,
where stream water enters the bed, its flow paths: flowpaths.nc and the hyporheic figures).

The output folder is locked and checked (writable, room for the estimated result) before the
computation; all outputs are staged inside it and replace the earlier run's output as a whole
(:mod:`bedflux.outputs.folder`), so bad input or a failed solve leaves nothing behind. An
interrupted transient run (Ctrl-C or SIGTERM) keeps the outputs computed so far, marked partial; so does a run stopped by a failing step
(a water budget that does not close), which still ends with its :class:`SolverError`.
"""
from __future__ import annotations

import math
from pathlib import Path

from bedflux.errors import SolverError
from bedflux.outputs.files import input_files, write_result, write_summary
from bedflux.outputs.progress import ProgressBar
from bedflux.outputs.verb import staged_outputs
from bedflux.scenario.spec import Scenario, load
from bedflux.section.simulate import simulate

#: Result variables written for every cell at every output time.
TIME_CELL_VARIABLES = ("head", "qx", "qz")
#: Result variables written once for every cell.
STATIC_CELL_VARIABLES = ("kh", "kv", "porosity", "zone")


def result_size(scenario: Scenario) -> tuple[int, str]:
    """Estimated size of result.nc in bytes, and how it was estimated.

    Grid cells x output times x variables x 8 bytes, from the grid alone (the grid's own
    cell-count check runs first, before any large array exists): the uncompressed size, which
    the file's compression only lowers for any run large enough to matter.
    """
    from bedflux.section.grid import build_grid

    grid = build_grid(scenario)
    cells = grid.nx * grid.nz
    if scenario.time is None:
        times = 1
    else:
        times = math.floor(scenario.time.end / scenario.time.output_every + 1e-9) + 2
    n_vars = len(TIME_CELL_VARIABLES)
    size = 8 * cells * (times * n_vars + len(STATIC_CELL_VARIABLES))
    plural = "s" if times != 1 else ""
    return size, f"{cells:,} cells x {times:,} output time{plural} x {n_vars} variables x 8 bytes"


def run_scenario(path: Path, outdir: Path, unit: str = "m/d", quiet: bool = False,
                 refine: float | None = None) -> dict:
    """Run one scenario file and write its outputs; return the summary with its text. With
    ``refine`` (a ratio > 1), run it again on the grid and step refined by it and by its square
    and add the refinement check (:mod:`bedflux.outputs.refinement`) to the summary."""
    from bedflux.outputs.animation import animate
    from bedflux.outputs.figures import run_figures
    from bedflux.outputs.hyporheic import write_flowpaths

    scenario = load(path)
    need, how = result_size(scenario)
    failure = None
    with staged_outputs(outdir, "run", input_files(scenario), need, how, provenance=True) as stage:
        bar = ProgressBar(enabled=not quiet, label="time steps")
        try:
            ds = simulate(scenario, progress=bar.update if scenario.transient else None)
        except SolverError as err:
            if err.partial is None:
                raise
            ds, failure = err.partial, err
        finally:
            bar.close()
        write_result(ds, stage / "result.nc")
        hyporheic = write_flowpaths(scenario, ds, stage)
        check = None
        if refine is not None and failure is None:
            check = _refinement_check(scenario, ds, refine, quiet)
        summary = write_summary(ds, stage, hyporheic=hyporheic, refinement=check)
        run_figures(ds, stage, unit)
        animate(ds, stage / "animation", unit=unit)
    summary["partial"] = ds.attrs.get("partial", "")
    if failure is not None:
        raise SolverError(f"{failure}. The outputs before that step are in {outdir}/, marked partial") from None
    return summary


def _refinement_check(scenario, ds, ratio: float, quiet: bool) -> dict:
    """The run again on the grid and step refined by ``ratio`` and by ``ratio^2``, compared with
    ``ds`` (:mod:`bedflux.outputs.refinement`)."""
    from bedflux.outputs.refinement import refinement_check
    from bedflux.outputs.summary import build_summary
    from bedflux.scenario.refinement import refined

    summaries, steps = [build_summary(ds)[0]], [scenario.time.step] if scenario.transient else None
    for factor in (ratio, ratio**2):
        finer = refined(scenario, factor)
        bar = ProgressBar(enabled=not quiet, label=f"refined run (x{factor:.3g})")
        try:
            fine = simulate(finer, progress=bar.update if scenario.transient else None)
        except SolverError as err:
            return {"ratio": ratio, "failed": f"the run refined by {factor:.3g} failed: {err}"}
        finally:
            bar.close()
        summaries.append(build_summary(fine)[0])
        if steps is not None:
            steps.append(finer.time.step)
    return refinement_check(summaries, ratio, steps)
