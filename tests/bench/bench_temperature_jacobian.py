"""Benchmark of the temperature Jacobian: direct method against central differences
(not collected by pytest).

    python tests/bench/bench_temperature_jacobian.py [--quick]

Three cases with `[heat]` and temperature loggers (invented):

- ``steady flow``: a section across a gaining channel, a daily stream-temperature wave over two
  days, 15-minute steps (heat factorized once);
- ``flood``: the same section under a stage pulse over its floodplain (heat after every flow step,
  its matrix factorized every step);
- ``unsaturated``: the flood with loamy-sand retention tables in aquifer and bed (Richards steps).

Free: bed kv, aquifer kh, recharge, a side head (not in the unsaturated case), the bed's thermal
conductivity and heat capacity (P = 6; 5 in the unsaturated case). 30 loggers (3 depths at 5
places, two readings each) and 6 heads. Compared in one run: one ``Forward.predict`` (the forward
run), one ``Forward.predict_and_jacobian`` (forward run and the direct method) and the 2P forward
runs of central differences (``Forward.jacobian_fd``). Each timing the fastest of a few repeats.
Prints a markdown table for docs/performance.md.
"""
from __future__ import annotations

import argparse
import os
import time

import numpy as np
import pandas as pd

import bedflux
from bedflux.forward.sensitivity import Forward, free_parameters

RETENTION = {"model": "van-genuchten", "alpha": 2.9, "n": 1.8, "residual": 0.05, "saturated": 0.38}


def scenario(case: str, dx: float) -> bedflux.Scenario:
    d = {"title": f"benchmark: loggers under a channel ({case}, invented)",
         "grid": {"x": [-20.0, 20.0], "bottom": -6.0, "dx": dx, "dz": 0.05, "growth": 1.08, "dz_max": 0.4},
         "ground": {"profile": [[-20.0, 1.4], [-6.0, 1.0], [-4.0, 0.0], [4.0, 0.0], [6.0, 1.0], [20.0, 1.4]]},
         "zone": [{"name": "aquifer", "kh": "12 m/d", "kv": "4 m/d", "specific_storage": 1e-4,
                   "specific_yield": 0.18, "thermal_conductivity": 2.2, "dispersivity": 0.05},
                  {"name": "bed", "kh": "3 m/d", "kv": "1 m/d", "depth": 0.3, "x": [-5.0, 5.0], "porosity": 0.4,
                   "thermal_conductivity": 1.5, "heat_capacity": "2.2 MJ/m^3/K"}],
         "stream": {"stage": 0.4},
         "sides": {"left": {"head": 0.8}, "right": {"head": 0.7}, "bottom": "no-flow"},
         "recharge": {"rate": "0.5 mm/d"},
         "heat": {"stream_temperature": {"mean": 16, "amplitude": 4, "period": "1 d"},
                  "groundwater_temperature": 10, "ground_temperature": 18},
         "time": {"end": "2 d", "step": "15 min", "output_every": "6 h"}}
    if case != "steady flow":
        d["stream"] = {"pulse": {"base": 0.4, "peak": 1.3, "start": "6 h", "rise": "6 h", "fall": "12 h"}}
    if case == "unsaturated":
        for zone, saturated in zip(d["zone"], (0.38, 0.4)):
            zone["retention"] = {**RETENTION, "saturated": saturated}
    return bedflux.Scenario.from_dict(d)


def observations() -> pd.DataFrame:
    rows = [("temperature", x, z, t) for x in (-3.0, -1.0, 0.5, 2.0, 3.5) for z in (0.05, 0.15, 0.3)
            for t in (43200.0, 129600.0)]
    rows += [("head", x, 2.0, 86400.0) for x in (-15.0, -8.0, -2.0, 2.0, 8.0, 15.0)]
    return pd.DataFrame(rows, columns=["kind", "x", "depth", "time"]).assign(value=0.0, sigma=0.1)


FREE = [{"path": "bed.kv", "low": 1e-7, "high": 1e-2}, {"path": "aquifer.kh", "low": 1e-6, "high": 1e-2},
        {"path": "recharge.rate", "low": 0.0, "high": 1e-6}, {"path": "sides.left.head", "low": 0.0, "high": 2.0},
        {"path": "bed.thermal_conductivity", "low": 0.5, "high": 4.0},
        {"path": "bed.heat_capacity", "low": 1e6, "high": 4e6}]


def fastest(fn, repeats: int) -> float:
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def measure(case: str, dx: float, repeats: int) -> dict:
    s = scenario(case, dx)
    free = [f for f in FREE if not (case == "unsaturated" and f["path"] == "sides.left.head")]
    f = Forward(s, observations(), free_parameters(s, free))
    m = f.start()

    def forward():
        f._last = None  # a fresh run every time (the kept run would answer at once)
        f.predict(m)

    def with_jacobian():
        f._last = None
        f.predict_and_jacobian(m)

    t_fwd = fastest(forward, repeats)
    t_jac = fastest(with_jacobian, repeats)
    t_fd = fastest(lambda: f.jacobian_fd(m), 1)
    return {"case": case, "cells": f._section_at(m).n, "P": len(free), "forward": t_fwd, "jacobian": t_jac,
            "fd": t_fd}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="a coarser grid, one repeat")
    args = ap.parse_args()
    dx, repeats = (1.0, 1) if args.quick else (0.25, 3)
    print(f"load average {os.getloadavg()[0]:.1f}")
    print("| case | cells | P | forward (s) | forward + Jacobian (s) | Jacobian on top, in forward runs "
          "| central differences (2P runs, measured), in forward runs |")
    print("|---|---|---|---|---|---|---|")
    for case in ("steady flow", "flood", "unsaturated"):
        r = measure(case, dx, repeats)
        print(f"| {r['case']} | {r['cells']} | {r['P']} | {r['forward']:.3f} | {r['jacobian']:.3f} | "
              f"**{(r['jacobian'] - r['forward']) / r['forward']:.2f}** | {r['fd'] / r['forward']:.1f} |")
    print(f"load average {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
