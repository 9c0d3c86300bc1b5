"""``ensemble.zarr``: members appended to a zarr store as they finish read back as the members
gathered in memory and written to ensemble.nc (the same values, member for member), chunked
along ``member`` by the batch size; a bad ``format`` exits 2 naming it."""
from __future__ import annotations

import json

import xarray as xr
import zarr

from bedflux.cli import main
from bedflux.ensembles.members import run_member
from bedflux.ensembles.run import Gatherer
from bedflux.ensembles.spec import build_spec

from ensemble_columns import column
from test_ensemble_cli import GOOD, write


def test_store_reads_back_as_in_memory_chunked_by_batch(tmp_path):
    spec = build_spec(column(), 11, [{"path": "bed.kv", "distribution": "uniform", "min": 0.5, "max": 1.2}], seed=8)
    results = [run_member(spec, spec.draw(i)) for i in range(spec.members)]
    assert any(r.failure for r in results) and not all(r.failure for r in results)
    order = [7, 2, 9, 0, 10, 4, 1, 8, 3, 6, 5]
    memory, stored = Gatherer(spec), Gatherer(spec, part_members=3, store=tmp_path / "ensemble.zarr")
    for i in order:
        memory.add(results[i])
        stored.add(results[i])
    a, b = memory.dataset(), stored.dataset()
    group = zarr.open_group(tmp_path / "ensemble.zarr", mode="r")
    assert group["bed_flux"].chunks[0] == 3 and group["failure"].chunks == (3,)
    assert b["bed_flux"].chunks[0] == (3, 3, 3, 2)
    xr.testing.assert_identical(a, b.load())


def test_command_writes_zarr_equal_to_netcdf(tmp_path):
    path = write(tmp_path, GOOD)
    assert main(["ensemble", str(path), "-o", str(tmp_path / "nc"), "--workers", "0", "-q"]) == 0
    assert main(["ensemble", str(path), "-o", str(tmp_path / "z"), "--workers", "0", "-q", "--format", "zarr"]) == 0
    manifest = json.loads((tmp_path / "z" / "ensemble_manifest.json").read_text())
    assert "ensemble.zarr/zarr.json" in manifest["files"] and "ensemble.nc" not in manifest["files"]
    nc = xr.load_dataset(tmp_path / "nc" / "ensemble.nc", engine="h5netcdf")
    z = xr.open_zarr(tmp_path / "z" / "ensemble.zarr", consolidated=False).load()
    assert z.sizes["member"] == GOOD["members"]
    for name in ("parameter_value", "exchange", "stage", "bed_flux", "failed"):
        xr.testing.assert_identical(nc[name].drop_vars("parameter", errors="ignore"),
                                    z[name].drop_vars("parameter", errors="ignore"))
    assert list(z["parameter"].values) == list(nc["parameter"].values)
    s_nc, s_z = ((tmp_path / d / "ensemble_summary.json").read_text() for d in ("nc", "z"))
    assert s_nc == s_z


def test_bad_format_exits_2_naming_it(tmp_path, capsys):
    path = write(tmp_path, {**GOOD, "format": "parquet"})
    out = tmp_path / "out"
    assert main(["ensemble", str(path), "-o", str(out), "--workers", "0"]) == 2
    err = capsys.readouterr().err
    for w in (str(path), "format", "parquet", "'netcdf', 'zarr'"):
        assert w in err, (w, err)
    assert "Traceback" not in err and not out.exists()


def test_bad_format_option_exits_2_naming_it(tmp_path, capsys):
    path = write(tmp_path, GOOD)
    try:
        main(["ensemble", str(path), "-o", str(tmp_path / "out"), "--workers", "0", "--format", "hdf"])
    except SystemExit as stop:
        assert stop.code == 2
    else:
        raise AssertionError("--format hdf was accepted")
    err = capsys.readouterr().err
    assert "--format" in err and "'hdf'" in err and "netcdf" in err and "zarr" in err, err
    assert not (tmp_path / "out").exists()


def test_netcdf_run_replaces_an_earlier_store_whole(tmp_path):
    path = write(tmp_path, GOOD)
    out = tmp_path / "out"
    assert main(["ensemble", str(path), "-o", str(out), "--workers", "0", "-q", "--format", "zarr"]) == 0
    assert (out / "ensemble.zarr" / "zarr.json").is_file()
    assert main(["ensemble", str(path), "-o", str(out), "--workers", "0", "-q"]) == 0
    assert (out / "ensemble.nc").is_file() and not (out / "ensemble.zarr").exists()
