"""Bad [heat] input: InputError naming the key and what is allowed; the CLI exits 2 and writes nothing.

The contract (design brief): a user's mistake ends in exit status 2 with a message naming the file,
the key and what is allowed. Temperatures are read in degC; pint converts K and degF (a fact of
the units: 283.15 K = 10 degC, 50 degF = 10 degC).
"""
from __future__ import annotations

import copy
from pathlib import Path

import pytest

import bedflux
from bedflux.cli import main
from bedflux.errors import InputError

from .columns import column

ROOT = Path(__file__).resolve().parents[2]
BASE = column(0.05, 1.0, 1e-5, 0.01, {"stream_temperature": 15, "groundwater_temperature": 10},
              {"end": "2 h", "step": "30 min"})


def with_heat(**heat):
    d = copy.deepcopy(BASE)
    d["heat"] = heat
    return d


@pytest.mark.parametrize("heat, words", [
    ({"groundwater_temperature": 10}, ["stream_temperature", "required"]),
    ({"stream_temperature": 15}, ["groundwater_temperature", "required"]),
    ({"stream_temperature": 288, "groundwater_temperature": 10}, ["stream_temperature", "288 K"]),
    ({"stream_temperature": "15 m", "groundwater_temperature": 10}, ["stream_temperature", "temperature"]),
    ({"stream_temperature": {"mean": 15, "amplitude": 3, "peroid": "1 d"}, "groundwater_temperature": 10},
     ["peroid", "mean, amplitude, period, phase"]),
    ({"stream_temperature": {"mean": 15, "amplitude": -3}, "groundwater_temperature": 10}, ["amplitude", ">= 0"]),
    ({"stream_temperature": 15, "temperature_csv": "t.csv", "groundwater_temperature": 10}, ["not both"]),
    ({"stream_temperature": 15, "groundwater_temperature": 10, "colour": 1}, ["colour", "allowed keys"]),
    ({"temperature_csv": "missing.csv", "groundwater_temperature": 10}, ["missing.csv", "not found"]),
])
def test_bad_heat_table(heat, words):
    with pytest.raises(InputError) as err:
        bedflux.Scenario.from_dict(with_heat(**heat))
    text = str(err.value)
    assert "[heat]" in text
    for w in words:
        assert w in text, text


@pytest.mark.parametrize("key, value, words", [
    ("thermal_conductivity", "1.5 W/m", ["thermal_conductivity", "W/m/K"]),
    ("thermal_conductivity", 150, ["thermal_conductivity", "above 10"]),
    ("heat_capacity", 2.0, ["heat_capacity", ">= 500000"]),
    ("dispersivity", -0.1, ["dispersivity", ">= 0"]),
])
def test_bad_zone_thermal_property(key, value, words):
    d = copy.deepcopy(BASE)
    d["zone"][0][key] = value
    with pytest.raises(InputError) as err:
        bedflux.Scenario.from_dict(d)
    for w in words:
        assert w in str(err.value), str(err.value)


def test_temperature_units_are_converted():
    s = bedflux.Scenario.from_dict(with_heat(stream_temperature={"mean": "283.15 K", "amplitude": "2 K"},
                                             groundwater_temperature="50 degF", initial="12 degC"))
    assert s.heat.stream.mean == pytest.approx(10.0)
    assert s.heat.stream.amplitude == pytest.approx(2.0)
    assert s.heat.groundwater == pytest.approx(10.0)
    assert s.heat.initial == pytest.approx(12.0)


def test_temperature_series_in_kelvin_is_refused_naming_the_file(tmp_path):
    (tmp_path / "t.csv").write_text("time [h],temperature [K]\n0,290\n10,291\n")
    with pytest.raises(InputError) as err:
        bedflux.Scenario.from_dict(with_heat(temperature_csv="t.csv", groundwater_temperature=10), base_dir=tmp_path)
    assert "degC" in str(err.value) and "t.csv" in str(err.value)


def test_temperature_series_drives_the_stream(tmp_path):
    (tmp_path / "t.csv").write_text("time [h],temperature [degC]\n0,12\n1,14\n2,16\n")
    s = bedflux.Scenario.from_dict(with_heat(temperature_csv="t.csv", groundwater_temperature=10), base_dir=tmp_path)
    assert float(s.heat.stream(1800.0)) == pytest.approx(13.0)  # linear interpolation


def test_cli_exits_2_and_writes_nothing(tmp_path, capsys):
    text = (ROOT / "scenarios" / "daily_heat_wave.toml").read_text().replace(
        'groundwater_temperature = "10 degC"', 'groundwater_temperature = "10 m"')
    (tmp_path / "s.toml").write_text(text)
    code = main(["run", str(tmp_path / "s.toml"), "-o", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err
    assert "groundwater_temperature" in err and "s.toml" in err
    assert not (tmp_path / "o").exists()
