"""Benchmark of the temperature reduction (not collected by pytest):
``python tests/bench/bench_thermal.py``; figures go to docs/performance.md.

60 days of hourly readings at 20 sites, two sensors each (5 and 15 cm), made from the periodic
solution with noise (invented records):

- ``flux_from_temperature`` per sensor pair, daily windows (60 windows, 300 Monte Carlo samples
  each) and, as a heavier case, windows stepping by an hour (1417 overlapping windows);
- ``reduce_field`` on a folder with the 20-site temperature sheet (reading, checking, all pairs,
  the summary), per pair;
- beside them, in the same run: the harmonic fit of one pair's two records by a per-window
  ``numpy.linalg.lstsq`` loop, the plain way the vectorised fit replaces.

``python tests/bench/bench_thermal.py errors`` prints instead the measured errors of the three
methods (docs/field.md): records of 60 days for fluxes from -1e-5 to 1e-5 m/s, sensors 10 cm
apart, 0.02 degC noise, the bed's properties known (the sand defaults are the truth) or the
conductivity 20 % off.
"""
from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from bedflux.field import flux_from_temperature, reduce_field
from bedflux.field.harmonics import fit_windows
from bedflux.field.periodic import periodic_temperature
from bedflux.field.thermal_properties import SEDIMENTS, WATER_HEAT_CAPACITY

DAY = 86400.0
SITES, DAYS = 20, 60
SAND = SEDIMENTS["sand"]


def records(seed: int = 0):
    rng = np.random.default_rng(seed)
    t = np.arange(0.0, DAYS * DAY, 3600.0)
    fluxes = np.linspace(-4e-6, 4e-6, SITES)
    out = []
    for q in fluxes:
        v = -q * WATER_HEAT_CAPACITY / SAND.heat_capacity
        pair = [periodic_temperature(t, z, v, SAND.diffusivity, mean=15.0, amplitude=3.0) + rng.normal(0, 0.02, t.size)
                for z in (0.05, 0.15)]
        out.append(pair)
    return t, fluxes, out


def best_of(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def lstsq_loop(t, y, centres):
    w = 2 * np.pi / DAY
    for c in centres:
        m = (t >= c - DAY / 2) & (t < c + DAY / 2)
        tt = t[m]
        X = np.column_stack([np.ones_like(tt), tt, np.cos(w * tt), np.sin(w * tt)])
        np.linalg.lstsq(X, y[m], rcond=None)


def main() -> int:
    t, fluxes, recs = records()
    shallow, deep = recs[0]
    daily = best_of(lambda: [flux_from_temperature(t, s, d, 0.1, SAND.thermal_conductivity, SAND.heat_capacity)
                             for s, d in recs], repeat=3) / SITES
    hourly = best_of(lambda: flux_from_temperature(t, shallow, deep, 0.1, SAND.thermal_conductivity,
                                                   SAND.heat_capacity, step=3600.0), repeat=3)
    centres = DAY / 2 + DAY * np.arange(DAYS)
    fit = best_of(lambda: (fit_windows(t, shallow, centres, DAY, DAY), fit_windows(t, deep, centres, DAY, DAY)))
    loop = best_of(lambda: (lstsq_loop(t, shallow, centres), lstsq_loop(t, deep, centres)))
    errors = []
    for q, (s, d) in zip(fluxes, recs):
        est = flux_from_temperature(t, s, d, 0.1, SAND.thermal_conductivity, SAND.heat_capacity)
        errors.append(np.abs(est["flux"] - q).max())
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / "sites.csv").write_text("site,x [m],y [m],bed_elevation [m]\n" + "".join(
            f"S{i},{10 * i},2,100\n" for i in range(SITES)))
        rows = ["site,time [h],depth [cm],temperature [degC]"]
        for i, (s, d) in enumerate(recs):
            rows += [f"S{i},{h:g},5,{v:.3f}" for h, v in zip(t / 3600, s)]
            rows += [f"S{i},{h:g},15,{v:.3f}" for h, v in zip(t / 3600, d)]
        (folder / "temperature.csv").write_text("\n".join(rows) + "\n")
        sheet = best_of(lambda: reduce_field(folder), repeat=2) / SITES
    print(f"load average (1 min) after the run: {os.getloadavg()[0]:.1f}")
    print(f"readings per sensor {t.size}, sites {SITES}, one pair per site")
    print(f"flux_from_temperature, daily windows: {daily * 1e3:.1f} ms per pair")
    print(f"flux_from_temperature, hourly-stepped windows (1417): {hourly * 1e3:.1f} ms per pair")
    print(f"reduce_field on the 20-site sheet: {sheet * 1e3:.1f} ms per pair")
    print(f"harmonic fit of both records, vectorised: {fit * 1e3:.2f} ms; per-window lstsq loop: "
          f"{loop * 1e3:.2f} ms (ratio {loop / fit:.1f})")
    print(f"largest error over all windows and sites: {max(errors) * 86400 * 100:.2f} cm/d")
    return 0


def errors() -> int:
    t = np.arange(0.0, DAYS * DAY, 3600.0)
    print("| true flux (cm/d) | conductivity assumed | method | windows read | RMS error (cm/d) | "
          "mean stated sd (cm/d) | within 2 sd | windows flagged |")
    print("|---|---|---|---|---|---|---|---|")
    cm = 86400 * 100
    for q in (-1e-5, -3e-6, -1e-6, 0.0, 1e-6, 3e-6, 1e-5):
        rng = np.random.default_rng(1)
        v = -q * WATER_HEAT_CAPACITY / SAND.heat_capacity
        s, d = (periodic_temperature(t, z, v, SAND.diffusivity, mean=15.0, amplitude=3.0) + rng.normal(0, 0.02, t.size)
                for z in (0.05, 0.15))
        for lam, word in ((SAND.thermal_conductivity, "true"), (1.2 * SAND.thermal_conductivity, "+20 %")):
            est = flux_from_temperature(t, s, d, 0.1, lam, SAND.heat_capacity)
            for m in ("amplitude", "phase", "combined"):
                read = np.isfinite(est[f"flux_{m}"]).to_numpy()
                e = (est[f"flux_{m}"] - q).to_numpy()[read]
                sd = est[f"flux_{m}_sd"].to_numpy()[read]
                inside = np.mean(np.abs(e) <= 2 * sd) if read.any() else np.nan
                rms = np.sqrt(np.mean(e ** 2)) * cm if read.any() else np.nan
                mean_sd = np.mean(sd) * cm if read.any() else np.nan
                print(f"| {q * cm:.3g} | {word} | {m} | {read.mean():.0%} | {rms:.2f} | {mean_sd:.2f} | "
                      f"{inside:.0%} | {np.mean(est['flag'] != ''):.0%} |")
    return 0


if __name__ == "__main__":
    sys.exit(errors() if sys.argv[1:] == ["errors"] else main())
