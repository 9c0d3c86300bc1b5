"""Benchmarks of variably saturated runs (not collected by pytest):
``python tests/bench/bench_unsaturated.py [flood|methods|large [direct|amg-gmres]]``; figures go to docs/performance.md.

- ``methods``: Newton (line search) against modified Picard on the flood pulse, the Celia column
  and the steady companions: iterations, failures, wall time;
- ``flood``: the variably saturated flood pulse against the linear one: iterations per step
  (median, 95th percentile), wall time per step in units of one linear solve of the same size;
- ``large``: a 1e5-cell section, one day of a flood, with peak memory (fresh process).
"""
from __future__ import annotations

import resource
import sys
import time
import tomllib
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def run(path_or_dict, method="newton", solver="auto"):
    import warnings

    import bedflux
    from bedflux.section.richards_run import run_variably_saturated
    from bedflux.section.discretisation import discretise

    sc = bedflux.load(path_or_dict) if isinstance(path_or_dict, (str, Path)) else bedflux.Scenario.from_dict(path_or_dict)
    sec = discretise(sc)
    t0, c0 = time.perf_counter(), time.process_time()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            ds = run_variably_saturated(sec, method=method, solver=solver)
        except Exception as err:  # a method that fails is part of the measurement
            return None, time.perf_counter() - t0, str(err)
    ds.attrs["cpu_seconds"] = time.process_time() - c0
    return ds, time.perf_counter() - t0, ""


def one_linear_solve(path) -> tuple[float, float]:
    """Seconds of one factorization + solve of the linear model's matrix (SPD, symmetric mode)
    and of one Jacobian solve of the variably saturated run, same section."""
    import bedflux
    from bedflux.section.linear import factorize
    from bedflux.section.richards import RichardsSystem
    from bedflux.section.richards_newton import JacobianSolver
    from bedflux.section.richards_steps import SectionBoundaries, soil_water
    from bedflux.section.discretisation import discretise

    sec = discretise(bedflux.load(path))
    terms = sec.terms(0.0, sec.initial_active_set())
    A = sec.matrix(terms, sec.storage(sec.submerged(0.0)) / 900.0)
    b = sec.rhs(terms)
    best = []
    for _ in range(7):
        t0 = time.perf_counter()
        factorize(A, "direct").solve(b)
        best.append(time.perf_counter() - t0)
    system = RichardsSystem(sec, soil_water(sec.scenario, sec))
    bnd = SectionBoundaries(sec)
    psi = system.psi_from_u(np.zeros(sec.n)) * 0.5
    forcing = bnd.forcing(0.0, 900.0, bnd.initial_state(), steady=False)
    storage = system.storage(psi, 900.0)
    ev = system.evaluate(psi, forcing, storage)
    J = system.jacobian(ev, forcing, storage, newton=True)
    solver = JacobianSolver(sec.n, "direct")
    jac = []
    for _ in range(7):
        t0 = time.perf_counter()
        solver.factor(J)(-ev.residual)
        jac.append(time.perf_counter() - t0)
    return min(best), min(jac)


