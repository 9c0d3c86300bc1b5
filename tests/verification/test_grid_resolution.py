"""Grid dependence: exact wetted length, convergence of the net exchange, and the resolution check.

Sources:
- Wetted length: on a straight bank the water's edge lies where the stage line meets the ground,
  x = x_toe + (stage - z_toe) / bank slope (plane geometry). In the built-in example the banks
  rise from (+-4, 0) to (+-5, 1.5) m and the stage is 0.45 m, so the submerged bed is
  2 (4 + 0.45 / 1.5) = 8.6 m wide on every grid.
- Convergence: a consistent discretisation approaches the fine-grid answer as the grid is refined
  (common practice: a refinement study, e.g. Roache 1998, Verification and Validation in
  Computational Science and Engineering, ch. 5, from memory); with the wetted length exact the net
  exchange of the built-in example moves toward the fine-grid value without the back-and-forth
  that snapping the water's edge to columns gave.
- Aliasing: a cosine sampled at fewer than two points per wavelength cannot be told from a
  longer one (Nyquist-Shannon sampling theorem); at two points per wavelength cos(2 pi x / L) at
  the centres x = (i + 1/2) L / 2 is zero everywhere. The model refuses fewer than 4 columns per
  bedform wavelength and warns below 8 (common practice for a resolved second-order profile).
- Rules of thumb of the resolution check (common practice): a bed layer across at least 3 cells;
  a submerged width of at least 10 columns.
"""
from __future__ import annotations

import copy
import tomllib
from importlib import resources

import numpy as np
import pytest

import bedflux
from bedflux.errors import InputError
from bedflux.section.grid import build_grid, resolution_warnings
from bedflux.outputs.summary import run_summary, run_summary_text

WETTED_WIDTH = 2 * (4.0 + 0.45 / 1.5)  # m, plane geometry of the example's banks
REFINEMENTS = (1.0, 1.5, 2.0, 3.0)  # 7k to 62k cells
FINE = 6.0  # 249k cells


def example(refine: float = 1.0) -> bedflux.Scenario:
    """The built-in example with dx, dz and dz_max divided by ``refine`` (growth to the power
    1/refine, so that the rows grow by the same factor per metre)."""
    text = resources.files("bedflux.examples").joinpath("gaining_channel.toml").read_text()
    d = copy.deepcopy(tomllib.loads(text))
    g = d["grid"]
    g["dx"], g["dz"], g["dz_max"] = 0.25 / refine, 0.05 / refine, 0.5 / refine
    g["growth"] = 1.06 ** (1.0 / refine)
    return bedflux.Scenario.from_dict(d)


@pytest.fixture(scope="module")
def sequence():
    """The example on the refined grids (without the fine grid)."""
    return {r: bedflux.simulate(example(r)) for r in REFINEMENTS}


@pytest.fixture(scope="module")
def fine():
    """The example on the fine grid (249k cells; the slow part of the study)."""
    return bedflux.simulate(example(FINE))


def test_the_example_grid_is_what_the_refinement_study_starts_from():
    s = example(1.0)
    assert s.grid == bedflux.load(str(resources.files("bedflux.examples").joinpath("gaining_channel.toml"))).grid


def test_wetted_length_is_exact_on_every_grid(sequence):
    # plane geometry: 8.6 m, whatever the column width (0.25 m down to 0.083 m; the fine grid's
    # 0.042 m in the refinement study below)
    for r, ds in sequence.items():
        assert run_summary(ds)["submerged_length_m"] == pytest.approx(WETTED_WIDTH, abs=1e-9), r


@pytest.mark.slow
def test_net_exchange_converges_toward_the_fine_grid(sequence, fine):
    # refinement study: every grid is closer to the fine-grid exchange than the coarser one before
    # it (within 0.1 % of the fine value), and within 5 % of it from the example grid on
    assert run_summary(fine)["submerged_length_m"] == pytest.approx(WETTED_WIDTH, abs=1e-9)
    sequence = {**sequence, FINE: fine}
    fine = float(fine.exchange)
    errors = np.array([float(sequence[r].exchange) / fine - 1.0 for r in REFINEMENTS])
    print("relative difference from the fine grid:", dict(zip(REFINEMENTS, np.round(errors, 4))))
    assert np.all(np.abs(errors) <= 0.05), errors
    assert np.all(np.diff(np.abs(errors)) <= 1e-3), f"not monotone: {errors}"
    # the water budget closes on every grid (conservation of volume)
    for ds in sequence.values():
        assert abs(float(ds["budget_closure"])) < 1e-8


