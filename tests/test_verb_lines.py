"""What the verbs that write an output folder say on screen, the same for each.

The project's own contract (design brief, CLI): a verb writes its outputs into OUTDIR and tells
the user where they went; ``-q`` keeps the screen quiet. The plan verb is checked here on a small
steady section (an invented setting): a sand column under a stream, its base held by a deeper head.
"""
from __future__ import annotations

import pytest

from bedflux.cli import main

SCENARIO = """title = "Small sand column under a stream (invented)"
[grid]
x = [0.0, 4.0]
bottom = -3.0
dx = "1 m"
dz = "25 cm"
[ground]
elevation = 0.0
[[zone]]
name = "sand"
kh = "5 m/d"
kv = "2 m/d"
[stream]
stage = "0.3 m"
[sides]
bottom = { head = "0.5 m" }
"""

PLAN = """scenario = "scenario.toml"
n = 1
target = "sand.kv"
[candidates]
seepage_spacing = "1 m"
piezometer_spacing = "2 m"
depths = ["20 cm"]
[[free]]
path = "sand.kv"
low = "0.1 m/d"
high = "20 m/d"
prior = "2 m/d"
prior_sd = "1 m/d"
"""


@pytest.mark.parametrize("quiet", [False, True])
def test_plan_says_where_its_outputs_went(tmp_path, capsys, quiet):
    (tmp_path / "scenario.toml").write_text(SCENARIO)
    (tmp_path / "plan.toml").write_text(PLAN)
    out = tmp_path / "out"
    status = main(["plan", str(tmp_path / "plan.toml"), "-o", str(out)] + (["-q"] if quiet else []))
    captured = capsys.readouterr()
    assert status == 0, captured.err
    assert (out / "inputs" / "plan.toml").is_file()
    if quiet:
        assert captured.out == ""
    else:
        assert captured.out.endswith(f"outputs written to {out}/\n")
