"""``bedflux run``: load a scenario, simulate, and write result.nc, the summary and figures.

All outputs are staged and moved into the output folder only when everything has been written,
so bad input or a failed solve leaves nothing behind. An interrupted transient run, and one
stopped by a failing step (a water budget that does not close), keep the outputs computed so far,
marked as partial (the stopped run still ends with its :class:`SolverError`).
"""
from __future__ import annotations

import json
from pathlib import Path

from . import __version__
from .atomic import staged_directory, write_text
from .errors import SolverError
from .io import copy_inputs, input_files, write_result, write_summary
from .progress import ProgressBar
from .scenario import load
from .simulate import simulate


def run_scenario(path: Path, outdir: Path, unit: str = "m/d", quiet: bool = False) -> dict:
    """Run one scenario file and write its outputs; return the summary with its text."""
    from .plots import run_figures

    scenario = load(path)
    bar = ProgressBar(enabled=not quiet, label="time steps")
    failure = None
    try:
        ds = simulate(scenario, progress=bar.update if scenario.transient else None)
    except SolverError as err:
        if err.partial is None:
            raise
        ds, failure = err.partial, err
    finally:
        bar.close()
    with staged_directory(outdir) as stage:
        write_result(ds, stage / "result.nc")
        summary = write_summary(ds, stage)
        run_figures(ds, stage, unit)
        from .animation import animate

        animate(ds, stage / "animation", unit=unit)
        prov = {"bedflux_version": __version__, "inputs": copy_inputs(stage, input_files(scenario))}
        write_text(stage / "provenance.json", json.dumps(prov, indent=2) + "\n")
    summary["partial"] = ds.attrs.get("partial", "")
    if failure is not None:
        raise SolverError(f"{failure}. The outputs before that step are in {outdir}/, marked partial") from None
    return summary
