"""The result Dataset: variables, their units, locations and meanings declared once."""
from __future__ import annotations

import re
from typing import Sequence

import numpy as np
import xarray as xr

from bedflux.version import __version__
from bedflux.section.fluxes import BUDGET_LINES, Fluxes
from bedflux.section.grid import resolution_warnings
from bedflux.section.discretisation import Section

#: name -> (units, location, long name). Every output variable carries these attributes.
VARIABLES: dict[str, tuple[str, str, str]] = {
    "head": ("m", "cell", "hydraulic head (NaN above the ground)"),
    "qx": ("m s-1", "cell", "horizontal Darcy flux, positive in +x"),
    "qz": ("m s-1", "cell", "vertical Darcy flux, positive upward"),
    "bed_flux": ("m s-1", "column", "flux through the submerged bed, positive upward (gaining); NaN where dry"),
    "top_flux": ("m s-1", "column", "flux through the top face of each column, positive upward"),
    "wetted_fraction": ("1", "column", "share of each column's top face under the stream"),
    "exchange": ("m2 s-1", "section", "net exchange with the stream per metre of channel, positive when gaining"),
    "stage": ("m", "section", "stream stage (NaN without a stream)"),
    "ground": ("m", "column", "ground elevation at the column centre"),
    "kh": ("m s-1", "cell", "horizontal hydraulic conductivity"),
    "kv": ("m s-1", "cell", "vertical hydraulic conductivity"),
    "porosity": ("1", "cell", "effective porosity (for pore velocities)"),
    "zone": ("1", "cell", "index of the material zone (see attribute zone_names)"),
    "inflow": ("m2 s-1", "section", "flow into the aquifer through each boundary, per metre of width"),
    "outflow": ("m2 s-1", "section", "flow out of the aquifer through each boundary, per metre of width"),
    "budget_closure": ("1", "section", "budget imbalance (in - out) over the gross flow; NaN when nothing flows"),
    "budget_gross": ("m2 s-1", "section", "gross flow: sum of the magnitudes of the parts every budget flow is "
                                          "the difference of (the scale of the closure)"),
    # variably saturated runs (zones with retention)
    "pressure_head": ("m", "cell", "pressure head (head minus elevation; negative above the water table)"),
    "water_content": ("1", "cell", "volumetric water content"),
    "saturation": ("1", "cell", "degree of saturation (water content over saturated water content)"),
    "water_table": ("m", "column", "elevation of the uppermost zero-pressure level (NaN where the column is unsaturated)"),
    "ponding": ("m s-1", "column", "water left on exposed ground: recharge a seepage face does not take in plus its outflow"),
    "storage_saturated": ("m2 s-1", "section", "release from specific storage (elastic), per metre of width"),
    "storage_unsaturated": ("m2 s-1", "section", "release by draining pores (fall of water content), per metre of width"),
    "step_end": ("s", "step", "end of each accepted time step"),
    "step_length": ("s", "step", "length of each accepted time step"),
    "step_iterations": ("1", "step", "nonlinear iterations of each accepted time step"),
    "step_closure": ("1", "step", "water budget imbalance of each step relative to its total inflow"),
    # runs with [heat]
    "temperature": ("degC", "cell", "temperature of water and sediment"),
    "heat_inflow": ("W m-1", "section", "heat into the section through each budget line, per metre of width, "
                                        "relative to the groundwater temperature"),
    "heat_outflow": ("W m-1", "section", "heat out of the section through each budget line, per metre of width, "
                                         "relative to the groundwater temperature"),
    "heat_closure": ("1", "section", "energy budget imbalance (in - out) over the gross of its parts"),
    "heat_gross": ("W m-1", "section", "gross of the parts every heat flow is the difference of (the scale of the "
                                       "closure)"),
    "thermal_conductivity": ("W m-1 K-1", "cell", "bulk thermal conductivity of the saturated sediment"),
    "bulk_heat_capacity": ("J m-3 K-1", "cell", "bulk volumetric heat capacity (water in the pores and grains)"),
    # linear runs
    "saturated": ("1", "cell", "1 where the head is at or above the cell's bottom, 0 where the water table lies "
                  "below the whole cell (the linear model still conducts through it at full thickness)"),
}


