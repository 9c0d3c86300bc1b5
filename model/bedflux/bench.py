"""Benchmarks (not part of the test run): ``python -m bedflux.bench [--large] [--out FILE]``.

Each case runs in a fresh process so that its peak memory is its own. Timings are reported with
ratios to the bare solvers measured in the same run on the same matrix.
"""
from __future__ import annotations

import argparse
import json
import multiprocessing as mp
import resource
import sys
import time

import numpy as np


def section_dict(n_cells: float, steady: bool = True) -> dict:
    """A 2D section across a channel with a thin low-conductivity bed, about ``n_cells`` cells."""
    nx = int(round(np.sqrt(n_cells * 5)))
    nz = int(round(n_cells / nx))
    width, depth = 100.0, 20.0
    d = {
        "title": f"benchmark section {nx} x {nz}",
        "grid": {"x": [-width / 2, width / 2], "bottom": -depth, "dx": width / nx, "dz": depth / nz},
        "ground": {"profile": [[-width / 2, 0.0], [width / 2, 0.0]]},
        "zone": [{"name": "aquifer", "kh": "10 m/d", "kv": "3 m/d", "specific_storage": 1e-4,
                  "specific_yield": 0.2},
                 {"name": "bed", "kh": "0.5 m/d", "kv": "0.05 m/d", "depth": 4 * depth / nz, "x": [-20, 20]}],
        "stream": {"stage": 0.5},
        "sides": {"left": {"head": 0.9}, "right": {"head": 0.8}},
    }
    if not steady:
        d["time"] = {"end": "1000 min", "step": "1 min", "output_every": "1000 min"}
        d["stream"] = {"wave": {"mean": 0.5, "amplitude": 0.2, "period": "6 h"}}
    return d


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _case_steady_run(n: float, method: str) -> dict:
    import bedflux

    t0 = time.perf_counter()
    s = bedflux.Scenario.from_dict(section_dict(n))
    ds = bedflux.simulate(s, method=method)
    return {"seconds": time.perf_counter() - t0, "peak_mb": _peak_mb(), "solver": ds.attrs["solver"],
            "cells": int(ds.attrs["cells"]), "closure": float(ds["budget_closure"])}


def _system(n: float):
    import bedflux
    from bedflux.section.discretisation import discretise

    sec = discretise(bedflux.Scenario.from_dict(section_dict(n)))
    terms = sec.terms(0.0, sec.initial_active_set())
    return sec, sec.matrix(terms), sec.rhs(terms)


def _case_assembly(n: float) -> dict:
    import bedflux
    from bedflux.section.discretisation import discretise

    s = bedflux.Scenario.from_dict(section_dict(n))
    t0 = time.perf_counter()
    sec = discretise(s)
    terms = sec.terms(0.0, sec.initial_active_set())
    sec.matrix(terms)
    sec.rhs(terms)
    return {"seconds": time.perf_counter() - t0, "peak_mb": _peak_mb(), "cells": sec.n}


def _case_bare(n: float, which: str) -> dict:
    import scipy.sparse.linalg as spla

    sec, A, b = _system(n)
    base = _peak_mb()
    t0 = time.perf_counter()
    if which == "superlu_mmd_sym":
        x = spla.splu(A.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                      options={"SymmetricMode": True}).solve(b)
    elif which == "spsolve":
        x = spla.spsolve(A.tocsc(), b)
    else:
        from bedflux.section.linear import factorize

        x = factorize(A, "amg-cg").solve(b)
    dt = time.perf_counter() - t0
    res = float(np.linalg.norm(b - A @ x) / np.linalg.norm(b))
    return {"seconds": dt, "peak_mb": _peak_mb(), "extra_mb": _peak_mb() - base, "residual": res}


def _case_transient_step(n: float) -> dict:
    import bedflux
    from bedflux.section.discretisation import discretise
    from bedflux.section.transient import run_transient

    s = bedflux.Scenario.from_dict(section_dict(n, steady=False))
    sec = discretise(s)
    backsub = _backsub_seconds(sec, 60.0, 50)
    stamps = []
    t0 = time.perf_counter()
    ds = run_transient(sec, on_step=lambda info: stamps.append(time.perf_counter()))
    total = time.perf_counter() - t0
    steps = int(ds.attrs["steps"])
    per_step = float(np.median(np.diff(stamps)))
    return {"cells": sec.n, "steps": steps, "backsub_seconds": backsub, "step_seconds_median": per_step,
            "ratio": per_step / backsub, "total_seconds": total, "factorizations": int(ds.attrs["factorizations"]),
            "factorization_seconds": float(ds.attrs["factorization_seconds"])}


def _backsub_seconds(sec, dt: float, reps: int) -> float:
    """Seconds of one back-solve of the section's transient flow matrix (step ``dt``), the
    factorization made once and timed apart."""
    from bedflux.section.linear import factorize

    terms = sec.terms(0.0, sec.initial_active_set())
    f = factorize(sec.matrix(terms, sec.storage(sec.submerged(0.0)) / dt), "direct")
    b = sec.rhs(terms)
    t0 = time.perf_counter()
    for _ in range(reps):
        f.solve(b)
    return (time.perf_counter() - t0) / reps


