"""Zones that cut through cells, beds on sloping ground, and faces beside extended top cells.

Sources:
- Equivalent conductivity of a layered formation (Freeze & Cherry 1979, Groundwater, ch. 2,
  eqs. 2.31-2.32, from memory): parallel to the layers K = sum(K_i b_i) / sum(b_i) (arithmetic),
  across them K = sum(b_i) / sum(b_i / K_i) (harmonic). A cell that holds two layers is such a
  formation; a cell cut by a vertical zone edge is the same with the directions exchanged.
- Darcy's law for beds in series, q = dh / sum(b_i / K_i) (same source): a 1D column is exact to
  round-off when every cell carries the harmonic mean of the layers it holds, wherever the layer
  interfaces fall inside the cells.
- A uniform bed of thickness b over a uniformly sloping ground, the stage parallel to the ground
  and a head H at the base B: away from the sides the flow is vertical, and in each column
  q_up(x) = (H - stage(x)) / (b / kv_bed + (ground(x) - b - B) / kv_aquifer)   (Darcy, series).
  The 2D solution differs from this only by the small horizontal flow of the sloping section;
  the test shows the model's error against it falls as the grid is refined.
- Geometry: two side-by-side columns share the height between the model base and the lower of
  their two grounds; the horizontal faces between them must cover exactly that height.
"""
from __future__ import annotations

import numpy as np
import pytest

import bedflux
from bedflux.section.grid import build_grid
from bedflux.section.materials import materials
from bedflux.section.discretisation import discretise

DAY = 86400.0
ROUND_OFF = 1e-10


# ------------------------------------------------------------------ cell averages

def two_layer_cell(depth: float, box: bool = False) -> bedflux.Scenario:
    """One column 1 m wide, one 1 m row; a bed of ``depth`` from the ground (or a box zone
    covering x in [0, 0.3] over the full height when ``box``)."""
    storage = {"specific_storage": 5e-4, "specific_yield": 0.3}
    bed = ({"name": "bed", "kh": 2e-4, "kv": 1e-6, **storage, "x": [0.0, 0.3], "z": [-5.0, 5.0]}
           if box else {"name": "bed", "kh": 2e-4, "kv": 1e-6, **storage, "depth": depth})
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 1.0], "bottom": -1.0, "dx": 1.0, "dz": 1.0},
        "ground": {"elevation": 0.0},
        "zone": [{"name": "aquifer", "kh": 1e-4, "kv": 4e-5, "specific_storage": 1e-4, "specific_yield": 0.1}, bed],
        "stream": {"stage": 0.5},
        "sides": {"bottom": {"head": 1.0}}})


@pytest.mark.parametrize("depth", [0.1, 0.3, 0.77])
def test_a_cell_holding_two_layers_takes_the_layered_averages(depth):
    # Freeze & Cherry 1979, eqs. 2.31-2.32: arithmetic along the layers, harmonic across them
    s = two_layer_cell(depth)
    g = build_grid(s)
    m = materials(s, g)
    f = depth  # the bed's share of the 1 m cell
    assert m.kh[0, 0] == pytest.approx(f * 2e-4 + (1 - f) * 1e-4, rel=1e-14)
    assert m.kv[0, 0] == pytest.approx(1.0 / (f / 1e-6 + (1 - f) / 4e-5), rel=1e-14)
    assert m.specific_storage[0, 0] == pytest.approx(f * 5e-4 + (1 - f) * 1e-4, rel=1e-14)  # volume-weighted storage
    assert m.specific_yield[0, 0] == pytest.approx(f * 0.3 + (1 - f) * 0.1, rel=1e-14)


def test_a_cell_cut_by_a_vertical_zone_edge_exchanges_the_averages():
    # same formulas with the layers standing: harmonic along x, arithmetic along z
    g = build_grid(two_layer_cell(0.0, box=True))
    m = materials(two_layer_cell(0.0, box=True), g)
    f = 0.3
    assert m.kh[0, 0] == pytest.approx(1.0 / (f / 2e-4 + (1 - f) / 1e-4), rel=1e-14)
    assert m.kv[0, 0] == pytest.approx(f * 1e-6 + (1 - f) * 4e-5, rel=1e-14)


