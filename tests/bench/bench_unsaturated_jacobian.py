"""Benchmark of the variably saturated Jacobian: direct method against central differences
(not collected by pytest).

    python tests/bench/bench_unsaturated_jacobian.py [--quick]

A transient section across a channel and a loamy-sand bank (van Genuchten; a clogged bed under
the channel), a stage pulse that floods the lower bank, recharge on the exposed ground; free:
aquifer kh and kv, bed kv, aquifer retention alpha and n (P = 5); 40 observations (tensiometer and
piezometer heads in the bank, gradients and seepage fluxes on the bed, over the run). One process;
each timing the fastest of a few repeats. Compared in one run: one ``Forward.predict`` (the forward
run), one ``Forward.predict_and_jacobian`` (forward run and the direct method), and the 2P forward
runs of central differences (``Forward.jacobian_fd``). Prints a markdown table.
"""
from __future__ import annotations

import argparse
import os
import time
import warnings

import bedflux
import numpy as np
import pandas as pd
from bedflux.forward.sensitivity import Forward, free_parameters


def scenario(width: float, dx: float) -> bedflux.Scenario:
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, width], "bottom": -3.0, "dx": dx, "dz": 0.1},
        "ground": {"profile": [[0.0, 0.0], [3.0, 0.0], [5.0, 1.0], [width, 1.2]]},
        "zone": [{"name": "aquifer", "kh": "3.5 m/d", "kv": "1.7 m/d", "specific_storage": 1e-4,
                  "retention": {"model": "van-genuchten", "alpha": 12.4, "n": 2.28, "residual": 0.057,
                                "saturated": 0.41}},
                 {"name": "bed", "kh": "0.5 m/d", "kv": "0.1 m/d", "specific_storage": 2e-4, "depth": 0.3,
                  "x": [0.0, 3.2],
                  "retention": {"model": "van-genuchten", "alpha": 7.5, "n": 2.1, "residual": 0.065,
                                "saturated": 0.41}}],
        "stream": {"pulse": {"base": 0.3, "peak": 0.9, "start": "2 h", "rise": "3 h", "fall": "4 h"},
                   "channel": [0.0, 3.0]},
        "sides": {"right": {"head": 0.4}},
        "recharge": {"rate": "20 mm/d"},
        "time": {"end": "12 h", "step": "20 min", "output_every": "3 h"},
    })


FREE = [{"path": "aquifer.kh", "low": 1e-6, "high": 1e-3}, {"path": "aquifer.kv", "low": 1e-6, "high": 1e-3},
        {"path": "bed.kv", "low": 1e-8, "high": 1e-4},
        {"path": "aquifer.retention.alpha", "low": 2.0, "high": 30.0, "log": True},
        {"path": "aquifer.retention.n", "low": 2.05, "high": 3.5}]


def observations(width: float) -> pd.DataFrame:
    rows = []
    for t in np.linspace(0.0, 12 * 3600.0, 5):
        rows += [("head", x, d, t, 0.005) for x in (5.5, 0.6 * width) for d in (0.2, 0.5, 1.5)]
        rows += [("vhg", 1.5, 0.2, t, 0.01), ("seepage", 1.0, 0.0, t, 5e-8)]
    return pd.DataFrame(rows, columns=["kind", "x", "depth", "time", "sigma"]).assign(value=0.0)


def best_of(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    repeats = 1 if args.quick else 3
    print(f"load average before: {os.getloadavg()[0]:.1f}")
    print("| cells | P | N | forward (s) | forward + Jacobian (s) | Jacobian in forward runs | central differences (s) | central in forward runs | ratio central / direct |")
    print("|---|---|---|---|---|---|---|---|---|")
    for width, dx in ((10.0, 0.5), (20.0, 0.2)):
        s = scenario(width, dx)
        fw = Forward(s, observations(width), free_parameters(s, FREE))
        m = fw.start()
        def fresh(call):
            fw._last = None  # a fresh run every time (the kept run would answer at once)
            return call(m)

        forward = best_of(lambda: fresh(fw.predict), repeats)
        with_j = best_of(lambda: fresh(fw.predict_and_jacobian), repeats)
        central = best_of(lambda fw=fw, m=m: fw.jacobian_fd(m), 1)
        cells = int(bedflux.simulate(s).attrs["cells"])
        extra = (with_j - forward) / forward
        print(f"| {cells:,} | {fw.n_params} | {fw.n_data} | {forward:.2f} | {with_j:.2f} | {extra:.2f} | "
              f"{central:.1f} | {central / forward:.1f} | {central / (with_j - forward):.0f} |")
    print(f"load average after: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
