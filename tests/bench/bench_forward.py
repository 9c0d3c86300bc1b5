"""Benchmark of a calibration's forward run on a small section (not collected by pytest).

    python tests/bench/bench_forward.py [--fits N] [--repeats R]

Case: the coverage test's column (tests/fit/test_coverage.py): 8 cells, a 0.5 m bed over 1.5 m
of aquifer, free the bed kv (log10) and the base head, 5 observations. Timed in one process
(CPU time of the process, the median over ``R`` calls, each at a new parameter vector):

- one solve: factorization and back-substitution of the column's matrix (the floor);
- ``Forward.predict``: a forward run as an optimiser's residual asks for it;
- ``Forward.predict`` then ``Forward.jacobian`` at the same vector (an accepted step);
- ``Forward.predict_and_jacobian``;
- ``N`` fits as in the coverage test (one ``Forward``, new noisy values per fit, start at the truth).

Uses only the public interface, so the same script times older versions of the package.
Prints a markdown table for docs/performance.md.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "fit"))
from bedflux.calibration.estimate import calibrate
from bedflux.forward.sensitivity import Forward, free_parameters
from bedflux.section.discretisation import discretise
from bedflux.section.linear import factorize
from bedflux.section.steady import solve_steady
from test_coverage import FREE, SEED, TABLE, TRUE_HEAD, TRUE_KV, column, exact_data


def median_cpu(call, points: list[np.ndarray]) -> float:
    """Median CPU time (s) of ``call(m)`` over the points."""
    out = []
    for m in points:
        t0 = time.process_time()
        call(m)
        out.append(time.process_time() - t0)
    return float(np.median(out))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--fits", type=int, default=600)
    ap.add_argument("--repeats", type=int, default=2000)
    args = ap.parse_args()
    s = column()
    truth = np.array([np.log10(TRUE_KV), TRUE_HEAD])
    rng = np.random.default_rng(0)
    points = [truth + rng.normal(0.0, [0.05, 0.05]) for _ in range(args.repeats)]
    sec = discretise(s)
    sol = solve_steady(sec, reuse=True)
    A, b = sol.factor.matrix, sec.rhs(sol.terms)
    solve = median_cpu(lambda m: factorize(A).solve(b), points)
    fw = Forward(s, TABLE, free_parameters(s, FREE))
    fw.predict(truth)
    predict = median_cpu(fw.predict, points)
    fw2 = Forward(s, TABLE, free_parameters(s, FREE))
    fw2.predict(truth)
    both = median_cpu(lambda m: (fw2.predict(m), fw2.jacobian(m)), points)
    fw3 = Forward(s, TABLE, free_parameters(s, FREE))
    fw3.predict(truth)
    combined = median_cpu(fw3.predict_and_jacobian, points)

    data = exact_data()
    draws = np.random.default_rng(SEED)
    from_truth = [dict(f, start=v) for f, v in zip(FREE, (TRUE_KV, TRUE_HEAD))]
    forward = Forward(s, TABLE, free_parameters(s, from_truth))
    checked = forward.observations
    t0, w0 = time.process_time(), time.perf_counter()
    for _ in range(args.fits):
        forward.observations = checked.assign(value=data + TABLE["sigma"].to_numpy() * draws.standard_normal(5))
        calibrate(forward)
    fits_cpu, fits_wall = time.process_time() - t0, time.perf_counter() - w0
    load = os.getloadavg()[0]

    print(f"load average {load:.1f}; CPU times, median of {args.repeats} calls at new parameter vectors\n")
    print("| step | CPU time | in solves |")
    print("|---|---|---|")
    for name, t in (("one solve (factorize + back-substitute)", solve), ("`predict`", predict),
                    ("`predict` then `jacobian`", both), ("`predict_and_jacobian`", combined)):
        print(f"| {name} | {t * 1e3:.3f} ms | {t / solve:.1f} |")
    print(f"\n{args.fits} fits: {fits_cpu:.2f} s CPU ({fits_wall:.2f} s wall), {fits_cpu / args.fits * 1e3:.1f} ms "
          f"per fit, {forward.n_forward_runs / args.fits:.2f} forward runs per fit")


if __name__ == "__main__":
    main()
