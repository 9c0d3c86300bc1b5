"""Renamed keys are refused with a message that gives the new name, wherever a user writes them.

Source of the rule: the project's contract for bad input (design brief, "Conventions" and "CLI":
exit status 2 with a message naming the file, the key and what is allowed) and the renames of
issue 12, item 3: zone keys ``ss`` and ``sy`` are ``specific_storage`` and ``specific_yield``,
the riparian ``rate`` is ``max_rate``, in scenario files, parameter paths, fit and plan files.
"""
from __future__ import annotations

import copy
import shutil
from pathlib import Path

import numpy as np
import pytest

import bedflux
from bedflux.cli import main
from bedflux.errors import InputError
from bedflux.planning.targets import parse_target

SCEN = Path(__file__).resolve().parents[1] / "scenarios"

BASE = {"title": "rename probe",
        "grid": {"x": [0.0, 10.0], "bottom": -5.0, "dx": 1.0, "dz": 0.5},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "specific_storage": "1e-4 1/m", "specific_yield": 0.2},
                 {"name": "bed", "kh": 1e-5, "kv": 1e-6, "depth": 0.5}],
        "stream": {"stage": 0.5, "channel": [0.0, 4.0]},
        "riparian": [{"x": [6.0, 10.0], "max_rate": "4 mm/d", "extinction_depth": "2 m"}],
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"}}


def message(d: dict) -> str:
    with pytest.raises(InputError) as info:
        bedflux.Scenario.from_dict(d, source="probe.toml")
    return str(info.value)


def test_base_case_with_the_new_keys_is_valid():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    assert s.zones[0].specific_storage == pytest.approx(1e-4) and s.zones[0].specific_yield == 0.2
    assert s.riparian[0].max_rate == pytest.approx(4e-3 / 86400.0)


@pytest.mark.parametrize("table, old, new, value, written", [
    (("zone", 1), "ss", "specific_storage", "3e-4 1/m", 'specific_storage = "3e-4 1/m"'),
    (("zone", 1), "sy", "specific_yield", 0.25, "specific_yield = 0.25"),
    (("riparian", 0), "rate", "max_rate", "6 mm/d", 'max_rate = "6 mm/d"'),
], ids=["ss", "sy", "rate"])
def test_old_scenario_key_gives_the_new_one(table, old, new, value, written):
    d = copy.deepcopy(BASE)
    entry = d[table[0]][table[1]]
    entry.pop(new, None)
    entry[old] = value
    msg = message(d)
    where = "zone 'bed'" if table[0] == "zone" else "riparian 0"
    assert "probe.toml" in msg and where in msg and f"'{old}' was renamed" in msg and written in msg


def test_old_key_beside_the_new_one_is_still_refused():
    # a file half converted: the old key is named, not silently ignored
    d = copy.deepcopy(BASE)
    d["zone"][0]["ss"] = 1e-5
    msg = message(d)
    assert "zone 'aquifer'" in msg and "specific_storage" in msg


def test_old_key_in_a_scenario_file_exits_2_with_the_new_name(tmp_path, capsys):
    text = (SCEN / "riparian_et.toml").read_text()
    assert 'max_rate = "10 mm/d"' in text and "specific_yield = 0.12" in text
    (tmp_path / "old.toml").write_text(text.replace("specific_yield = 0.12", "sy = 0.12"))
    code = main(["run", str(tmp_path / "old.toml"), "-o", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err
    assert "old.toml" in err and "zone 'aquifer'" in err and "specific_yield = 0.12" in err
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("old, new", [("aquifer.ss", "aquifer.specific_storage"),
                                      ("bed.sy", "bed.specific_yield"),
                                      ("riparian.0.rate", "riparian.0.max_rate")])
def test_old_parameter_path_gives_the_new_one(old, new):
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE), source="probe.toml")
    for use in (lambda: s.with_values({old: 1e-4}), lambda: s.value_at(old)):
        with pytest.raises(InputError) as info:
            use()
        msg = str(info.value)
        assert "probe.toml" in msg and f"'{old}' was renamed" in msg and new in msg
    assert s.value_at(new) == s.with_values({new: s.value_at(new)}).value_at(new)


def test_old_path_in_a_fit_file_exits_2_with_the_new_name(tmp_path, capsys):
    shutil.copy(SCEN / "reach_long.toml", tmp_path / "reach_long.toml")
    (tmp_path / "obs.csv").write_text("kind,x,depth,time,value,sigma\nseepage,20,0,,1e-6,1e-7\n")
    fit = tmp_path / "fit.toml"
    fit.write_text('scenario = "reach_long.toml"\nobservations = "obs.csv"\n'
                   '[[free]]\npath = "aquifer.ss"\nlow = "1e-6 1/m"\nhigh = "1e-3 1/m"\n')
    code = main(["fit", str(fit), "-o", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err
    assert "fit.toml" in err and "'aquifer.ss' was renamed" in err and "aquifer.specific_storage" in err
    assert not (tmp_path / "out").exists()


def test_old_path_in_a_plan_file_exits_2_with_the_new_name(tmp_path, capsys):
    shutil.copy(SCEN / "reach_long.toml", tmp_path / "reach_long.toml")
    plan = tmp_path / "plan.toml"
    plan.write_text('fit = false\nscenario = "reach_long.toml"\nn = 2\ntarget = "parameters"\n'
                    '[candidates]\nseepage_spacing = "10 m"\n'
                    '[[free]]\npath = "bed.sy"\nlow = 0.05\nhigh = 0.4\n')
    code = main(["plan", str(plan), "-o", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err
    assert "plan.toml" in err and "'bed.sy' was renamed" in err and "bed.specific_yield" in err
    assert not (tmp_path / "out").exists()


def test_old_target_path_gives_the_new_one():
    with pytest.raises(InputError) as info:
        parse_target("aquifer.ss", ["bed.kv", "aquifer.specific_storage"], source="plan.toml")
    msg = str(info.value)
    assert "plan.toml" in msg and "target" in msg and 'target = "aquifer.specific_storage"' in msg


def test_old_property_field_name_gives_the_new_one():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    ds = bedflux.simulate(s)
    shape = ds["kh"].shape
    with pytest.raises(InputError) as info:
        bedflux.simulate(s, fields={"ss": np.full(shape, 1e-4)})
    assert "'ss' was renamed" in str(info.value) and "specific_storage" in str(info.value)


def test_result_budget_variables_are_inflow_and_outflow():
    ds = bedflux.simulate(bedflux.Scenario.from_dict(copy.deepcopy(BASE)))
    assert {"inflow", "outflow"} <= set(ds.data_vars)
    assert not {"budget_in", "budget_out"} & set(ds.data_vars)
    assert ds["inflow"].dims == ("term",) and ds["inflow"].attrs["units"] == "m2 s-1"
