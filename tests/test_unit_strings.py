"""A quantity is one number and one unit: arithmetic in a unit string is refused, naming the key.

Source: the SI Brochure (BIPM 2019, section 5.4.6, and the definition of the day, 1 d = 86 400 s):
the value of a quantity is written as a number times a unit; "5 m/d" is 5 / 86 400 m/s.
"""
from __future__ import annotations

import pytest

import bedflux
from bedflux.errors import InputError
from bedflux.scenario.units import parse_quantity, unit_factor

BASE = {"grid": {"x": [0, 4], "bottom": -2, "dx": 0.5, "dz": 0.25}, "ground": {"elevation": 0},
        "stream": {"stage": 0.3}}


@pytest.mark.parametrize("text", ["1e-5 m/s * 1000", "1e-5 m/s*1000", "2 * 5e-6 m/s", "1e-5 m/s / 2",
                                  "1e-5 m/s 1000", "1e-5 m/s + 1 m/d", "(1e-5 m/s)"])
def test_arithmetic_is_refused_with_the_key(text):
    with pytest.raises(InputError) as err:
        bedflux.Scenario.from_dict(dict(BASE, zone=[{"name": "sand", "kh": text}]))
    message = str(err.value)
    assert "zone 'sand': kh" in message
    assert "one number and a unit" in message and "arithmetic" in message


def test_plain_quantities_still_read():
    assert parse_quantity("5 m/d", "velocity") == pytest.approx(5 / 86400, rel=1e-15)
    assert parse_quantity("1e-4 1/m", "per_length") == pytest.approx(1e-4)
    assert parse_quantity("30 cm", "length") == pytest.approx(0.30)
    assert parse_quantity("-2.5e-3 m^2/s", "area_rate") == pytest.approx(-2.5e-3)


def test_a_header_unit_with_a_factor_is_refused():
    assert unit_factor("cm/s", "velocity") == pytest.approx(0.01)
    with pytest.raises(InputError, match="no numbers or arithmetic"):
        unit_factor("cm/s*10", "velocity")