def _attrs(name: str) -> dict:
    units, location, long = VARIABLES[name]
    return {"units": units, "location": location, "long_name": long}


def water_table_warning(head: np.ndarray, grid) -> str:
    """The warning of a linear run whose heads fall below active cells ("" when none do).

    ``head`` is ``(nz, nx)`` or ``(time, nz, nx)``; counted is the largest number of cells below
    the water table at any output time, and the deepest water table below the ground (head of the
    top cell) in a column that has such cells.
    """
    h = head.reshape((-1,) + head.shape[-2:])
    dry = grid.active[None] & (h < grid.cell_bottom[None])
    n = int(dry.sum(axis=(1, 2)).max()) if dry.size else 0
    if n == 0:
        return ""
    cols = np.arange(grid.nx)
    depth = grid.ground[None, :] - h[:, grid.top_row, cols]
    deepest = float(np.max(np.where(dry.any(axis=1), depth, 0.0)))
    return (f"the water table lies below {n} cells, up to {deepest:.2f} m below the ground: consider a "
            "variably saturated run (retention in every zone)")


def add_variables(ds: xr.Dataset, data: dict[str, tuple[tuple[str, ...], np.ndarray]]) -> None:
    """Add declared variables ``name -> (dims, values)`` to ``ds`` with their attributes."""
    for name, (dims, values) in data.items():
        ds[name] = (dims, np.asarray(values))
        ds[name].attrs.update(_attrs(name))


def build_dataset(section: Section, states: Sequence[Fluxes], stages: Sequence[float | None],
                  times: Sequence[float] | None, attrs: dict) -> xr.Dataset:
    """Assemble the Dataset from one steady state (``times`` None) or a series of states."""
    g = section.grid
    m = section.materials
    steady = times is None
    lead = () if steady else ("time",)

    def stack(get):
        arr = np.stack([get(s) for s in states])
        return arr[0] if steady else arr

    data = {
        "head": (lead + ("z", "x"), stack(lambda s: s.head)),
        "qx": (lead + ("z", "x"), stack(lambda s: s.qx)),
        "qz": (lead + ("z", "x"), stack(lambda s: s.qz)),
        "bed_flux": (lead + ("x",), stack(lambda s: s.bed_flux)),
        "top_flux": (lead + ("x",), stack(lambda s: s.top_flux)),
        "wetted_fraction": (lead + ("x",), section.wetted_fraction(0.0) if steady
                            else np.stack([section.wetted_fraction(t) for t in times])),
        "exchange": (lead, stack(lambda s: np.float64(s.exchange))),
        "stage": (lead, np.array([np.nan if v is None else v for v in stages])[0] if steady
                  else np.array([np.nan if v is None else v for v in stages])),
        "inflow": (lead + ("term",), stack(lambda s: np.array([s.inflow[k] for k in BUDGET_LINES]))),
        "outflow": (lead + ("term",), stack(lambda s: np.array([s.outflow[k] for k in BUDGET_LINES]))),
        "budget_closure": (lead, stack(lambda s: np.float64(s.closure))),
        "budget_gross": (lead, stack(lambda s: np.float64(s.gross))),
        "ground": (("x",), g.ground),
        "kh": (("z", "x"), np.where(g.active, m.kh, np.nan)),
        "kv": (("z", "x"), np.where(g.active, m.kv, np.nan)),
        "porosity": (("z", "x"), np.where(g.active, m.porosity, np.nan)),
        "zone": (("z", "x"), np.where(g.active, m.zone, -1).astype(np.int32)),
    }
    coords = {
        "x": ("x", g.xc, {"units": "m", "long_name": "column centre along the section"}),
        "z": ("z", g.zc, {"units": "m", "long_name": "row centre elevation", "positive": "up"}),
        "term": ("term", np.array(BUDGET_LINES), {"long_name": "budget line"}),
        "x_edge": ("x_edge", g.x_edges, {"units": "m", "long_name": "column edges"}),
        "z_edge": ("z_edge", g.z_edges, {"units": "m", "long_name": "row edges"}),
    }
    if not steady:
        coords["time"] = ("time", np.asarray(times, dtype=float), {"units": "s", "long_name": "time since start"})
    if not attrs.get("variably_saturated"):
        data["saturated"] = (lead + ("z", "x"), (data["head"][1] >= g.cell_bottom).astype(np.int8))
        warning = water_table_warning(data["head"][1], g)
        if warning:
            attrs = {**attrs, "water_table_warning": warning}
    ds = xr.Dataset({k: (dims, np.asarray(v)) for k, (dims, v) in data.items()}, coords=coords)
    for name in VARIABLES:
        if name in ds:
            ds[name].attrs.update(_attrs(name))
    ds.attrs.update({
        "title": section.scenario.title,
        "source_file": section.scenario.source,
        "bedflux_version": __version__,
        "sign_convention": "vertical flux and bed flux positive upward (gaining stream)",
        "zone_names": ",".join(m.zone_names),
        "section_runs": section.scenario.grid.runs,
        "stage_slope": float(section.scenario.stream.slope) if section.scenario.stream is not None else 0.0,
        "flux_boundaries": ",".join(side for side in ("left", "right", "bottom")
                                    if getattr(section.scenario, side).kind == "flux"),
        "resolution_warnings": "\n".join(resolution_warnings(section.scenario, g)),
        **attrs,
    })
    if section.scenario.grid.runs == "along":
        ds["exchange"].attrs["long_name"] = ("net exchange with the stream over the section, per metre of "
                                             "channel width (section along the channel), positive when gaining")
    if steady:
        ds.attrs["prescribed_head_min"], ds.attrs["prescribed_head_max"] = prescribed_head_range(section)
    elif section.scenario.time is not None:
        ds.attrs["planned_end_s"] = float(section.scenario.time.end)
    return ds


