"""The same seed gives the same members, one after another, on a local cluster of two workers,
and on a scheduler and a worker started from the command line.

Member i draws from numpy SeedSequence([seed, i]) alone (numpy's documented way to make
independent, reproducible streams for parallel work: NumPy docs, "Parallel Random Number
Generation"), so where and in which order members run must not change a single bit.
"""
from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import bedflux

from ensemble_columns import column

ROOT = Path(__file__).resolve().parents[2]
UNCERTAIN = [{"path": "bed.kv", "distribution": "lognormal", "median": 1e-6, "sd_log10": 0.4},
             {"path": "sand.kv", "distribution": "uniform", "min": 5e-5, "max": 2e-4}]
FIELDS = [{"zone": "bed", "property": "k", "sd_log10": 0.3, "along": 1.0, "across": 0.1}]
MEMBERS = 12


def run(client=None) -> xr.Dataset:
    return bedflux.ensemble(column(), MEMBERS, uncertain=UNCERTAIN, random_fields=FIELDS, seed=42, client=client)


def identical(a: xr.Dataset, b: xr.Dataset) -> None:
    for name in ("parameter_value", "bed_flux", "exchange"):
        np.testing.assert_array_equal(a[name].values, b[name].values)
    np.testing.assert_array_equal(a["member"].values, np.arange(MEMBERS))


@pytest.fixture(scope="module")
def serial() -> xr.Dataset:
    ds = run()
    # the random field matters: the same values without it give other fluxes
    plain = bedflux.ensemble(column(), MEMBERS, uncertain=UNCERTAIN, seed=42)
    np.testing.assert_array_equal(plain["parameter_value"].values, ds["parameter_value"].values)
    assert not np.allclose(plain["bed_flux"].values, ds["bed_flux"].values)
    return ds


def test_serial_runs_repeat(serial):
    identical(serial, run())
    # and another seed draws other members
    other = bedflux.ensemble(column(), MEMBERS, uncertain=UNCERTAIN, random_fields=FIELDS, seed=43)
    assert not np.allclose(other["parameter_value"].values, serial["parameter_value"].values)


@pytest.mark.slow
def test_local_cluster_of_two_workers(serial):
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        identical(serial, run(client))


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def dask_command(what: str) -> list[str]:
    """``dask scheduler`` / ``dask worker`` as a user types them (the console script beside this Python)."""
    script = Path(sys.executable).with_name("dask")
    if script.exists():
        return [str(script), what]
    return [sys.executable, "-m", f"distributed.cli.dask_{what}"]


def wait_for_worker(address: str, timeout: float = 60.0):
    from distributed import Client

    client = Client(address, timeout="30s")
    client.wait_for_workers(1, timeout=timeout)
    return client


@pytest.mark.slow
def test_scheduler_and_worker_from_the_command_line(serial, tmp_path):
    port = free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = {**os.environ, "PYTHONPATH": str(ROOT / "model"), "OMP_NUM_THREADS": "1"}
    procs = [subprocess.Popen(dask_command("scheduler") + ["--host", "127.0.0.1", "--port", str(port), "--dashboard-address", ":0",
                                      "--no-show"], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                              cwd=tmp_path)]
    try:
        time.sleep(1.0)
        procs.append(subprocess.Popen(dask_command("worker") + [address,
                                       "--nthreads", "1", "--nworkers", "1", "--no-dashboard",
                                       "--local-directory", str(tmp_path)],
                                      env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=tmp_path))
        client = wait_for_worker(address)
        try:
            identical(serial, run(client))
        finally:
            client.close()
        # and the command line on the same cluster
        ens = tmp_path / "ens.toml"
        scen = tmp_path / "column.toml"
        import tomli_w
        scen.write_text(tomli_w.dumps(dict(column().raw)))
        ens.write_text(f'scenario = "column.toml"\nmembers = {MEMBERS}\nseed = 42\n'
                       + "".join("[[uncertain]]\n" + tomli_w.dumps(u) for u in UNCERTAIN)
                       + "".join("[[random_field]]\n" + tomli_w.dumps(f) for f in FIELDS))
        r = subprocess.run([sys.executable, "-m", "bedflux.cli", "ensemble", str(ens), "-o", str(tmp_path / "out"),
                            "--scheduler", address, "-q"], env=env, capture_output=True, text=True, timeout=300)
        assert r.returncode == 0, r.stderr
        with xr.open_dataset(tmp_path / "out" / "ensemble.nc", engine="h5netcdf") as ds:
            identical(serial, ds.load())
    finally:
        for p in reversed(procs):
            p.terminate()
        for p in reversed(procs):
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                p.kill()
                p.wait()
