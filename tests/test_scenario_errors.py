"""Every class of scenario error gives a message naming the file, the key and what is allowed.

Source of the rules: the project's contract (design brief, "Conventions": implausible magnitudes
such as K above 1 m/s or a stage below the model base are errors that say what was probably
meant; issue 2, "Scenario files"). Plausibility limit: K of coarse gravel is at most about
1 m/s (Freeze & Cherry 1979, table 2.2, from memory).
"""
from __future__ import annotations

import copy

import pytest

import bedflux
from bedflux.errors import InputError

BASE = {"title": "error probe",
        "grid": {"x": [0.0, 10.0], "bottom": -5.0, "dx": 1.0, "dz": 0.5},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4},
                 {"name": "bed", "kh": 1e-5, "kv": 1e-6, "depth": 0.5}],
        "stream": {"stage": 0.5},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": "no-flow"}}


def with_change(change):
    d = copy.deepcopy(BASE)
    change(d)
    return d


def message(d) -> str:
    with pytest.raises(InputError) as info:
        bedflux.Scenario.from_dict(d, source="probe.toml")
    return str(info.value)


def test_base_case_is_valid():
    # the probes below differ from this valid scenario in one place only
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    assert s.zone_names() == ["aquifer", "bed"]


# -- unknown keys ----------------------------------------------------------------------------

@pytest.mark.parametrize("change, key, place, allowed", [
    (lambda d: d.update(colour="red"), "colour", "top level", ["grid", "ground", "zone", "stream", "sides"]),
    (lambda d: d["grid"].update(dxx=1.0), "dxx", "[grid]", ["x", "bottom", "dx", "dz", "growth"]),
    (lambda d: d["zone"][1].update(colour="brown"), "colour", "zone 'bed'",
     ["kh", "kv", "specific_storage", "specific_yield", "depth"]),
    (lambda d: d["stream"].update(stages=0.4), "stages", "[stream]", ["stage", "channel", "leakance"]),
    (lambda d: d["sides"].update(top="no-flow"), "top", "[sides]", ["left", "right", "bottom"]),
], ids=["top", "grid", "zone", "stream", "sides"])
def test_unknown_key_is_named_with_the_allowed_keys(change, key, place, allowed):
    msg = message(with_change(change))
    assert "probe.toml" in msg
    assert f"'{key}'" in msg and place in msg
    assert "allowed" in msg
    for a in allowed:
        assert a in msg


# -- wrong types -----------------------------------------------------------------------------

@pytest.mark.parametrize("change, key", [
    (lambda d: d["grid"].update(dx="one"), "dx"),
    (lambda d: d["grid"].update(dx=[1.0]), "dx"),
    (lambda d: d["stream"].update(stage=True), "stage"),
    (lambda d: d["zone"][0].update(name=3), "name"),
    (lambda d: d.update(grid=5), "grid"),
    (lambda d: d["grid"].update(x=5.0), "x"),
], ids=["text-for-length", "list-for-length", "bool-for-stage", "number-for-name", "number-for-table",
        "number-for-pair"])
def test_wrong_type_names_the_key(change, key):
    msg = message(with_change(change))
    assert "probe.toml" in msg and key in msg


# -- impossible and implausible values -------------------------------------------------------

@pytest.mark.parametrize("key, value", [("kv", -1e-5), ("kh", -2e-4), ("kv", 0.0)])
def test_non_positive_conductivity(key, value):
    msg = message(with_change(lambda d: d["zone"][1].update({key: value})))
    assert "zone 'bed'" in msg and key in msg
    assert "> 0" in msg  # what is allowed


def test_bare_kv_of_5_suggests_metres_per_day():
    # the contract's own example: a bare number is m/s, and 5 m/s is far above any soil or gravel
    msg = message(with_change(lambda d: d["zone"][1].update(kv=5)))
    assert "zone 'bed'" in msg and "kv" in msg
    assert "above 1 m/s" in msg
    assert "did you mean '5 m/d'" in msg


def test_wrong_dimension_unit_for_kv():
    msg = message(with_change(lambda d: d["zone"][1].update(kv="1 m")))
    assert "zone 'bed'" in msg and "kv" in msg
    assert "'1 m'" in msg
    assert "length/time" in msg  # what dimension is expected


