"""Scenario input of soil water properties and root uptake: what is allowed, and the messages.

Rules (issue 13): when any zone has retention every zone must; van Genuchten needs n > 1
(van Genuchten 1980: m = 1 - 1/n must be positive); the saturated water content exceeds the
residual one; Feddes et al. (1978) uptake heads fall from the wet limit to the wilting point.
"""
from __future__ import annotations

import copy
import os
import subprocess
import sys
from pathlib import Path

import pytest

import bedflux
from bedflux.errors import InputError

VG = {"model": "van-genuchten", "alpha": "3.6 1/m", "n": 1.56, "residual": 0.078, "saturated": 0.43}
BASE = {"grid": {"x": [0.0, 10.0], "bottom": -5.0, "dx": 1.0, "dz": 0.5},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "retention": VG},
                 {"name": "bed", "kh": 1e-5, "kv": 1e-6, "depth": 0.5, "retention": VG}],
        "stream": {"stage": 0.5}}


def message(change) -> str:
    d = copy.deepcopy(BASE)
    change(d)
    with pytest.raises(InputError) as info:
        bedflux.Scenario.from_dict(d, source="probe.toml")
    return str(info.value)


def test_valid_retention_is_read_in_si():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    assert s.variably_saturated
    r = s.zones[0].retention
    assert (r.model, r.alpha, r.n, r.residual, r.saturated) == ("van-genuchten", 3.6, 1.56, 0.078, 0.43)
    d = copy.deepcopy(BASE)
    d["zone"][1]["retention"] = {"model": "exponential", "alpha": "0.02 1/cm", "residual": 0.05, "saturated": 0.4}
    assert bedflux.Scenario.from_dict(d).zones[1].retention.alpha == pytest.approx(2.0)
    d = copy.deepcopy(BASE)
    for z in d["zone"]:
        del z["retention"]
    assert not bedflux.Scenario.from_dict(d).variably_saturated


@pytest.mark.parametrize("change, words", [
    (lambda d: d["zone"][1].pop("retention"), ["zone 'bed'", "every zone"]),
    (lambda d: d["zone"][0]["retention"].update(model="brooks-corey"), ["model", "van-genuchten", "exponential"]),
    (lambda d: d["zone"][0]["retention"].pop("n"), ["'n' is required"]),
    (lambda d: d["zone"][0]["retention"].update(n=1.0), ["n = 1", "> 1"]),
    (lambda d: d["zone"][0]["retention"].update(model="exponential"), ["unknown key 'n'"]),
    (lambda d: d["zone"][0]["retention"].update(saturated=0.05), ["must exceed residual"]),
    (lambda d: d["zone"][0]["retention"].update(alpha="3.6 m"), ["alpha", "1/length"]),
    (lambda d: d["zone"][0]["retention"].update(alpha=0.0), ["alpha", "> 0"]),
    (lambda d: d["zone"][0].update(retention=3), ["inline table"]),
    (lambda d: d.update(riparian=[{"x": [1, 5], "max_rate": "5 mm/d", "extinction_depth": 2,
                                   "uptake_heads": [-0.1, -0.25, -0.2, -80]}]), ["h1 > h2 > h3 > h4"]),
    (lambda d: d.update(riparian=[{"x": [1, 5], "max_rate": "5 mm/d", "extinction_depth": 2,
                                   "uptake_heads": [-0.1, -0.25]}]), ["four pressure heads"]),
], ids=["missing", "model", "no-n", "n-1", "n-exponential", "contents", "unit", "alpha-0", "type", "heads-order",
        "heads-count"])
def test_bad_retention_is_named(change, words):
    msg = message(change)
    assert "probe.toml" in msg
    for w in words:
        assert w in msg, msg


def test_specific_yield_is_reported_unused():
    d = copy.deepcopy(BASE)
    d["zone"][0]["specific_yield"] = 0.2
    with pytest.warns(UserWarning, match="specific yield"):
        ds = bedflux.simulate(bedflux.Scenario.from_dict(d))
    assert "specific yield" in ds.attrs["notes"]


def test_cli_exit_status_two(tmp_path: Path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[grid]\nx = [0, 10]\nbottom = -5\ndx = 1\ndz = 0.5\n[ground]\nelevation = 0\n'
                   '[[zone]]\nname = "aquifer"\nkh = 1e-4\n'
                   'retention = { model = "van-genuchten", alpha = "3.6 1/m", n = 0.5, residual = 0.1, saturated = 0.4 }\n'
                   '[stream]\nstage = 0.5\n')
    env = dict(os.environ, PYTHONPATH=str(Path(bedflux.__file__).parents[1]))
    r = subprocess.run([sys.executable, "-m", "bedflux.cli", "run", str(bad), "-o", str(tmp_path / "out")],
                       capture_output=True, text=True, env=env)
    assert r.returncode == 2
    assert "bad.toml" in r.stderr and "retention" in r.stderr and "Traceback" not in r.stderr
    assert not (tmp_path / "out").exists()