def _case_heat_step(n: float) -> dict:
    """A heat step with steady flow (the heat matrix factorized once) against one flow back-solve
    on the same section: the step with its right-hand side and energy budget, and its bare solve."""
    import bedflux
    from bedflux.section.discretisation import discretise
    from bedflux.section.heat_run import HeatModel
    from bedflux.section.steady import solve_steady

    d = section_dict(n, steady=False)
    d["stream"] = {"stage": 0.5}
    d["heat"] = {"stream_temperature": {"mean": 15, "amplitude": 4, "period": "1 d"}, "groundwater_temperature": 10}
    d["time"] = {"end": "1 d", "step": "15 min"}
    sec = discretise(bedflux.Scenario.from_dict(d))
    reps = 30
    backsub = _backsub_seconds(sec, 900.0, reps)
    sol = solve_steady(sec, 0.0, method="direct")
    model = HeatModel(sec)
    op = model.operator([(1.0, sol.u, sol.terms)], sol.terms, 0.0)
    t0 = time.perf_counter()
    heat = model.factor(model.step_matrix(op, 900.0, 1.0))
    factor_seconds = time.perf_counter() - t0
    theta = np.zeros(sec.n)
    t0 = time.perf_counter()
    for i in range(reps):
        theta, _, _ = model.step(op, heat, theta, 900.0 * i, 900.0 * (i + 1), 1.0)
    step = (time.perf_counter() - t0) / reps
    rhs = model.storage / 900.0 * theta + op.rhs(model.sources(0.0))
    t0 = time.perf_counter()
    for _ in range(reps):
        heat.solve(rhs)
    heat_backsub = (time.perf_counter() - t0) / reps
    return {"cells": sec.n, "flow_backsub_seconds": backsub, "heat_step_seconds": step,
            "heat_backsub_seconds": heat_backsub, "heat_factorization_seconds": factor_seconds,
            "step_over_flow_backsub": step / backsub, "heat_backsub_over_flow_backsub": heat_backsub / backsub,
            "cell_peclet_max": op.peclet_max}


def _case_flood() -> dict:
    import bedflux
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "scenarios" / "flood_pulse.toml"
    t0 = time.perf_counter()
    ds = bedflux.simulate(bedflux.load(path))
    return {"cells": int(ds.attrs["cells"]), "steps": int(ds.attrs["steps"]),
            "factorizations": int(ds.attrs["factorizations"]),
            "factorization_seconds": float(ds.attrs["factorization_seconds"]),
            "total_seconds": time.perf_counter() - t0}


def _case_column() -> dict:
    import bedflux
    import scipy.linalg as sla

    d = {"grid": {"x": [0, 1], "bottom": -20.0, "dx": 1.0, "dz": 0.01}, "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 1e-4, "specific_storage": 1e-4}],
         "stream": {"wave": {"mean": 0.5, "amplitude": 0.3, "period": "1 d"}},
         "time": {"end": "10000 min", "step": "1 min", "output_every": "1000 min"}}
    s = bedflux.Scenario.from_dict(d)
    t0 = time.perf_counter()
    ds = bedflux.simulate(s)
    total = time.perf_counter() - t0
    n = int(ds.attrs["cells"])
    ab = np.vstack([np.full(n, -1.0), np.full(n, 2.5), np.full(n, -1.0)])
    rhs = np.ones(n)
    reps = 2000
    t0 = time.perf_counter()
    for _ in range(reps):
        sla.solve_banded((1, 1), ab, rhs)
    banded = (time.perf_counter() - t0) / reps
    steps = int(ds.attrs["steps"])
    return {"cells": n, "steps": steps, "total_seconds": total, "per_step": total / steps,
            "banded_solve_seconds": banded, "ratio": total / steps / banded}


def dune_dict(n_cells: float) -> dict:
    """Dunes over a closed base (bedform pumping, periodic sides), about ``n_cells`` square cells
    over 1.8 m x 0.6 m."""
    h = float(np.sqrt(1.8 * 0.6 / n_cells))
    return {"title": "benchmark dunes", "grid": {"x": [0.0, 1.8], "bottom": -0.6, "dx": h, "dz": h},
            "ground": {"elevation": 0.0}, "zone": [{"name": "sand", "kh": "40 m/d", "kv": "20 m/d"}],
            "stream": {"stage": 0.25, "bedform": {"amplitude": 0.004, "wavelength": 0.6}},
            "sides": {"left": "periodic", "right": "periodic", "bottom": {"flux": "5 cm/d"}}}


