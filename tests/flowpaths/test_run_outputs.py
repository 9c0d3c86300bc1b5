"""`bedflux run` with stream water entering the bed: flowpaths.nc, the hyporheic block, figures.

The bedform case is Elliott & Brooks (1997) pumping over a flat bed of finite depth (see
test_bedform_residence.py): the summary's closed-form exchange flux is checked against the
formula written here, ``sqrt(kh kv) k h_m tanh(k sqrt(kh / kv) d) / pi`` (anisotropic by scaling
x, references.md section 5), and the traced exchange flux against it.
"""
from __future__ import annotations

import json

import numpy as np
import pytest
import xarray as xr

from bedflux.cli import main
from bedflux.outputs import manifest

DUNES = """title = "Dunes over a closed base (invented)"
[grid]
x = [0.0, 1.2]
bottom = -0.3
dx = "2 cm"
dz = "1 cm"
[ground]
elevation = 0.0
[[zone]]
name = "sand"
kh = "40 m/d"
kv = "20 m/d"
porosity = 0.35
[stream]
stage = "0.25 m"
[stream.bedform]
amplitude = "1 cm"
wavelength = "60 cm"
[sides]
left = "periodic"
right = "periodic"
bottom = "no-flow"
"""

GAINING = """title = "Gaining channel, no bedform (invented)"
[grid]
x = [0, 10]
bottom = -5
dx = 0.5
dz = 0.25
[ground]
elevation = 0
[[zone]]
name = "aquifer"
kh = 1e-4
[stream]
stage = 0.5
[sides]
bottom = { head = 1.5 }
"""


def _run(tmp_path, text):
    path = tmp_path / "s.toml"
    path.write_text(text)
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out), "-q"]) == 0
    return out


def test_a_run_with_downwelling_writes_its_flow_paths(tmp_path):
    out = _run(tmp_path, DUNES)
    for name in ("flowpaths.nc", "flowpaths.png", "residence_times.png"):
        assert (out / name).is_file(), name
        assert name in manifest.listed(out, "run")
    with xr.open_dataset(out / "flowpaths.nc", engine="h5netcdf") as fp:
        for var in ("entry_x", "exit_x", "residence_time", "depth_reached", "length", "weight", "exit_kind"):
            assert var in fp and "units" in fp[var].attrs
        assert set(fp.exit_kind.values.astype(str)) == {"bed"}  # closed base: all water comes back
    block = json.loads((out / "summary.json").read_text())["hyporheic"]
    kh, kv, h_m, d, k = 40 / 86400, 20 / 86400, 0.01, 0.3, 2 * np.pi / 0.6
    closed = np.sqrt(kh * kv) * k * h_m * np.tanh(k * np.sqrt(kh / kv) * d) / np.pi
    assert block["bedform_exchange_flux_closed_form_m_per_s"] == pytest.approx(closed, rel=1e-12)
    # the traced exchange on a grid of 30 columns per wavelength (second-order, about 1 %)
    assert block["exchange_flux_m_per_s"] == pytest.approx(closed, rel=0.02)
    assert block["fate"]["returns_to_stream"] == pytest.approx(1.0)
    q = block["residence_time_quantiles_s"]
    assert 0 < q["10"] < q["25"] < q["50"] < q["75"] < q["90"]
    assert 0 < block["depth_holding_90_percent_m"] < 0.3
    text = (out / "summary.txt").read_text()
    assert "hyporheic exchange" in text and "Elliott & Brooks" in text


def test_a_run_without_downwelling_writes_no_flow_paths(tmp_path):
    out = _run(tmp_path, GAINING)
    assert not (out / "flowpaths.nc").exists()
    assert "hyporheic" not in json.loads((out / "summary.json").read_text())


BANK = """title = "Flood pulse into a confined bank (invented)"
[grid]
x = [0.0, 20.0]
bottom = -5.0
dx = 0.5
dz = 0.25
[ground]
profile = [[0.0, 0.0], [4.0, 0.0], [5.0, 3.0], [20.0, 3.0]]
[[zone]]
name = "aquifer"
kh = 1e-4
kv = 5e-5
specific_storage = 1e-5
specific_yield = 0.0
[stream.pulse]
base = 0.5
peak = 1.5
start = "1 h"
rise = "4 h"
fall = "8 h"
[sides]
left = "no-flow"
right = "no-flow"
bottom = "no-flow"
[time]
end = "2 d"
step = "30 min"
output_every = "30 min"
"""


@pytest.mark.slow  # a transient run writes its animation too (most of the time of this test)
def test_a_transient_run_reports_when_bank_storage_comes_back(tmp_path):
    out = _run(tmp_path, BANK)
    assert (out / "bank_storage_return.png").is_file()
    block = json.loads((out / "summary.json").read_text())["hyporheic"]
    with xr.open_dataset(out / "result.nc", engine="h5netcdf") as ds:
        dt = np.diff(ds.time.values)
        stream_in = float(np.sum(ds.inflow.sel(term="stream").values[1:] * dt))
        stream_out = float(np.sum(ds.outflow.sel(term="stream").values[1:] * dt))
    # the paths carry the water the budget says went in; what came back is what the budget says
    # came out, to within the tracking's granularity (test_bank_storage_return.py)
    assert block["water_entered_m2"] == pytest.approx(stream_in, rel=1e-9)
    assert block["water_returned_m2"] == pytest.approx(stream_out, rel=0.1)
    assert block["return_time_quantiles_s"]["50"] > 0
    assert "bank storage" in (out / "summary.txt").read_text()


LOSING_UNSATURATED = """title = "Losing channel with unsaturated banks (invented)"
[grid]
x = [-15.0, 15.0]
bottom = -6.0
dx = 0.25
dz = 0.1
growth = 1.06
dz_max = 0.5
[ground]
profile = [[-15.0, 1.5], [-3.0, 1.3], [-2.0, 0.0], [2.0, 0.0], [3.0, 1.3], [15.0, 1.5]]
[[zone]]
name = "aquifer"
kh = 2e-4
kv = 5e-5
retention = { model = "van-genuchten", alpha = "7.5 1/m", n = 1.89, residual = 0.065, saturated = 0.41 }
[[zone]]
name = "bed"
kh = 5e-5
kv = 1e-5
depth = 0.3
x = [-3.0, 3.0]
retention = { model = "van-genuchten", alpha = "3.6 1/m", n = 1.56, residual = 0.078, saturated = 0.43 }
[stream]
stage = 0.5
channel = [-3.0, 3.0]
[sides]
left = { head = 0.2 }
right = { head = -0.1 }
bottom = "no-flow"
"""


def test_a_variably_saturated_run_writes_its_flow_paths(tmp_path):
    # water balance: the stream water entering the bed leaves through the two sides held below
    # the stage (no recharge, closed base), so all of it goes to the aquifer
    out = _run(tmp_path, LOSING_UNSATURATED)
    assert (out / "flowpaths.nc").is_file() and "flowpaths.nc" in manifest.listed(out, "run")
    block = json.loads((out / "summary.json").read_text())["hyporheic"]
    with xr.open_dataset(out / "result.nc", engine="h5netcdf") as ds:
        stream_in = float(ds.inflow.sel(term="stream"))
    assert block["downwelling_m2_per_s"] == pytest.approx(stream_in, rel=1e-10)
    assert block["fate"]["to_aquifer"] == pytest.approx(1.0)
    assert "hyporheic exchange" in (out / "summary.txt").read_text()
