"""Plan files: when the instruments are read, refused spacings, and every key documented.

- Reading time: a transient plan says when its instruments are read and the stage then. The flood
  here is a pulse from 0.3 m to a 0.9 m peak, rising from 2 h over 3 h (the scenario's own
  definition); by default the instruments are read when the stage departs most from its start,
  the peak, and the plan warns (wading a stream in flood is dangerous: common practice of field
  safety). Read at 1 h, before the pulse, the stage is its base, 0.3 m, and there is no warning.
- ``seepage_spacing = 0`` is refused with the file, the key and what is allowed (the contract
  for bad input, design.md), instead of silently meaning "no meters".
- Every key a plan file accepts is described in docs/planning.md.
"""
from __future__ import annotations

import math
from pathlib import Path

import pandas as pd
import pytest

import bedflux
from bedflux.cli import main
from bedflux.planning import plan
from bedflux.planning import spec

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def pulse():
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0, 1], "bottom": -4.0, "dx": 1.0, "dz": 0.1},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "sand", "kh": 5e-5, "kv": 2e-5, "specific_storage": 2e-4}],
        "stream": {"pulse": {"base": 0.3, "peak": 0.9, "start": "2 h", "rise": "3 h", "fall": "4 h"}},
        "sides": {"bottom": {"head": 0.45}},
        "time": {"end": "1 d", "step": "10 min", "output_every": "1 h"},
    })


def pulse_stage(t: float) -> float:
    """The pulse as the scenario file defines it (docs/scenario.md, [stream.pulse]): a raised-cosine
    rise from base to peak over ``rise`` after ``start``, then an exponential recession."""
    s = t - 2 * 3600.0
    if s <= 0.0:
        return 0.3
    if s <= 3 * 3600.0:
        return 0.3 + 0.6 * 0.5 * (1.0 - math.cos(math.pi * s / (3 * 3600.0)))
    return 0.3 + 0.6 * math.exp(-(s - 3 * 3600.0) / (4 * 3600.0))


FREE = [{"path": "sand.kv", "low": 1e-7, "high": 1e-3}]
CANDIDATES = pd.DataFrame({"kind": ["piezometer", "seepage"], "x": [0.5, 0.5], "depth": [0.2, 0.0]})


def test_default_reading_at_the_flood_peak_is_warned(pulse):
    table = plan(pulse, FREE, CANDIDATES, 1, target="sand.kv")
    (t,), (stage,) = table.attrs["reading_times"], table.attrs["reading_stages"]
    # the peak is at start + rise = 5 h; the default is found on 2001 samples of the day
    assert abs(t - 5 * 3600.0) <= 86400.0 / 2000
    assert stage == pytest.approx(pulse_stage(t), rel=1e-12)
    assert stage > 0.9 - 1e-3 * 0.6
    assert len(table.attrs["warnings"]) == 1 and "flood" in table.attrs["warnings"][0]
    assert f"stage {stage:.4g} m" in table.attrs["reading"]


def test_reading_before_the_flood_is_not_warned(pulse):
    table = plan(pulse, FREE, CANDIDATES, 1, target="sand.kv", reading_time=3600.0)
    assert table.attrs["reading_stages"] == [pytest.approx(0.3, abs=1e-12)]     # the base stage
    assert table.attrs["warnings"] == []
    assert table.attrs["reading"] == "read at t = 1 h, stage 0.3 m"


PLAN = """scenario = "{scenario}"
n = 2
target = "bed.kv"
[candidates]
{candidates}
[[free]]
path = "bed.kv"
low = "0.01 m/d"
high = "10 m/d"
"""


@pytest.mark.parametrize("key", ["seepage_spacing", "piezometer_spacing"])
def test_zero_spacing_is_refused(tmp_path, capsys, key):
    other = "piezometer_spacing" if key == "seepage_spacing" else "seepage_spacing"
    candidates = f'{key} = 0\n{other} = "10 m"'
    (tmp_path / "plan.toml").write_text(PLAN.format(scenario=(ROOT / "scenarios" / "reach_long.toml").as_posix(),
                                                    candidates=candidates))
    status = main(["plan", str(tmp_path / "plan.toml"), "-o", str(tmp_path / "out"), "-q"])
    err = capsys.readouterr().err
    assert status == 2, err
    assert "plan.toml" in err and f"[candidates]: {key}" in err and "> 0" in err and "leave the key out" in err
    assert not (tmp_path / "out").exists()


def test_every_plan_key_is_documented():
    text = (ROOT / "docs" / "planning.md").read_text()
    section = text.split("## The plan file", 1)[1].split("\n## ", 1)[0]
    keys = spec._KEYS + spec.CANDIDATE_KEYS + spec.INSTRUMENT_KEYS + ["path", "low", "high", "start", "log",
                                                                      "prior", "prior_sd"]
    missing = [k for k in keys if not any(f"`{form}`" in section for form in (k, f"[{k}]", f"[[{k}]]"))]
    assert not missing, missing