# ------------------------------------------------------------------ bedforms

def dune_section(wavelength: float, dx: float = 0.05) -> dict:
    return {"grid": {"x": [0.0, 1.2], "bottom": -0.6, "dx": dx, "dz": 0.02},
            "ground": {"elevation": 0.0},
            "zone": [{"name": "sand", "kh": 1e-3}],
            "stream": {"stage": 0.3, "bedform": {"amplitude": 0.01, "wavelength": wavelength}},
            "sides": {"left": "periodic", "right": "periodic"}}


def test_aliasing_would_give_a_uniform_head():
    # why the refusal: at two columns per wavelength the sampled cosine is zero at every centre
    dx = 0.05
    xc = (np.arange(24) + 0.5) * dx
    np.testing.assert_allclose(np.cos(2 * np.pi * xc / (2 * dx)), 0.0, atol=1e-12)


@pytest.mark.parametrize("columns", [2, 3.5])
def test_a_bedform_under_four_columns_is_refused(columns):
    s = bedflux.Scenario.from_dict(dune_section(columns * 0.05))
    with pytest.raises(InputError) as err:
        bedflux.simulate(s)
    message = str(err.value)
    assert "[stream.bedform]" in message and "wavelength" in message and "dx" in message


def test_a_bedform_under_eight_columns_is_warned_about():
    coarse = bedflux.Scenario.from_dict(dune_section(6 * 0.05))
    fine = bedflux.Scenario.from_dict(dune_section(12 * 0.05))
    assert any("bedform" in w and "columns" in w for w in resolution_warnings(coarse, build_grid(coarse)))
    assert not any("bedform" in w for w in resolution_warnings(fine, build_grid(fine)))
    bedflux.simulate(coarse)  # warned, not refused


# ------------------------------------------------------------------ beds and the water's edge

def channel(dz: float, width: float = 8.0, dx: float = 0.25) -> bedflux.Scenario:
    half = width / 2
    return bedflux.Scenario.from_dict({
        "grid": {"x": [-10.0, 10.0], "bottom": -4.0, "dx": dx, "dz": dz},
        "ground": {"profile": [[-10, 1.0], [-half - 0.5, 1.0], [-half, 0.0], [half, 0.0], [half + 0.5, 1.0],
                               [10, 1.0]]},
        "zone": [{"name": "aquifer", "kh": 1e-4}, {"name": "bed", "kh": 2e-5, "depth": 0.3}],
        "stream": {"stage": 0.5},
        "sides": {"left": {"head": 0.8}, "right": {"head": 0.8}}})


def test_a_bed_across_fewer_than_three_cells_is_warned_about():
    thin = channel(dz=0.2)
    fine = channel(dz=0.05)
    warned = resolution_warnings(thin, build_grid(thin))
    assert any("'bed'" in w and "cells" in w for w in warned), warned
    assert resolution_warnings(fine, build_grid(fine)) == []


def test_a_narrow_wetted_bed_is_warned_about():
    narrow = channel(dz=0.05, width=1.0)
    warned = resolution_warnings(narrow, build_grid(narrow))
    assert any("submerged bed" in w and "columns" in w for w in warned), warned


def test_the_run_summary_lists_the_warnings():
    ds = bedflux.simulate(channel(dz=0.2))
    s = run_summary(ds)
    assert s["resolution_warnings"] and all("'bed'" in w for w in s["resolution_warnings"])
    text = run_summary_text(s)
    assert "grid warning:" in text and "zone 'bed'" in text
    assert "grid warning" not in run_summary_text(run_summary(bedflux.simulate(channel(dz=0.05))))