def _case_flowpaths(n_cells: float, n_paths: int) -> dict:
    import bedflux

    s = bedflux.Scenario.from_dict(dune_dict(n_cells))
    t0 = time.perf_counter()
    ds = bedflux.simulate(s)
    t_sim = time.perf_counter() - t0
    t0 = time.perf_counter()
    fp = bedflux.flowpaths(s, ds, per_metre=n_paths / 1.8)
    t_fp = time.perf_counter() - t0
    return {"cells": int(ds.attrs["cells"]), "paths": int(fp.sizes["path"]), "simulate_seconds": t_sim,
            "flowpaths_seconds": t_fp, "paths_per_second": fp.sizes["path"] / t_fp,
            "flowpaths_over_simulate": t_fp / t_sim}


def _case_run_share(name: str) -> dict:
    """A whole ``bedflux run`` of an example scenario, and the part of it spent on flow paths
    (tracing, flowpaths.nc, the path figures) timed inside the same run."""
    import tempfile
    from pathlib import Path

    from bedflux.outputs import hyporheic
    from bedflux.outputs.run import run_scenario

    spent = []
    write_flowpaths = hyporheic.write_flowpaths

    def timed(*args, **kwargs):
        t0 = time.perf_counter()
        out = write_flowpaths(*args, **kwargs)
        spent.append(time.perf_counter() - t0)
        return out

    path = Path(__file__).resolve().parents[2] / "scenarios" / name
    with tempfile.TemporaryDirectory() as tmp:
        hyporheic.write_flowpaths = timed
        t0 = time.perf_counter()
        run_scenario(path, Path(tmp) / "out", quiet=True)
        total = time.perf_counter() - t0
        size = (Path(tmp) / "out" / "flowpaths.nc").stat().st_size
        result = (Path(tmp) / "out" / "result.nc").stat().st_size
    return {"scenario": name, "run_seconds": total, "flowpaths_seconds": sum(spent),
            "share_of_run": sum(spent) / total, "flowpaths_nc_bytes": size, "result_nc_bytes": result}


def _worker(q, fn, args):
    try:
        q.put(fn(*args))
    except BaseException as err:  # report, do not hang the parent
        q.put({"error": repr(err)})


def run_case(fn, *args) -> dict:
    """Run ``fn(*args)`` in a fresh process and return its dict."""
    ctx = mp.get_context("spawn")
    q = ctx.Queue()
    p = ctx.Process(target=_worker, args=(q, fn, args))
    p.start()
    out = q.get()
    p.join()
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--large", action="store_true", help="include the 4e6-cell section")
    ap.add_argument("--out", help="write the figures as JSON here")
    ap.add_argument("--flowpaths", action="store_true", help="only the flow-path cases")
    ap.add_argument("--heat", action="store_true", help="only the heat step on a 1e5-cell section")
    args = ap.parse_args(argv)
    if args.heat:
        print(json.dumps(run_case(_case_heat_step, 1e5), indent=1), flush=True)
        return 0
    results: dict = {"steady": {}, "transient": {}, "flowpaths": {}}
    results["flowpaths"]["1e5_cells_1e5_paths"] = run_case(_case_flowpaths, 1e5, 100_000)
    print(json.dumps(results["flowpaths"]["1e5_cells_1e5_paths"], indent=1), flush=True)
    for name in ("dune_bed.toml", "flood_pulse.toml"):
        results["flowpaths"][name] = run_case(_case_run_share, name)
        print(json.dumps(results["flowpaths"][name], indent=1), flush=True)
    if args.flowpaths:
        if args.out:
            with open(args.out, "w") as fh:
                json.dump(results, fh, indent=2)
        return 0
    sizes = [1e5, 1e6] + ([4e6] if args.large else [])
    for n in sizes:
        key = f"{n:.0e}"
        r = {"assembly": run_case(_case_assembly, n)}
        for which in ("superlu_mmd_sym", "spsolve", "amg_cg"):
            if which == "spsolve" and n > 1.5e6:
                continue
            r[which] = run_case(_case_bare, n, which)
        r["run_auto"] = run_case(_case_steady_run, n, "auto")
        best = min(v["seconds"] for k, v in r.items() if k in ("superlu_mmd_sym", "spsolve", "amg_cg")
                   and "seconds" in v)
        r["run_over_best_bare_solver"] = r["run_auto"].get("seconds", np.nan) / best
        results["steady"][key] = r
        print(key, json.dumps(r, indent=1), flush=True)
    results["transient"]["step_1e5"] = run_case(_case_transient_step, 1e5)
    print(json.dumps(results["transient"]["step_1e5"], indent=1), flush=True)
    results["transient"]["heat_step_1e5"] = run_case(_case_heat_step, 1e5)
    print(json.dumps(results["transient"]["heat_step_1e5"], indent=1), flush=True)
    results["transient"]["flood_pulse"] = run_case(_case_flood)
    print(json.dumps(results["transient"]["flood_pulse"], indent=1), flush=True)
    results["transient"]["column_2000"] = run_case(_case_column)
    print(json.dumps(results["transient"]["column_2000"], indent=1), flush=True)
    if args.out:
        with open(args.out, "w") as fh:
            json.dump(results, fh, indent=2)
    return 0


if __name__ == "__main__":
    sys.exit(main())