def layered_column(dz: float, growth: float = 1.0) -> tuple[bedflux.Scenario, float]:
    """A column with three layers whose interfaces fall inside cells; returns the scenario and
    the series flux (Freeze & Cherry 1979, ch. 2)."""
    layers = [("clog", 0.13, 3e-7), ("silt", 0.41, 4e-6), ("sand", 2.46, 1e-4)]
    d = {"grid": {"x": [0.0, 1.0], "bottom": -3.0, "dx": 1.0, "dz": dz, "growth": growth},
         "ground": {"elevation": 0.0},
         "zone": [{"name": "sand", "kh": 3e-4, "kv": 1e-4},
                  {"name": "silt", "kh": 1.2e-5, "kv": 4e-6, "depth": 0.54},
                  {"name": "clog", "kh": 9e-7, "kv": 3e-7, "depth": 0.13}],
         "stream": {"stage": 0.4},
         "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": 1.9}}}
    q = (1.9 - 0.4) / sum(b / k for _, b, k in layers)
    return bedflux.Scenario.from_dict(d), q


@pytest.mark.parametrize("dz, growth", [(0.1, 1.0), (0.07, 1.0), (0.05, 1.13), (0.3, 1.0)])
def test_interfaces_inside_cells_keep_the_series_flux_exact(dz, growth):
    # Darcy in series (Freeze & Cherry 1979, ch. 2); interfaces at 0.13 and 0.54 m fall inside
    # cells on all these grids (0.3 m rows put both interfaces in the top two cells)
    s, q = layered_column(dz, growth)
    ze = build_grid(s).z_edges
    assert np.min(np.abs(ze[:, None] - np.array([-0.13, -0.54])[None, :])) > 1e-3
    r = bedflux.simulate(s)
    assert float(r.bed_flux[0]) == pytest.approx(q, rel=ROUND_OFF)
    np.testing.assert_allclose(r.qz.values[:, 0], q, rtol=ROUND_OFF)


# ------------------------------------------------------------------ sloping ground

SLOPE = 0.01
KV_BED, KV_AQ, BED, H_BASE = 0.1 / DAY, 5.0 / DAY, 0.3, 12.5


def sloping(dx: float, dz: float, kh_bed: float = 0.3 / DAY) -> bedflux.Scenario:
    """100 m along a channel: ground 10 m falling 1 cm/m, 30 cm water parallel to it, a 0.3 m bed
    of kv 0.1 m/d over a sandy aquifer, a head of 12.5 m at the base (z = 0)."""
    return bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 100.0], "bottom": 0.0, "dx": dx, "dz": dz, "runs": "along"},
        "ground": {"profile": [[0.0, 10.0], [100.0, 10.0 - 100 * SLOPE]]},
        "zone": [{"name": "aquifer", "kh": 15 / DAY, "kv": KV_AQ},
                 {"name": "bed", "kh": kh_bed, "kv": KV_BED, "depth": BED}],
        "stream": {"stage": 10.3, "slope": -SLOPE},
        "sides": {"left": "no-flow", "right": "no-flow", "bottom": {"head": H_BASE}}})


def column_flux(x: np.ndarray) -> np.ndarray:
    """q_up = (H - stage) / (b / kv_bed + (ground - b - base) / kv_aq)  (Darcy, beds in series)."""
    ground = 10.0 - SLOPE * x
    stage = 10.3 - SLOPE * x
    return (H_BASE - stage) / (BED / KV_BED + (ground - BED) / KV_AQ)


def interior(ds) -> np.ndarray:
    """Columns at least 20 m from the no-flow sides (the sides bend the flow within a few
    aquifer thicknesses)."""
    x = ds.x.values
    return (x > 20.0) & (x < 80.0)