def flood():
    import bedflux

    path = ROOT / "scenarios/flood_pulse_unsaturated.toml"
    bedflux.simulate(bedflux.load(ROOT / "scenarios/flood_pulse.toml"))  # imports and caches warm
    lin_t0 = time.perf_counter()
    bedflux.simulate(bedflux.load(ROOT / "scenarios/flood_pulse.toml"))
    lin = time.perf_counter() - lin_t0
    ds, secs, err = run(path)
    lin_t0 = time.perf_counter()
    bedflux.simulate(bedflux.load(ROOT / "scenarios/flood_pulse.toml"))
    lin = min(lin, time.perf_counter() - lin_t0)
    it = ds["step_iterations"].values
    one, jac = one_linear_solve(path)
    steps = it.size
    print(f"flood pulse, {ds.attrs['cells']} cells: linear run {lin:.2f} s (best of two, before and after); "
          f"variably saturated {secs:.1f} s ({secs / lin:.1f}x); {steps} steps, {ds.attrs['failed_steps']} failed, "
          f"{ds.attrs['rejected_steps']} rejected; iterations per step median "
          f"{np.median(it):.0f}, 95th percentile {np.percentile(it, 95):.0f}, max {it.max()}; "
          f"{ds.attrs['linear_solves']} Newton systems, {ds.attrs['factorizations']} factorizations, "
          f"{ds.attrs['krylov_iterations']} GMRES iterations; "
          f"step length {ds['step_length'].values.min():.3g}-{ds['step_length'].values.max():.3g} s; "
          f"one linear solve (factor + solve, SPD) {one * 1e3:.1f} ms, one Jacobian solve {jac * 1e3:.1f} ms; "
          f"wall per step {secs / steps * 1e3:.0f} ms = {secs / steps / one:.1f} linear solves; "
          f"max step closure {np.abs(ds['step_closure'].values).max():.1e}")


def methods():
    cases = {
        "flood pulse (transient, 5 d)": ROOT / "scenarios/flood_pulse_unsaturated.toml",
        "riparian (transient, 4 d)": ROOT / "scenarios/riparian_et_unsaturated.toml",
    }
    for name in ("channel_banks", "flood_pulse"):
        d = tomllib.loads((ROOT / f"scenarios/{name}_unsaturated.toml").read_text())
        d.pop("time", None)
        cases[f"{name} (steady)"] = d
    for name, case in cases.items():
        for method in ("newton", "picard"):
            ds, secs, err = run(case, method)
            if ds is None:
                print(f"{name}: {method}: FAILED after {secs:.1f} s: {err[:120]}")
                continue
            extra = ""
            if "step_iterations" in ds:
                it = ds["step_iterations"].values
                extra = f", {it.size} steps, {ds.attrs['failed_steps']} failed, median {np.median(it):.0f}"
            print(f"{name}: {method}: {secs:.1f} s, {ds.attrs['iterations']} iterations{extra}")


def large(solver="auto"):
    sys.path.insert(0, str(ROOT / "model"))
    from bedflux.bench import section_dict

    d = section_dict(1e5)
    for z in d["zone"]:
        z.pop("specific_yield", None)
        z["retention"] = {"model": "van-genuchten", "alpha": "3.6 1/m", "n": 1.56, "residual": 0.078,
                          "saturated": 0.43}
    d["ground"] = {"profile": [[-50.0, 1.2], [-20.0, 0.8], [-19.0, 0.0], [19.0, 0.0], [20.0, 0.8], [50.0, 1.2]]}
    d["stream"] = {"pulse": {"base": 0.4, "peak": 0.75, "start": "2 h", "rise": "6 h", "fall": "12 h"},
                   "channel": [-20.0, 20.0]}
    d["time"] = {"end": "1 d", "step": "15 min", "output_every": "3 h"}
    ds, secs, err = run(d, solver=solver)
    if ds is None:
        print("large: FAILED", err)
        return
    it = ds["step_iterations"].values
    print(f"1e5 section ({ds.attrs['cells']} cells), one day of a flood: {secs:.1f} s "
          f"({ds.attrs['cpu_seconds']:.0f} s of CPU), {it.size} steps, "
          f"{ds.attrs['failed_steps']} failed, {ds.attrs['rejected_steps']} rejected, iterations median "
          f"{np.median(it):.0f}, p95 {np.percentile(it, 95):.0f}; solver {ds.attrs['solver']}: "
          f"{ds.attrs['linear_solves']} systems, {ds.attrs['factorizations']} preconditioners built, "
          f"{ds.attrs['krylov_iterations']} GMRES iterations; peak {_peak_mb():.0f} MiB; max step closure "
          f"{np.abs(ds['step_closure'].values).max():.1e}")


if __name__ == "__main__":
    {"flood": flood, "methods": methods, "large": large}[sys.argv[1] if len(sys.argv) > 1 else "flood"](*sys.argv[2:])
