"""Benchmark of the sensitivities and of a whole calibration (not collected by pytest).

    python tests/bench/bench_jacobian.py [--quick]

1. Jacobian cost over forward cost on a steady section of about 20,000 cells with P = 4, 16 and 64
   free box zones (the vertical conductivity of each), for N = 100 observations (direct method:
   one back-substitution per parameter with the forward factor) and N = 20 (P = 64 then takes the
   adjoint: one back-substitution per observation), against finite differences
   (P + 1 runs one-sided, 2P central; the central ones are measured).
2. A whole 4-parameter calibration on the same section (wall time from the call to the result,
   noisy synthetic data, start a factor of 3 away from the truth).

Timings are the fastest of several repeats in one process on one machine; the ratios are what to compare.
Prints a markdown table for docs/performance.md.
"""
from __future__ import annotations

import argparse
import platform
import time

import numpy as np
import pandas as pd

import bedflux
from bedflux.calibration import fit
from bedflux.forward.sensitivity import Forward, free_parameters

WIDTH, DEPTH = 100.0, 20.0


def section(n_cells: float, boxes: int) -> dict:
    """A steady section across a channel (about ``n_cells`` cells) cut into boxes x boxes zones."""
    nx = int(round(np.sqrt(n_cells * 5)))
    nz = int(round(n_cells / nx))
    zones = [{"name": "aquifer", "kh": "10 m/d", "kv": "3 m/d"}]
    xs = np.linspace(-WIDTH / 2, WIDTH / 2, boxes + 1)
    zs = np.linspace(-DEPTH, 0.0, boxes + 1)
    rng = np.random.default_rng(5)
    for i in range(boxes):
        for k in range(boxes):
            kv = float(3.0 / 86400 * 10 ** rng.uniform(-0.5, 0.5))
            zones.append({"name": f"b{i}_{k}", "kh": 3 * kv, "kv": kv,
                          "x": [float(xs[i]), float(xs[i + 1])], "z": [float(zs[k]), float(zs[k + 1])]})
    return {"title": f"benchmark section {nx} x {nz}, {boxes * boxes} boxes",
            "grid": {"x": [-WIDTH / 2, WIDTH / 2], "bottom": -DEPTH, "dx": WIDTH / nx, "dz": DEPTH / nz},
            "ground": {"elevation": 0.0},
            "zone": zones,
            "stream": {"stage": 0.5},
            "sides": {"left": {"head": 0.9}, "right": {"head": 0.8}, "bottom": {"head": 0.7}}}


def table(n: int) -> pd.DataFrame:
    """``n`` observations: 60 % heads, 20 % gradients, 20 % seepage fluxes, spread over the section."""
    rng = np.random.default_rng(1)
    kinds = ["head"] * int(0.6 * n) + ["vhg"] * int(0.2 * n)
    kinds += ["seepage"] * (n - len(kinds))
    x = rng.uniform(-0.45 * WIDTH, 0.45 * WIDTH, n)
    depth = np.where(np.array(kinds) == "seepage", 0.0, rng.uniform(0.3, 0.9 * DEPTH, n))
    return pd.DataFrame({"kind": kinds, "x": x, "depth": depth, "time": 0.0, "value": 0.0, "sigma": 1.0})


def median_time(f, repeats: int) -> float:
    out = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        f()
        out.append(time.perf_counter() - t0)
    return min(out)  # the least disturbed repeat


def jacobian_case(n_cells: float, boxes: int, n_obs: int, repeats: int, central: bool) -> dict:
    s = bedflux.Scenario.from_dict(section(n_cells, boxes))
    paths = [f"b{i}_{k}.kv" for i in range(boxes) for k in range(boxes)]
    free = free_parameters(s, [{"path": p, "low": 1e-9, "high": 1e-2} for p in paths])
    fw = Forward(s, table(n_obs), free)
    m = fw.start()
    fw.predict(m)  # warm up
    t_fwd = median_time(lambda: fw.predict(m), repeats)
    solves0 = fw.n_sensitivity_solves
    t_jac = median_time(lambda: fw.predict_and_jacobian(m), repeats)
    solves = (fw.n_sensitivity_solves - solves0) // repeats
    t_fd = median_time(lambda: fw.jacobian_fd(m), 1) if central else float("nan")
    P = len(paths)
    return {"P": P, "N": n_obs, "cells": int(np.isfinite(bedflux.simulate(s)["head"].values).sum()),
            "forward_s": t_fwd, "jacobian_s": t_jac, "ratio": t_jac / t_fwd,
            "extra": (t_jac - t_fwd) / t_fwd, "method": "direct" if solves == P else "adjoint",
            "solves": solves, "fd_one_sided_runs": P + 1, "fd_central_s": t_fd,
            "fd_central_ratio": t_fd / t_fwd}


