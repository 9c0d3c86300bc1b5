"""Outputs between steps: steps shortened to land on output times, and the budget check that stops
a run whose water budget does not close.

Sources:
- Step rise of stage over a deep 1D streambed column, Carslaw & Jaeger (1959), the erfc solution
  (references.md 6.1; the citation details are from memory):
      h(d, t) - h0 = dh erfc(d / (2 sqrt(D t))),   bed flux = -kv dh / sqrt(pi D t),   D = kv / ss.
  The column and the tolerances are those of test_step_erfc.py, fixed there before running from
  the truncation error of each scheme (backward Euler dt / t; Crank-Nicolson 5e-4). Here the
  output interval (25 s) is 2.5 steps of 10 s, so every third step is shortened to 5 s: the
  tolerances still hold, since a shorter step only lowers the truncation error. A
  Crank-Nicolson run also takes backward-Euler half steps of 5 s at its start; each scheme must
  use its own matrix for a step of that length.
- Conservation of volume: in every step sum(in) - sum(out) = 0 with the storage change, to
  round-off (common practice: below 1e-10 of the throughput with a direct solver), recomputed
  here from the budget lines.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.special import erfc

import bedflux
import bedflux.section.transient as transient
from bedflux.errors import SolverError

KV = 1e-5          # m/s
SS = 1e-3          # 1/m
D = KV / SS        # m^2/s
GROUND = 100.0
H0 = 100.0
DH = 0.5
DZ = 0.02
DT = 10.0          # s
EVERY = 25.0       # s: not a multiple of the step
CHECK_TIMES = (600.0, 1800.0, 3600.0)


def scenario(scheme, end="1 h"):
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": GROUND - 40.0, "dx": 1.0, "dz": DZ},
        "ground": {"elevation": GROUND},
        "zone": [{"name": "sand", "kh": 3 * KV, "kv": KV, "specific_storage": SS, "specific_yield": 0.2}],
        "stream": {"stage": H0 + DH},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"},
        "time": {"end": end, "step": DT, "output_every": EVERY, "scheme": scheme},
        "initial": {"head": H0}})


@pytest.fixture(scope="module", params=["backward-euler", "crank-nicolson"])
def result(request):
    return request.param, bedflux.simulate(scenario(request.param))


def tolerance(scheme, t):
    return DT / t if scheme == "backward-euler" else 5e-4


def test_outputs_fall_on_the_requested_times(result):
    _, ds = result
    np.testing.assert_allclose(ds["time"].values, EVERY * np.arange(3600.0 / EVERY + 1), rtol=0, atol=1e-9)


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_head_follows_erfc_with_shortened_steps(result, t):
    scheme, ds = result
    h = ds["head"].sel(time=t).values[:, 0]
    depth = GROUND - ds.z.values
    err = np.max(np.abs((h - H0) - DH * erfc(depth / (2.0 * np.sqrt(D * t)))))
    # Carslaw & Jaeger (1959) erfc step response
    assert err <= tolerance(scheme, t) * DH, f"{scheme} t={t:g}s: max head error {err:.3g} m"


@pytest.mark.parametrize("t", CHECK_TIMES)
def test_bed_flux_follows_erfc_with_shortened_steps(result, t):
    scheme, ds = result
    q = float(ds["bed_flux"].sel(time=t).values[0])
    exact = -KV * DH / np.sqrt(np.pi * D * t)     # Carslaw & Jaeger (1959), downward
    assert abs(q / exact - 1.0) <= tolerance(scheme, t), f"{scheme} t={t:g}s: flux {q:.6g} vs {exact:.6g}"


def test_budget_closes_at_every_output(result):
    scheme, ds = result
    total_in = ds["inflow"].values.sum(axis=1)
    total_out = ds["outflow"].values.sum(axis=1)
    flowing = np.maximum(total_in, total_out) > 0
    rel = np.abs(total_in - total_out)[flowing] / np.maximum(total_in, total_out)[flowing]
    assert flowing[1:].all() and rel.max() < 1e-10, f"{scheme}: budget imbalance {rel.max():.3g}"


# ------------------------------------------------------------------ a budget that does not close

@pytest.fixture
def wrong_matrix(monkeypatch):
    """Key the factor cache without theta, so that the scheme's step of 5 s takes the factor of a
    backward-Euler half step: heads from a wrong matrix, which the budget must catch."""
    key = transient._state_key
    monkeypatch.setattr(transient, "_state_key", lambda wet, state, dt, theta: key(wet, state, dt, 1.0))


def test_a_budget_that_does_not_close_stops_the_run(wrong_matrix):
    with pytest.raises(SolverError, match=r"water budget does not close in step \d+ \(t = [\d.e+]+ s to") as err:
        bedflux.simulate(scenario("crank-nicolson", end="10 min"))
    ds = err.value.partial
    assert ds is not None and "partial" in ds.attrs and "water budget" in ds.attrs["partial"]
    t = ds["time"].values
    assert 0.0 <= t[-1] < 600.0 and np.all(np.diff(t) > 0)
    # what is kept closes: the outputs before the failing step
    total_in = ds["inflow"].values.sum(axis=1)
    total_out = ds["outflow"].values.sum(axis=1)
    assert np.all(np.abs(total_in - total_out) <= 1e-10 * np.maximum(total_in, total_out))


def test_command_line_keeps_the_partial_outputs_and_fails(wrong_matrix, tmp_path, capsys):
    from bedflux.cli import main

    scen = tmp_path / "column.toml"
    scen.write_text(f'[grid]\nx = [0, 1]\nbottom = {GROUND - 40}\ndx = 1\ndz = {DZ}\n'
                    f'[ground]\nelevation = {GROUND}\n[[zone]]\nname = "sand"\nkh = {3 * KV}\nkv = {KV}\n'
                    f'specific_storage = {SS}\n'
                    f'[stream]\nstage = {H0 + DH}\n[time]\nend = "10 min"\nstep = {DT}\noutput_every = {EVERY}\n'
                    f'scheme = "crank-nicolson"\n[initial]\nhead = {H0}\n')
    out = tmp_path / "out"
    status = main(["run", str(scen), "-o", str(out), "-q"])
    assert status != 0
    err = capsys.readouterr().err
    assert "water budget does not close" in err and "partial" in err
    assert (out / "result.nc").is_file()
    summary = (out / "summary.txt").read_text()
    assert "PARTIAL RESULT" in summary and "water budget does not close" in summary