def test_unknown_unit():
    msg = message(with_change(lambda d: d["zone"][1].update(kv="5 furlongs per fortnightt")))
    assert "zone 'bed'" in msg and "kv" in msg


def test_stage_below_model_base():
    msg = message(with_change(lambda d: d["stream"].update(stage=-7.0)))
    assert "[stream]" in msg and "stage" in msg
    assert "below the model base" in msg and "-5" in msg


def test_stage_with_units_below_model_base():
    msg = message(with_change(lambda d: d["stream"].update(stage="-600 cm")))
    assert "stage" in msg and "below the model base" in msg


def test_missing_required_grid_table():
    msg = message(with_change(lambda d: d.pop("grid")))
    assert "[grid]" in msg and "required" in msg


def test_missing_required_key_in_grid():
    msg = message(with_change(lambda d: d["grid"].pop("dz")))
    assert "[grid]" in msg and "'dz'" in msg and "required" in msg


def test_profile_not_covering_the_grid():
    msg = message(with_change(lambda d: d.update(ground={"profile": [[1.0, 0.0], [9.0, 0.0]]})))
    assert "[ground]" in msg and "profile" in msg
    assert "0" in msg and "10" in msg and "extend the profile" in msg


@pytest.mark.parametrize("sides", [{"left": "periodic"}, {"right": "periodic", "left": {"head": 0.2}}],
                         ids=["left-only", "right-only"])
def test_periodic_on_one_side_only(sides):
    msg = message(with_change(lambda d: d.update(sides=sides)))
    assert "[sides]" in msg and "periodic" in msg and "both" in msg


def test_unknown_side_word_lists_the_choices():
    msg = message(with_change(lambda d: d["sides"].update(left="closed")))
    assert "left" in msg and "'closed'" in msg
    for w in ("no-flow", "periodic", "stream", "head", "flux"):
        assert w in msg


# -- with_values -----------------------------------------------------------------------------

@pytest.mark.parametrize("path", ["sand.kh", "zzz", "bed.kvv", "grid.nothing"])
def test_with_values_unknown_path(path):
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE), source="probe.toml")
    with pytest.raises(InputError) as info:
        s.with_values({path: 1e-5})
    msg = str(info.value)
    assert path in msg and "probe.toml" in msg


def test_with_values_unknown_zone_lists_the_zone_paths():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    with pytest.raises(InputError) as info:
        s.with_values({"sand.kh": 1e-5})
    assert "aquifer.kh" in str(info.value) and "bed.kh" in str(info.value)


def test_with_values_revalidates_the_value():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    with pytest.raises(InputError) as info:
        s.with_values({"bed.kv": 5.0})
    assert "above 1 m/s" in str(info.value)


def test_with_values_returns_a_modified_copy():
    s = bedflux.Scenario.from_dict(copy.deepcopy(BASE))
    t = s.with_values({"bed.kv": 2e-6})
    assert t.zones[1].kv == 2e-6 and s.zones[1].kv == 1e-6


# -- the file name appears when loading from a file --------------------------------------------

def test_file_name_in_message_from_load(tmp_path):
    f = tmp_path / "reach_7.toml"
    f.write_text("""
title = "probe"
[grid]
x = [0, 10]
bottom = -5
dx = 1
dz = 0.5
[ground]
elevation = 0
[[zone]]
name = "aquifer"
kh = 1e-4
[[zone]]
name = "bed"
kh = 1e-5
kv = 5
depth = 0.5
[stream]
stage = 0.5
""", encoding="utf-8")
    with pytest.raises(InputError) as info:
        bedflux.load(f)
    msg = str(info.value)
    assert "reach_7.toml" in msg and "zone 'bed'" in msg and "did you mean '5 m/d'" in msg


def test_invalid_toml_names_the_file(tmp_path):
    f = tmp_path / "broken.toml"
    f.write_text("[grid\nx = [0, 1]\n", encoding="utf-8")
    with pytest.raises(InputError) as info:
        bedflux.load(f)
    assert "broken.toml" in str(info.value) and "TOML" in str(info.value)


def test_missing_file_names_the_file(tmp_path):
    with pytest.raises(InputError) as info:
        bedflux.load(tmp_path / "nowhere.toml")
    assert "nowhere.toml" in str(info.value) and "not found" in str(info.value)