def prescribed_head_range(section: Section) -> tuple[float, float]:
    """Lowest and highest head the boundaries hold in a steady run (m).

    The stage on the submerged bed (with the bedform head), head and stream sides, and the ground
    of every exposed column (where a seepage face may hold the head at the ground). Without
    sources or sinks, the heads of a steady solve lie between these two (maximum principle).
    """
    held = [section.grid.ground[~section.submerged(0.0)]]
    for term in section.terms(0.0, section.initial_active_set()):
        held_by_head = term.kind in ("stream", "left", "right", "bottom")
        if held_by_head and term.conductance.size and np.all(term.conductance > 0):
            held.append(term.r / term.conductance + section.h_ref)
    values = np.concatenate(held) if held else np.zeros(0)
    if values.size == 0:
        return float("nan"), float("nan")
    return float(values.min()), float(values.max())


def partial_run(ds: xr.Dataset) -> dict | None:
    """How far a partial (interrupted or stopped) transient run got, or None for a complete run.

    Returns ``reason`` (the ``partial`` attribute), ``stopped_at_s`` (the time the run stopped,
    when the reason names it, else the last output), ``last_output_s`` and ``planned_end_s``
    (None when unknown).
    """
    reason = str(ds.attrs.get("partial", "") or "")
    if not reason:
        return None
    last = float(ds["time"].values[-1]) if "time" in ds.dims and ds.sizes["time"] else 0.0
    at = re.search(r"\bt = ([-+0-9.eE]+) s", reason)
    planned = ds.attrs.get("planned_end_s")
    if planned is None:
        of = re.search(r"\bof ([-+0-9.eE]+) s", reason)
        planned = float(of.group(1)) if of else None
    return {"reason": reason, "stopped_at_s": float(at.group(1)) if at else last, "last_output_s": last,
            "planned_end_s": None if planned is None else float(planned)}
