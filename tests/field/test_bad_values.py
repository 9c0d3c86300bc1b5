"""Implausible values and sheets that lose most of their rows: name the cause, not the first row."""
import pytest

from bedflux import InputError
from bedflux.field import run_field

from .conftest import SITES


def _error(campaign, tmp_path) -> str:
    out = tmp_path / "out"
    with pytest.raises(InputError) as err:
        run_field(campaign.folder, out, quiet=True)
    assert not out.exists()
    return err.value.render()


@pytest.mark.parametrize(
    "sheet, text, where, words",
    [
        ("sites.csv", SITES.replace("A2,10,3,100.0,A", "A2,1e300,3,100.0,A"), "line 3, column 'x'",
         "-100000 to 100000 m"),
        ("velocity.csv", "site,time [h],head_difference [mm]\nA1,1,5.2\nA2,1,1e9\n",
         "line 3, column 'head_difference'", "0 to 2000 mm (0 to 2 m)"),
        ("manometer.csv", "site,time [h],depth [m],reading [cm],fluid_density [kg/m^3]\nA1,1,30,10,820\n",
         "line 2, column 'depth'", "0 to 10 m"),
        ("slug.csv", "test,site,time [s],displacement [cm],casing_radius [m],screen_radius [cm],screen_length [cm]\n"
                     "T1,A1,0,30,1.27,1.27,15\nT1,A1,10,20,,,\nT1,A1,20,12,,,\n",
         "line 2, column 'casing_radius'", "0 to 1 m"),
    ],
    ids=["site x 1e300", "velocity head 1e9 mm", "depth in m not cm", "casing radius in m not cm"],
)
def test_implausible_value_stops_the_run(campaign, tmp_path, sheet, text, where, words):
    campaign(sheet, text)
    message = _error(campaign, tmp_path)
    assert sheet in message and where in message and words in message and "plausible range" in message


def test_unit_that_would_fit_is_suggested(campaign, tmp_path):
    # Velocity heads of 5 and 14 written under [m] are 5-14 m (v = sqrt(2 g dh) = 10-17 m/s,
    # beyond any stream); in mm every value is plausible.
    campaign("velocity.csv", "site,time [h],head_difference [m]\nA1,1,5.2\nA2,1,13.6\n")
    assert "plausible in [mm] or [cm]" in _error(campaign, tmp_path)


def test_header_with_semicolons_names_the_separator(campaign, tmp_path):
    campaign("velocity.csv", "site;time [h];head_difference [mm]\nA1;1;5.2\n")
    message = _error(campaign, tmp_path)
    assert "';'" in message and "commas" in message


def _seepage(rows: list[str], header: str = "site,time [h],duration [min],volume_start [mL],volume_end [mL],"
                                              "pan_area [m^2],efficiency") -> str:
    return "\n".join([header] + rows) + "\n"


@pytest.mark.parametrize(
    "text, words",
    [
        (_seepage([f'A{i % 3 + 1},{i},60,1000,"14{i},5",0.25,1' for i in range(6)]), "decimal commas"),
        (_seepage([f"A{i % 3 + 1},{i},60,1000,14{i},5,0.25,1" for i in range(6)]), "more cells than the header"),
        (_seepage([f"A{i % 3 + 1};{i};60;1000;1400;0.25;1" for i in range(6)]), "separated by another character"),
        (_seepage([f"a{i % 3 + 1},{i},60,1000,1400,0.25,1" for i in range(6)]), "upper/lower case"),
        (_seepage([f"A{i % 3 + 1},{i},60,1000,1400,0.25,77" for i in range(6)]), "percent"),
        (_seepage([f"{i},A{i % 3 + 1},60,1000,1400,0.25,1" for i in range(6)]), "swapped or shifted"),
        (_seepage([f"A{i % 3 + 1},{i},60 min,1000,1400,0.25,1" for i in range(6)]), "units typed into the cells"),
    ],
    ids=["decimal comma", "unquoted decimal comma", "semicolon rows", "site id case", "efficiency percent",
         "swapped columns", "units in cells"],
)
def test_most_rows_rejected_names_the_systematic_cause(campaign, tmp_path, text, words):
    campaign("seepage.csv", text)
    message = _error(campaign, tmp_path)
    assert "6 of 6 rows were rejected" in message and words in message
    assert "first: line" not in message
