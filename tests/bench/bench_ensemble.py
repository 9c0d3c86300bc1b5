"""Benchmark of ensembles (not collected by pytest).

    python tests/bench/bench_ensemble.py [--members 200] [--repeats 7] [--skip-scaling]

1. Overhead per member over a bare ``simulate`` of the same scenario, in one process: a steady
   8-cell column (where Python overhead shows) and the transient example
   scenarios/heterogeneous_bed.toml. A member = draw + ``with_values`` + random field + simulate +
   answers; the event answers (reversal, bank storage, penetration by particle tracking) are
   timed apart, as they are answers rather than overhead.
2. Engine overhead per member on a LocalCluster of one worker: (wall time - sum of the
   members' own run times) / members, for the column ensemble, one member per task and as many
   as the command would put in a task.
3. Scaling: the example ensemble (transient members) on LocalClusters of 1 and 2 single-threaded
   workers, wall time from the first submission to the last result (cluster start-up apart);
   efficiency = T1 / (2 T2).

The machine's load average is printed beside the figures: on a shared machine the scaling
figure measures the cores left over as much as the engine.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path


import bedflux
from bedflux.ensembles.engine import chunk_size
from bedflux.ensembles.members import member_events, run_member
from bedflux.ensembles.run import run_spec
from bedflux.ensembles.spec import build_spec, load_ensemble

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests" / "ensemble"))
from ensemble_columns import column  # noqa: E402


def best(f, repeats: int) -> float:
    out = []
    for _ in range(repeats):
        t = time.perf_counter()
        f()
        out.append(time.perf_counter() - t)
    return min(out)


def overhead(spec, repeats: int) -> dict:
    s = spec.scenario
    bedflux.simulate(s)
    t_sim = best(lambda: bedflux.simulate(s), repeats)
    draw = spec.draw(0)
    t_member = best(lambda: run_member(spec, draw), repeats)
    ds = bedflux.simulate(s.with_values(draw.values))
    t_events = best(lambda: member_events(ds), repeats) if "time" in ds.dims else 0.0
    t_values = best(lambda: s.with_values(draw.values), repeats)
    t_field = 0.0
    if spec.fields:
        from bedflux.section.grid import build_grid
        t_field = best(lambda: [rf.multipliers(build_grid(s), 1) for rf in spec.fields], repeats)
    return {"simulate": t_sim, "member": t_member, "events": t_events, "with_values": t_values,
            "field": t_field, "overhead": t_member - t_sim - t_events}


def local(n: int):
    from distributed import Client, LocalCluster
    from bedflux.ensembles.engine import SINGLE_THREAD_ENV

    t = time.perf_counter()
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=None,
                           env=dict(SINGLE_THREAD_ENV))
    client = Client(cluster)
    client.wait_for_workers(n)
    return cluster, client, time.perf_counter() - t


def timed_run(spec, client, chunk: int = 1) -> tuple[float, float]:
    t = time.perf_counter()
    ds = run_spec(spec, client, chunk=chunk)
    return time.perf_counter() - t, float(ds["run_seconds"].sum())


def main() -> None:
    p = argparse.ArgumentParser()
    p.add_argument("--members", type=int, default=200)
    p.add_argument("--repeats", type=int, default=5)
    p.add_argument("--skip-scaling", action="store_true")
    a = p.parse_args()
    print(f"cores {os.cpu_count()}, load average at start {os.getloadavg()}")
    col = build_spec(column(), 400, [{"path": "bed.kv", "distribution": "lognormal", "median": 1e-6,
                                      "sd_log10": 0.4}], seed=1)
    example = load_ensemble(ROOT / "scenarios" / "heterogeneous_bed_ensemble.toml")
    example = type(example)(**{**example.__dict__, "members": a.members})
    print("\n| member of | simulate | member | events | with_values | random field | overhead | overhead / simulate |")
    print("|---|---|---|---|---|---|---|---|")
    for name, spec in (("8-cell column (steady)", col), ("heterogeneous_bed (transient)", example)):
        o = overhead(spec, a.repeats)
        print(f"| {name} | {1e3 * o['simulate']:.1f} ms | {1e3 * o['member']:.1f} ms | {1e3 * o['events']:.1f} ms "
              f"| {1e3 * o['with_values']:.1f} ms | {1e3 * o['field']:.1f} ms | {1e3 * o['overhead']:.1f} ms "
              f"| {100 * o['overhead'] / o['simulate']:.0f} % |")
    cluster, client, start = local(1)
    print(f"\nLocalCluster(1) start-up {start:.1f} s")
    t_member = best(lambda: run_member(col, col.draw(0)), a.repeats)
    for chunk in (1, chunk_size(t_member)):
        wall, own = timed_run(col, client, chunk)
        print(f"column ensemble of {col.members}, {chunk} members per task: wall {wall:.2f} s, members' "
              f"own time {own:.2f} s, engine overhead {1e3 * (wall - own) / col.members:.1f} ms per member")
    if a.skip_scaling:
        client.close(); cluster.close()
        return
    rows = []
    for n in (1, 2):
        if n == 2:
            client.close(); cluster.close()
            cluster, client, start = local(2)
        load0 = os.getloadavg()[0]
        wall, own = timed_run(example, client)
        rows.append((n, wall, own, load0, os.getloadavg()[0]))
    client.close(); cluster.close()
    print(f"\n{example.members} transient members (heterogeneous_bed_ensemble.toml)")
    print("| workers | wall time | sum of member times | load average before / after |")
    print("|---|---|---|---|")
    for n, wall, own, l0, l1 in rows:
        print(f"| {n} | {wall:.1f} s | {own:.1f} s | {l0:.2f} / {l1:.2f} |")
    print(f"efficiency T1 / (2 T2) = {rows[0][1] / (2 * rows[1][1]):.2f}")


if __name__ == "__main__":
    main()
