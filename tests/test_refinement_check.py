"""The refinement check of ``bedflux run --refinement-check``: three grids and steps, Richardson
extrapolation and the error estimate of the run's answers.

Sources:
- Richardson extrapolation and the three-grid observed order (Roache 1998, Verification and
  Validation in Computational Science and Engineering, ch. 5; from memory): for answers
  f(h) = f* + C h^p on grids h, h/r, h/r^2 the observed order is p and the extrapolated value f*
  exactly.
- Darcy flow through layers in series (Freeze & Cherry 1979, ch. 2, from memory): in a 1D column
  the flux is (h_base - stage) / sum(b_i / K_i), the same on every grid (the discrete flux of
  a column of cells in series is exact).
- The refinement study of the built-in example (docs/verification.md 5b): its net exchange on the
  shipped grid is 3.8 % below the value on a grid six times finer, approached non-monotonically;
  the check must not call it converged.
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

import bedflux
from bedflux.cli import main
from bedflux.errors import InputError
from bedflux.outputs.refinement import SAFETY, three_grid_estimate
from bedflux.scenario.refinement import DEFAULT_RATIO, refined

DAY = 86400.0


@pytest.mark.parametrize("p", [1.0, 2.0])
def test_richardson_recovers_order_and_limit(p):
    r, h, f_star, c = DEFAULT_RATIO, 0.1, 5.0, 3.0
    f = [f_star + c * (h / r**k) ** p for k in range(3)]
    est = three_grid_estimate(*f, r)
    assert est["pattern"] == "monotone"
    assert est["order"] == pytest.approx(p, rel=1e-9)
    assert est["extrapolated"] == pytest.approx(f_star, rel=1e-12)
    assert est["error_estimate"] == pytest.approx(SAFETY * c * h**p / f_star, rel=1e-9)
    assert est["converged"] == (est["error_estimate"] <= 0.02)


def test_changes_that_do_not_shrink_or_change_sign_are_not_converged():
    assert three_grid_estimate(1.0, 1.01, 1.03, DEFAULT_RATIO)["pattern"] == "not shrinking"
    osc = three_grid_estimate(1.0, 1.01, 1.005, DEFAULT_RATIO)
    assert osc["pattern"] == "oscillating" and not osc["converged"]
    assert osc["largest_change"] == pytest.approx(0.01 / 1.01)
    same = three_grid_estimate(2.0, 2.0 * (1 + 1e-13), 2.0, DEFAULT_RATIO)
    assert same["pattern"] == "unchanged" and same["converged"]


def test_refined_scenario_divides_spacing_and_step():
    s = bedflux.load(str(_example()))
    f = refined(s, 2.0)
    assert (f.grid.dx, f.grid.dz, f.grid.dz_max) == pytest.approx((s.grid.dx / 2, s.grid.dz / 2, s.grid.dz_max / 2))
    assert f.grid.growth == pytest.approx(math.sqrt(s.grid.growth))
    t = bedflux.Scenario.from_dict({**dict(s.raw), "time": {"end": "1 d", "step": "1 h", "output_every": "6 h"}})
    assert refined(t, DEFAULT_RATIO).time.step == pytest.approx(3600.0 / DEFAULT_RATIO)
    assert refined(t, DEFAULT_RATIO).time.output_every == t.time.output_every
    with pytest.raises(InputError, match="> 1"):
        refined(s, 1.0)


def _example():
    from bedflux.cli import example_path

    return example_path()


def _column(tmp_path, transient: bool):
    text = """
title = "column for the refinement check (invented)"
[grid]
x = [0.0, 1.0]
bottom = -2.0
dx = 1.0
dz = "10 cm"
[ground]
elevation = 0.0
[[zone]]
name = "aquifer"
kh = "5 m/d"
kv = "2 m/d"
specific_storage = "1e-4 1/m"
[[zone]]
name = "bed"
kh = "0.5 m/d"
kv = "0.2 m/d"
depth = "40 cm"
[stream]
stage = "0.3 m"
[sides]
left = "no-flow"
right = "no-flow"
bottom = { head = "0.8 m" }
"""
    if transient:
        text += '[time]\nend = "1 d"\nstep = "2 h"\noutput_every = "6 h"\n'
    path = tmp_path / "column.toml"
    path.write_text(text)
    return path


@pytest.mark.parametrize("transient", [False, True])
def test_a_darcy_column_is_unchanged_on_every_grid(tmp_path, capsys, transient):
    path = _column(tmp_path, transient)
    assert main(["run", str(path), "-o", str(tmp_path / "out"), "--refinement-check"]) == 0
    check = json.loads((tmp_path / "out" / "summary.json").read_text())["refinement_check"]
    q = (0.8 - 0.3) / (0.4 / (0.2 / DAY) + 1.6 / (2.0 / DAY))  # Darcy in series, m/s upward
    net = check["answers"]["net exchange"]
    np.testing.assert_allclose(net["values"], q * 1.0, rtol=1e-9)  # a 1 m wide column
    assert net["pattern"] == "unchanged" and check["converged"]
    assert check["cells"] == [20, 28, 40]
    assert (check["step_s"] is not None) == transient
    if transient:
        assert check["step_s"] == pytest.approx([7200.0, 7200.0 / DEFAULT_RATIO, 3600.0])
    assert "refinement check" in (tmp_path / "out" / "summary.txt").read_text()
    assert "net exchange" in capsys.readouterr().out


def test_the_built_in_example_is_not_called_converged(tmp_path):
    assert main(["run", "-o", str(tmp_path / "out"), "-q", "--refinement-check"]) == 0
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    net = summary["refinement_check"]["answers"]["net exchange"]
    assert net["values"][0] == pytest.approx(summary["exchange_m2_per_s"])
    assert not net["converged"]
    assert "NOT converged" in (tmp_path / "out" / "summary.txt").read_text()
