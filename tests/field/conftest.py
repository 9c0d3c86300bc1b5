"""Helpers that write small field sheets for tests (invented values), and the demo campaign's
reduction shared by the field tests."""
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parents[2] / "scenarios" / "field"


@pytest.fixture(scope="session")
def demo(tmp_path_factory):
    """The reduction of the invented demo campaign (scenarios/field), made once per session:
    the output folder (read only) and the summary."""
    from bedflux.field import run_field

    out = tmp_path_factory.mktemp("demo")
    return out, run_field(DEMO, out, quiet=True)

SITES = """site,x [m],y [m],bed_elevation [m],transect
A1,10,1,100.0,A
A2,10,3,100.0,A
A3,10,5,100.0,A
B1,50,1,99.9,B
B2,50,3,99.9,B
B3,50,5,99.9,B
"""


def seepage_rows(sites=("A1", "A2", "A3", "B1", "B2", "B3")):
    rows = ["site,time [h],duration [min],volume_start [mL],volume_end [mL],pan_area [m^2],efficiency"]
    for i, s in enumerate(sites):
        for rep in range(2):
            rows.append(f"{s},{1 + rep + 0.1 * i},60,1000,{1400 + 20 * i + 10 * rep},0.25,1")
    return "\n".join(rows) + "\n"


@pytest.fixture
def campaign(tmp_path: Path):
    """A folder with sites.csv and a seepage sheet; returns a function to write more sheets."""
    folder = tmp_path / "sheets"
    folder.mkdir()
    (folder / "sites.csv").write_text(SITES)
    (folder / "seepage.csv").write_text(seepage_rows())

    def write(name: str, text: str) -> Path:
        (folder / name).write_text(text)
        return folder

    write.folder = folder
    return write
