"""A member that fails is recorded with its values and reason, and the ensemble goes on.

The real failure: conductivities above 1 m/s are refused (coarse gravel is about 1e-2 m/s:
Freeze & Cherry 1979, table 2.2), so a member that draws one fails and says why. The others are
still Darcy's law for their own values (Freeze & Cherry 1979, ch. 2).
"""
from __future__ import annotations

import json

import numpy as np
import tomli_w
import xarray as xr

import bedflux
from bedflux.cli import main
from bedflux.errors import SolverError
from bedflux.ensembles import members as member_module

from ensemble_columns import column, series_flux

K_MAX = 1.0  # m/s


def test_members_with_refused_values_fail_and_the_rest_run():
    ds = bedflux.ensemble(column(), 40, uncertain=[
        {"path": "bed.kv", "distribution": "uniform", "min": 0.6, "max": 1.3}], seed=3)
    kv = ds["parameter_value"].sel(parameter="bed.kv").values
    failed = ds["failed"].values.astype(bool)
    np.testing.assert_array_equal(failed, kv > K_MAX)
    assert 0 < failed.sum() < failed.size
    assert all("above 1 m/s" in r for r in ds["failure"].values[failed])
    assert all(r == "" for r in ds["failure"].values[~failed])
    assert np.isnan(ds["bed_flux"].values[failed]).all()
    np.testing.assert_allclose(ds["bed_flux"].values[~failed, 0], series_flux(kv[~failed]), rtol=1e-10)


def test_a_solver_failure_is_recorded_by_the_command(tmp_path, monkeypatch):
    real = member_module.simulate

    def flaky(scenario, fields=None):
        # the solver "fails" for the stiffest beds
        if scenario.value_at("bed.kv") < 5e-7:
            raise SolverError("no convergence in the test")
        return real(scenario, fields=fields)

    monkeypatch.setattr(member_module, "simulate", flaky)
    (tmp_path / "column.toml").write_text(tomli_w.dumps(dict(column().raw)))
    (tmp_path / "ens.toml").write_text('scenario = "column.toml"\nmembers = 30\nseed = 9\n[[uncertain]]\n'
                                       'path = "bed.kv"\ndistribution = "lognormal"\nmedian = 1e-6\n'
                                       'sd_log10 = 0.4\n')
    # --workers 0 runs the members in this process, where the patch holds
    assert main(["ensemble", str(tmp_path / "ens.toml"), "-o", str(tmp_path / "out"), "-q", "--workers", "0"]) == 0
    s = json.loads((tmp_path / "out" / "ensemble_summary.json").read_text())
    with xr.open_dataset(tmp_path / "out" / "ensemble.nc", engine="h5netcdf") as ds:
        kv = ds["parameter_value"].sel(parameter="bed.kv").values
        expected = int((kv < 5e-7).sum())
        assert 0 < expected < 30
        assert s["members_failed"] == expected and s["members_ran"] == 30 - expected
        assert {f["member"] for f in s["failed"]} == set(ds["member"].values[kv < 5e-7].tolist())
        assert all("no convergence in the test" in f["reason"] for f in s["failed"])
    assert f"{expected} failed" in (tmp_path / "out" / "ensemble_summary.txt").read_text()
    assert len((tmp_path / "out" / "ensemble_failed.csv").read_text().splitlines()) == expected + 1

