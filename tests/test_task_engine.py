"""``fit`` and ``plan`` on a dask cluster: the same numbers as in one process, and bad engine options.

- A multi-start fit of one bed conductivity to a metered flux and a gradient inside the bed: the
  fitted kv is q / i (Darcy 1856; Freeze & Cherry 1979, ch. 2, eq. 2.3, equation number from
  memory), and every start, the covariance and the count of forward runs are those of the serial
  fit, to round-off.
- The posterior sampler (emcee, Foreman-Mackey et al. 2013) given a pool that maps its walkers over
  the workers draws the same chain as without one: emcee's moves use its own random state, the
  pool only evaluates the log-probabilities (emcee documentation, "Parallelization", from memory).
- A plan for a prediction (the net exchange), whose gradient comes from central differences of
  perturbed runs, picks the same instruments with the same spreads.
- ``--workers`` below 1 and an unreachable ``--scheduler`` exit 2 with a message naming the option
  (the contract for bad input, design.md).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import bedflux
from bedflux.calibration import cluster
from bedflux.calibration.estimate import fit
from bedflux.cli import main
from bedflux.planning import plan

pytest.importorskip("distributed")

STAGE, BED = 0.2, 0.4
Q, I, DEPTH = 2e-6, 0.25, 0.375  # invented metered flux (m/s), gradient, opening inside the bed (m)
KV_FREE = {"path": "bed.kv", "low": 1e-9, "high": 1e-2, "start": 1e-4, "log": True}


def column() -> bedflux.Scenario:
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -2.0, "dx": 1.0, "dz": 0.05},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 5e-5},
                 {"name": "bed", "kh": 3e-5, "kv": 1e-5, "depth": BED}],
        "stream": {"stage": STAGE},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": 0.6}}})


def observations() -> pd.DataFrame:
    return pd.DataFrame({"kind": ["seepage", "vhg"], "x": [0.5, 0.5], "depth": [0.0, DEPTH], "time": 0.0,
                         "value": [Q, I], "sigma": [Q * 0.1, I * 0.1]})


FREE = [KV_FREE, {"path": "sides.bottom.head", "low": -3.0, "high": 3.0, "start": 0.6}]


@pytest.fixture(scope="module")
def client():
    with cluster.Engine(workers=2) as engine:
        yield engine.client


def test_multi_start_fit_on_workers_equals_serial(client):
    serial = fit(column(), observations(), FREE, starts=4, seed=3)
    tasks = fit(column(), observations(), FREE, starts=4, seed=3, client=client)
    assert tasks.best["bed.kv"] == pytest.approx(Q / I, rel=1e-6)  # Darcy: kv = q / i
    assert [s["objective"] for s in tasks.starts] == pytest.approx([s["objective"] for s in serial.starts],
                                                                  rel=1e-12, abs=1e-18)
    for a, b in zip(serial.starts, tasks.starts):
        assert a["evaluations"] == b["evaluations"]
        for path in a["values"]:
            assert b["values"][path] == pytest.approx(a["values"][path], rel=1e-12)
    for path in serial.best:
        assert tasks.best[path] == pytest.approx(serial.best[path], rel=1e-12)
    np.testing.assert_allclose(tasks.covariance, serial.covariance, rtol=1e-9)
    assert tasks.n_forward_runs == serial.n_forward_runs


def test_one_start_fit_takes_its_difference_columns_on_the_workers(client):
    # the layer depth has no analytic derivative: its Jacobian column is a central difference of
    # two runs, which with a client run as tasks; the fit (Darcy: kv = q / i at the true depth) and
    # every figure equal the serial fit's
    free = [KV_FREE, {"path": "bed.depth", "low": 0.2, "high": 0.6, "start": 0.35}]
    serial = fit(column(), observations(), free, seed=3)
    mapped = []
    original = cluster.TaskPool.map

    def counting(self, function, items):
        items = list(items)
        mapped.append(len(items))
        return original(self, function, items)

    cluster.TaskPool.map = counting
    try:
        tasks = fit(column(), observations(), free, seed=3, client=client)
    finally:
        cluster.TaskPool.map = original
    assert mapped and all(n == 1 for n in mapped)  # one difference column per Jacobian, on the workers
    for path in serial.best:
        assert tasks.best[path] == pytest.approx(serial.best[path], rel=1e-12)
    np.testing.assert_allclose(tasks.covariance, serial.covariance, rtol=1e-9)
    assert tasks.n_forward_runs == serial.n_forward_runs


def test_posterior_sampler_with_a_task_pool_draws_the_same_chain(client):
    free = [dict(KV_FREE, start=Q / I)]
    obs = observations()
    scenario = column().with_values({"sides.bottom.head": STAGE + Q * (BED / (Q / I) + (2.0 - BED) / 5e-5)})
    serial = fit(scenario, obs, free, sample=12, seed=5)
    tasks = fit(scenario, obs, free, sample=12, seed=5, client=client)
    assert set(tasks.posterior) == set(serial.posterior)
    assert tasks.posterior["_acceptance"] == serial.posterior["_acceptance"]
    for key in ("p2.5", "median", "p97.5"):
        assert tasks.posterior["bed.kv"][key] == pytest.approx(serial.posterior["bed.kv"][key], rel=1e-12)


def small_section() -> bedflux.Scenario:
    return bedflux.Scenario.from_dict({
        "grid": {"x": [-6.0, 6.0], "bottom": -3.0, "dx": 0.5, "dz": 0.2},
        "ground": {"profile": [[-6, 1.0], [-3, 1.0], [-2, 0.0], [2, 0.0], [3, 1.0], [6, 1.0]]},
        "zone": [{"name": "aquifer", "kh": "8 m/d", "kv": "3 m/d"},
                 {"name": "bed", "kh": "2 m/d", "kv": "0.5 m/d", "depth": 0.4, "x": [-3, 3]}],
        "stream": {"stage": 0.4},
        "sides": {"left": {"head": 0.9}, "right": {"head": 0.7}}})


def test_plan_for_a_prediction_on_workers_equals_serial(client):
    free = [{"path": "bed.kv", "low": 1e-7, "high": 1e-3}, {"path": "aquifer.kh", "low": 1e-6, "high": 1e-2}]
    xs = np.arange(-2.25, 2.3, 0.75)
    cand = pd.DataFrame([("seepage", x, 0.0) for x in xs] + [("piezometer", x, 0.3) for x in xs],
                        columns=["kind", "x", "depth"])
    serial = plan(small_section(), free, cand, 3, target="exchange")
    tasks = plan(small_section(), free, cand, 3, target="exchange", client=client)
    assert list(tasks["kind"]) == list(serial["kind"]) and list(tasks["x"]) == list(serial["x"])
    np.testing.assert_allclose(tasks["expected_sd"], serial["expected_sd"], rtol=1e-12)
    assert tasks.attrs["target_value"] == pytest.approx(serial.attrs["target_value"], rel=1e-14)
    np.testing.assert_allclose(tasks.attrs["single_sd"], serial.attrs["single_sd"], rtol=1e-12)


FIT = """scenario = "{scenario}"
observations = "obs.csv"
[[free]]
path = "bed.kv"
low = "0.01 m/d"
high = "10 m/d"
"""


def fit_file(tmp_path):
    scenario = tmp_path / "column.toml"
    scenario.write_text('[grid]\nx = [0.0, 1.0]\nbottom = -2.0\ndx = 1.0\ndz = 0.05\n[ground]\nelevation = 0.0\n'
                        '[[zone]]\nname = "aquifer"\nkh = 1e-4\nkv = 5e-5\n[[zone]]\nname = "bed"\nkh = 3e-5\n'
                        'kv = 1e-5\ndepth = 0.4\n[stream]\nstage = 0.2\n[sides]\nleft = "no-flow"\n'
                        'right = "no-flow"\nbottom = {flux = 2e-6}\n')
    observations().to_csv(tmp_path / "obs.csv", index=False)
    path = tmp_path / "fit.toml"
    path.write_text(FIT.format(scenario=scenario.as_posix()))
    return path


@pytest.mark.parametrize("workers", ["0", "-2"])
def test_workers_below_one_exit_2(tmp_path, capsys, workers):
    path = fit_file(tmp_path)
    assert main(["fit", str(path), "-o", str(tmp_path / "out"), "-q", "--workers", workers]) == 2
    err = capsys.readouterr().err
    assert "--workers" in err and "at least 1" in err and "Traceback" not in err
    assert not (tmp_path / "out").exists()
    assert main(["plan", str(tmp_path / "missing.toml"), "-o", str(tmp_path / "p"), "--workers", workers]) == 2
    assert "--workers" in capsys.readouterr().err


def test_unreachable_scheduler_exit_2(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(cluster, "CONNECT_TIMEOUT", "1s")
    path = fit_file(tmp_path)
    assert main(["fit", str(path), "-o", str(tmp_path / "out"), "-q", "--scheduler", "tcp://127.0.0.1:1"]) == 2
    err = capsys.readouterr().err
    assert "--scheduler" in err and "cannot reach a dask scheduler" in err and "Traceback" not in err
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_serial_without_options_starts_no_cluster(tmp_path, capsys, monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("a cluster was started")

    monkeypatch.setattr(cluster.Engine, "__enter__", refuse)
    path = fit_file(tmp_path)
    assert main(["fit", str(path), "-o", str(tmp_path / "out"), "-q"]) == 0