def block_solve_case(n_cells: float, boxes: int, k: int, repeats: int) -> dict:
    """k back-substitutions with the forward factor: as one (n, k) block, and one column at a time."""
    from bedflux.section.discretisation import discretise
    from bedflux.section.steady import solve_steady

    sec = discretise(bedflux.Scenario.from_dict(section(n_cells, boxes)))
    t_fwd = median_time(lambda: solve_steady(sec, reuse=True), repeats)
    factor = solve_steady(sec, reuse=True).factor
    B = np.random.default_rng(0).standard_normal((sec.n, k))
    t_block = median_time(lambda: factor.solve(B), repeats)
    t_loop = median_time(lambda: [factor.solve(B[:, j].copy()) for j in range(k)], repeats)
    return {"k": k, "steady_solve_s": t_fwd, "block_s": t_block, "loop_s": t_loop}


def calibration_case(n_cells: float) -> dict:
    d = section(n_cells, 1)  # one box over the whole domain: the "aquifer" zone
    d["zone"] = [{"name": "aquifer", "kh": "10 m/d", "kv": "3 m/d"},
                 {"name": "bed", "kh": "0.5 m/d", "kv": "0.05 m/d", "depth": 0.5, "x": [-20, 20]}]
    truth = {"aquifer.kh": 10 / 86400, "aquifer.kv": 3 / 86400, "bed.kv": 0.05 / 86400, "sides.left.head": 0.9}
    s = bedflux.Scenario.from_dict(d)
    obs = table(60)
    free_true = [{"path": p, "low": 1e-9 if not p.endswith("head") else 0.0,
                  "high": 1e-2 if not p.endswith("head") else 2.0, "start": v} for p, v in truth.items()]
    fw = Forward(s, obs, free_parameters(s, free_true))
    t0 = time.perf_counter()
    d0 = fw.predict(fw.start())
    t_fwd = time.perf_counter() - t0
    sigma = np.where(obs["kind"] == "seepage", 0.05 * np.abs(d0) + 1e-9,
                     np.where(obs["kind"] == "vhg", 1e-3, 5e-3))
    obs = obs.assign(value=d0 + sigma * np.random.default_rng(2).standard_normal(len(obs)), sigma=sigma)
    free = [dict(f, start=f["start"] * 3 if not f["path"].endswith("head") else 1.2) for f in free_true]
    t0 = time.perf_counter()
    res = fit(s, obs, free)
    wall = time.perf_counter() - t0
    return {"cells": int(np.isfinite(bedflux.simulate(s)["head"].values).sum()), "wall_s": wall,
            "forward_s": t_fwd, "forward_runs": res.n_forward_runs,
            "relative_error": {p: abs(res.best[p] - v) / abs(v) for p, v in truth.items()},
            "reduced_chi_square": res.statistics["reduced_chi_square"], "verdicts": res.verdicts}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="2,000 cells, fewer repeats (a smoke run)")
    args = ap.parse_args()
    n = 2_000 if args.quick else 20_000
    repeats = 3 if args.quick else 9
    print(f"# bedflux {bedflux.__version__}, Python {platform.python_version()}, {platform.machine()}, "
          f"numpy {np.__version__}")
    rows = [jacobian_case(n, b, 100, repeats, central=True) for b in (2, 4, 8)]
    rows.append(jacobian_case(n, 8, 20, repeats, central=False))
    print("\n| P | N | cells | method | forward (s) | forward + Jacobian (s) | ratio to forward | "
          "extra over forward | FD one-sided (runs) | FD central measured (s) | FD central / forward |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    for r in rows:
        print(f"| {r['P']} | {r['N']} | {r['cells']} | {r['method']} ({r['solves']} solves) | {r['forward_s']:.3f} | "
              f"{r['jacobian_s']:.3f} | {r['ratio']:.2f} | {r['extra']:.2f} | {r['fd_one_sided_runs']} | "
              f"{r['fd_central_s']:.2f} | {r['fd_central_ratio']:.1f} |")
    for k in (16, 64):
        b = block_solve_case(n, 8, k, repeats)
        print(f"\n{b['k']} back-substitutions with the factor of the 64-box section: one ({n:.0f}, {b['k']}) block {b['block_s']:.3f} s, "
              f"column by column {b['loop_s']:.3f} s (a whole steady solve with factorization {b['steady_solve_s']:.3f} s)")
    c = calibration_case(n)
    print(f"\ncalibration, 4 parameters, {c['cells']} cells, 60 observations: wall {c['wall_s']:.2f} s, "
          f"{c['forward_runs']} forward runs (one forward run {c['forward_s']:.3f} s), "
          f"reduced chi-square {c['reduced_chi_square']:.2f}")
    print("  relative error of the estimates:", {k: f"{v:.1e}" for k, v in c["relative_error"].items()})
    print("  verdicts:", c["verdicts"])


if __name__ == "__main__":
    main()