def test_uniform_bed_on_sloping_ground_has_no_steps():
    # the bed flux follows the series solution without the staircase of the ground: 1 m columns,
    # 5 cm rows, so the top row changes every 5 columns
    ds = bedflux.simulate(sloping(1.0, 0.05))
    q = ds.bed_flux.values
    inside = interior(ds)
    rel = np.abs(q / column_flux(ds.x.values) - 1.0)[inside]
    assert rel.max() < 5e-3, f"bed flux off the series solution by up to {rel.max():.2%}"
    # neighbouring columns within 1 % (the physical change is 0.4 % per metre here)
    step = np.abs(np.diff(q) / q[:-1])[inside[:-1] & inside[1:]]
    assert step.max() < 0.01, f"bed flux jumps by {step.max():.2%} between neighbouring columns"


def test_sloping_ground_converges_to_the_series_solution():
    # the remaining error (the 2D correction of the sloping section and discretisation) falls as
    # the rows are refined, and stays far below the staircase error of a bed drawn cell by cell
    errors = []
    for dz in (0.1, 0.05, 0.025, 0.0125):
        ds = bedflux.simulate(sloping(1.0, dz))
        inside = interior(ds)
        errors.append(np.abs(ds.bed_flux.values / column_flux(ds.x.values) - 1.0)[inside].max())
    print("max relative error against the series solution, dz = 10, 5, 2.5, 1.25 cm:", errors)
    assert np.all(np.diff(errors) < 0.0), errors
    assert errors[-1] < 2e-3


def test_the_sloping_example_reach_has_no_steps():
    # scenarios/reach_long.toml: 0.30 m bed on ground falling 2 mm/m; where the top row changes
    # (x about 30 and 78 m) the bed flux must not jump. A step shows in the second difference,
    # which the smooth physics keeps near zero away from the no-flow ends; half of the 1 %
    # neighbour criterion is allowed there.
    ds = bedflux.simulate(bedflux.load("scenarios/reach_long.toml"))
    q = ds.bed_flux.values
    x = ds.x.values
    curvature = np.abs(q[2:] - 2 * q[1:-1] + q[:-2]) / q[1:-1]
    inside = (x[1:-1] > 15.0) & (x[1:-1] < 105.0)
    assert curvature[inside].max() < 5e-3, f"second difference up to {curvature[inside].max():.2%}"


# ------------------------------------------------------------------ faces beside extended top cells

@pytest.mark.parametrize("seed", range(5))
def test_horizontal_faces_cover_the_shared_height(seed):
    # geometry: columns a and b share the height from the base to min(ground_a, ground_b); the
    # faces between them (same row and beside an extended top cell) must add up to exactly that
    rng = np.random.default_rng(seed)
    xs = np.linspace(0.0, 10.0, 12)
    profile = [[float(x), float(z)] for x, z in zip(xs, 2.0 + rng.uniform(-0.4, 0.4, xs.size))]
    s = bedflux.Scenario.from_dict({
        "grid": {"x": [0.0, 10.0], "bottom": 0.0, "dx": 0.25, "dz": 0.1},
        "ground": {"profile": profile},
        "zone": [{"name": "aquifer", "kh": 1e-4}],
        "stream": {"stage": 2.1},
        "sides": {"left": {"head": 2.0}}})
    sec = discretise(s)
    g = sec.grid
    f = sec.hfaces
    col_lo, col_hi = f.lo_pos % g.nx, f.hi_pos % g.nx
    assert np.all(col_hi == col_lo + 1)
    shared = np.bincount(col_lo, weights=f.area, minlength=g.nx - 1)[: g.nx - 1]
    expected = np.minimum(g.ground[:-1], g.ground[1:]) - g.z_edges[-1]
    np.testing.assert_allclose(shared, expected, rtol=0, atol=1e-12)
    # and the extended top cells really occur in these grounds
    extended = g.ground > g.z_edges[g.top_row]
    assert extended.any()
