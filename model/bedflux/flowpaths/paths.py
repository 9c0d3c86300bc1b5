"""Flow paths and residence times of the stream water that enters the bed: ``bedflux.flowpaths``.

Steady runs: paths start on the submerged bed at equal shares of the downwelling flow
(:mod:`bedflux.flowpaths.release`) and are traced exactly through the solved flow field
(:mod:`bedflux.flowpaths.tracer`) until they leave or reach the horizon.

Transient runs: in each output interval ``(t_k, t_k+1]`` the flow field is that of the output at
``t_k+1`` (the one the backward-Euler step ending there solved with); paths released in an interval
start at its middle, with weights from that interval's downwelling flow, and every path still in
the section is carried on through the next interval's field. The horizon is the end of the run
(or ``max_time`` after release, if sooner). The paths then say when the water that went into
bank storage comes back.

Variably saturated runs are traced the same way through the flows with the relative
conductivity, the water moving in the water-filled pores (:mod:`bedflux.flowpaths.unsaturated`);
in a transient one the paths of an interval carry the budget's stream inflow of the interval (a
mean over its adaptive steps), shared along the bed as the inflow at the output that ends it;
root water uptake (and the evapotranspiration of a steady saturated run) takes paths up in
proportion to its share of each cell's outflow (:mod:`bedflux.flowpaths.tracer`).
"""
from __future__ import annotations

import numpy as np
import xarray as xr

from bedflux.errors import InputError
from bedflux.flowpaths.field import CellField, cell_field, face_flows
from bedflux.flowpaths.release import downwelling_flow, path_count, release_points
from bedflux.flowpaths.statistics import QUANTILES, residence_statistics
from bedflux.flowpaths.tracer import EXIT_KINDS, NOT_OUT, UPTAKE_SEED, Paths, advance
from bedflux.flowpaths.unsaturated import UnsaturatedFields
from bedflux.scenario.spec import Scenario
from bedflux.section.discretisation import Section, discretise

#: Horizon of a steady run when ``max_time`` is not given (s): 1000 years.
DEFAULT_HORIZON = 1000.0 * 365.25 * 86400.0
#: Largest number of cell crossings per path, as a multiple of the grid's columns plus rows.
CROSSINGS_PER_GRID_LINE = 20

#: name -> (units, long name) of the path variables.
PATH_VARIABLES = {
    "entry_x": ("m", "where the path enters the bed"),
    "exit_x": ("m", "where the path leaves the section (NaN: not out within the horizon)"),
    "residence_time": ("s", "time from entering the bed to leaving the section (NaN: not out within the horizon)"),
    "time_tracked": ("s", "time the path was followed (its residence time, or the horizon when not out)"),
    "depth_reached": ("m", "greatest depth the path reaches below the bed where it entered"),
    "length": ("m", "path length (sum of its chords across the cells)"),
    "weight": ("m2 s-1", "downwelling water flow the path carries, per metre of channel"),
    "exit_kind": ("1", "where the path ends: " + ", ".join(EXIT_KINDS)),
    "release_time": ("s", "when the path enters the bed (time since the start of the run)"),
    "volume": ("m2", "water the path carries: weight times its release interval, m3 per metre of channel"),
}


def flowpaths(scenario: Scenario, ds: xr.Dataset | None = None, per_metre: float = 200,
              max_time: float | None = None, keep_geometry: bool = False) -> xr.Dataset:
    """Trace the stream water that enters the bed and return its paths and residence times.

    Parameters
    ----------
    scenario
        A validated scenario (:func:`bedflux.load`), saturated (linear) or variably saturated.
    ds
        Its solved result (:func:`bedflux.simulate`); solved here when omitted.
    per_metre
        Paths per metre of submerged bed (a transient run: of its largest submerged length,
        shared over the release intervals by their inflow).
    max_time
        Horizon (s): paths not out by then end as ``not out within the horizon``. Default
        1000 years in a steady run, the end of a transient run.
    keep_geometry
        Also return the vertices of every path where it crosses a cell face (``path_x``,
        ``path_z``, ``path_t`` along dimension ``vertex``, NaN-padded).

    Returns
    -------
    xarray.Dataset
        Dimension ``path``: ``entry_x``, ``exit_x``, ``residence_time``, ``time_tracked``,
        ``depth_reached``, ``length``, ``weight``, ``exit_kind`` (and ``release_time``, ``volume``
        in transient runs). Attributes ``exchange_flux`` (m/s, downwelling water flux averaged
        over the submerged bed), ``median_residence_time``, ``mean_residence_time``,
        ``residence_time_q10`` ... ``q90`` (flux-weighted, s), ``not_out_fraction``, ``horizon``.
    """
    if per_metre <= 0 or not np.isfinite(per_metre):
        raise InputError(f"per_metre = {per_metre!r}: give a positive number of paths per metre", where="per_metre")
    if max_time is not None and not max_time > 0:
        raise InputError(f"max_time = {max_time!r}: give a positive time in seconds or None", where="max_time")
    if ds is None:
        from bedflux.section.simulate import simulate

        ds = simulate(scenario)
    section = discretise(scenario)
    fields = FieldSource(section, ds)
    if "time" in ds.dims:
        return _transient(section, ds, fields, per_metre, max_time, keep_geometry)
    return _steady(section, ds, fields, per_metre, max_time, keep_geometry)


class FieldSource:
    """The flow field of each state of a result: steady (``at(None)``) or of output ``k`` (the
    field of the interval ending there), for a saturated or a variably saturated run; and the
    generator of the draws of root water uptake (one per tracing, fixed seed)."""

    def __init__(self, section: Section, ds: xr.Dataset, pore_space: str = "water content"):
        self.section = section
        self.ds = ds
        self.times = ds["time"].values.astype(float) if "time" in ds.dims else None
        vs = section.scenario.variably_saturated
        if vs and "water_content" not in ds:
            raise InputError("the scenario has retention in its zones but the result has no water_content: "
                             "pass the result of this scenario", where="ds")
        self.unsaturated = UnsaturatedFields(section, ds, pore_space) if vs else None
        self.rng = np.random.default_rng(UPTAKE_SEED)

    def _start(self, k: int | None) -> float:
        return 0.0 if k is None or k == 0 else float(self.times[k - 1])

    def inflow(self, k: int | None) -> np.ndarray:
        """Stream water entering the bed through each column (m^2/s) at the steady state or output ``k``."""
        if self.unsaturated is not None:
            flow = self.unsaturated.stream_inflow(k, self._start(k))
            if k is not None and k > 0 and flow.sum() > 0.0:
                # the budget of a variably saturated run is the mean over the interval's adaptive
                # steps: the interval's paths carry that, shared out as the output's inflow
                flow = flow * float(self.ds["inflow"].sel(term="stream").values[k]) / flow.sum()
            return flow
        ds = self.ds if k is None else self.ds.isel(time=k)
        return downwelling_flow(ds["bed_flux"].values, ds["wetted_fraction"].values, self.section.grid.dx)

    def at(self, k: int | None) -> CellField:
        t0 = self._start(k)
        if self.unsaturated is not None:
            return self.unsaturated.at(k, t0)
        ds = self.ds
        if k is None:
            return cell_field(self.section, ds["head"].values, ds["top_flux"].values, ds["wetted_fraction"].values,
                              uptake=self._steady_evapotranspiration())
        return cell_field(self.section, ds["head"].values[k], ds["top_flux"].values[k],
                          ds["wetted_fraction"].values[k], float(self.times[k]))

    def _steady_evapotranspiration(self) -> np.ndarray | None:
        """Evapotranspiration of each cell of a steady saturated run (m^2/s, ``(nz, nx)``): the
        net inflow through the faces of its root-zone cells (nothing else takes water in a steady
        state); None without riparian cells."""
        section = self.section
        if not section.et_cells.size:
            return None
        g = section.grid
        left, right, bottom, top = face_flows(section, self.ds["head"].values, self.ds["top_flux"].values, 0.0)
        net_in = (left - right + bottom - top).ravel()
        roots = np.zeros(g.nz * g.nx)
        pos = np.flatnonzero(g.active.ravel())[section.et_cells]
        roots[pos] = np.maximum(net_in[pos], 0.0)
        return roots.reshape(g.nz, g.nx)


def flowpaths_from_points(scenario: Scenario, x: np.ndarray, z: np.ndarray, ds: xr.Dataset | None = None,
                          start_time: float = 0.0, max_time: float | None = None,
                          keep_geometry: bool = False) -> xr.Dataset:
    """Trace paths from given points ``(x, z)`` (m) instead of the bed, forward from
    ``start_time`` (s, transient runs; within the run).

    The Dataset is that of :func:`flowpaths` with ``weight`` NaN (the paths carry no known
    share of a flow) and the residence time counted from the start; ``depth_reached`` is below
    the starting point. Points outside the active cells are moved into the cell below the
    ground of their column.
    """
    from bedflux.flowpaths.tracer import locate

    if ds is None:
        from bedflux.section.simulate import simulate

        ds = simulate(scenario)
    section = discretise(scenario)
    x = np.atleast_1d(np.asarray(x, dtype=float))
    z = np.atleast_1d(np.asarray(z, dtype=float))
    if x.shape != z.shape:
        raise InputError(f"x has {x.size} values and z {z.size}: give one z per x", where="x, z")
    times = ds["time"].values.astype(float) if "time" in ds.dims else None
    if times is not None and not times[0] <= start_time < times[-1]:
        raise InputError(f"start_time = {start_time:g} s is outside the run [{times[0]:g}, {times[-1]:g}) s",
                         where="start_time")

    fields = FieldSource(section, ds)
    field_at = fields.at
    first = field_at(None if times is None else 0)
    col, row, z = locate(first, x, z)
    paths = Paths(x=x.copy(), z=z.copy(), col=col, row=row, t=np.full(x.size, float(start_time)))
    limit = _max_crossings(section)
    if times is None:
        horizon = DEFAULT_HORIZON if max_time is None else float(max_time)
        advance(first, paths, horizon, limit, sinks_end=True, keep_vertices=keep_geometry, rng=fields.rng)
    else:
        end = float(times[-1]) if max_time is None else min(float(times[-1]), start_time + float(max_time))
        for k in range(times.size - 1):
            if times[k + 1] > start_time and times[k] < end:
                advance(field_at(k + 1), paths, min(float(times[k + 1]), end), limit, sinks_end=False,
                        keep_vertices=keep_geometry, rng=fields.rng)
        horizon = end - start_time
    out = _dataset(paths, x, z.copy(), np.full(x.size, np.nan), None, None, keep_geometry)
    if times is not None:
        out["release_time"] = ("path", np.full(x.size, float(start_time)),
                               {"units": "s", "long_name": PATH_VARIABLES["release_time"][1]})
    out.attrs.update({"horizon": horizon, "run": "steady" if times is None else "transient",
                      "released": "from given points"})
    return out


def _max_crossings(section: Section) -> int:
    return CROSSINGS_PER_GRID_LINE * (section.grid.nx + section.grid.nz) + 100


def _new_paths(section: Section, x: np.ndarray, col: np.ndarray, t: float) -> Paths:
    g = section.grid
    return Paths(x=x.copy(), z=g.ground[col].copy(), col=col.copy(), row=g.top_row[col].copy(),
                 t=np.full(x.size, float(t)))


def _steady(section: Section, ds: xr.Dataset, fields: FieldSource, per_metre: float, max_time: float | None,
            keep_geometry: bool) -> xr.Dataset:
    g = section.grid
    fieldv = fields.at(None)
    inflow = fields.inflow(None)
    submerged = float(np.sum(ds["wetted_fraction"].values * g.dx))
    n = path_count(per_metre, submerged) if inflow.sum() > 0 else 0
    x, col, weight = release_points(inflow, g.x_edges, n)
    horizon = DEFAULT_HORIZON if max_time is None else float(max_time)
    paths = _new_paths(section, x, col, 0.0)
    advance(fieldv, paths, horizon, _max_crossings(section), sinks_end=True, keep_vertices=keep_geometry,
            rng=fields.rng)
    out = _dataset(paths, x, section.grid.ground[col], weight, None, None, keep_geometry)
    exchange = float(inflow.sum()) / submerged if submerged > 0 else float("nan")
    out.attrs.update(_attributes(out, exchange, horizon, "steady"))
    return out


def _transient(section: Section, ds: xr.Dataset, fields: FieldSource, per_metre: float,
               max_time: float | None, keep_geometry: bool) -> xr.Dataset:
    g = section.grid
    times = ds["time"].values.astype(float)
    wf = ds["wetted_fraction"].values
    dt = np.diff(times)
    inflow = np.array([fields.inflow(k + 1) for k in range(times.size - 1)]).reshape(-1, g.nx)
    volume = inflow.sum(axis=1) * dt
    submerged = (wf[1:] * g.dx).sum(axis=1)
    total = float(volume.sum())
    n_total = path_count(per_metre, float(submerged.max())) if submerged.size and total > 0 else 0
    counts = np.where(volume > 0, np.maximum(1, np.round(n_total * volume / total if total > 0 else 0)), 0).astype(int)
    paths = _new_paths(section, np.zeros(0), np.zeros(0, dtype=np.int64), 0.0)
    entry, entry_z, weight, release, vol = [], [], [], [], []
    limit = _max_crossings(section)
    for k in range(times.size - 1):
        fieldv = fields.at(k + 1)
        if counts[k]:
            x, col, w = release_points(inflow[k], g.x_edges, int(counts[k]))
            start = times[k] + 0.5 * dt[k]
            paths = _joined(paths, _new_paths(section, x, col, start))
            entry.append(x); entry_z.append(g.ground[col]); weight.append(w); release.append(np.full(x.size, start)); vol.append(w * dt[k])
        if paths.x.size:
            born = np.concatenate(release)
            until = np.minimum(times[k + 1], born + max_time) if max_time is not None else times[k + 1]
            advance(fieldv, paths, until, limit, sinks_end=False, keep_vertices=keep_geometry, rng=fields.rng)
    paths.exit[paths.exit < 0] = NOT_OUT
    cat = (lambda parts: np.concatenate(parts) if parts else np.zeros(0))
    out = _dataset(paths, cat(entry), cat(entry_z), cat(weight), cat(release), cat(vol), keep_geometry)
    exchange = total / float(np.sum(submerged * dt)) if total > 0 else float("nan")
    horizon = float(times[-1] - times[0]) if max_time is None else float(max_time)
    out.attrs.update(_attributes(out, exchange, horizon, "transient"))
    return out


def _joined(a: Paths, b: Paths) -> Paths:
    """One set of paths from two (vertices kept with path numbers of the joined set)."""
    fields = ("x", "z", "col", "row", "t", "elapsed", "length", "lowest", "exit", "crossings", "fresh")
    joined = Paths(**{f: np.concatenate([getattr(a, f), getattr(b, f)]) for f in fields})
    joined.vertices = a.vertices
    return joined


def _dataset(paths: Paths, entry_x: np.ndarray, entry_z: np.ndarray, weight: np.ndarray,
             release: np.ndarray | None, volume: np.ndarray | None, keep_geometry: bool) -> xr.Dataset:
    paths.exit[paths.exit < 0] = NOT_OUT
    left = paths.exit != NOT_OUT
    data = {
        "entry_x": entry_x,
        "exit_x": np.where(left, paths.x, np.nan),
        "residence_time": np.where(left, paths.elapsed, np.nan),
        "time_tracked": paths.elapsed,
        "depth_reached": entry_z - paths.lowest,
        "length": paths.length,
        "weight": weight,
        "exit_kind": np.array([EXIT_KINDS[c] for c in range(len(EXIT_KINDS))], dtype=object)[paths.exit],
    }
    if release is not None:
        data["release_time"] = release
        data["volume"] = volume
    out = xr.Dataset({k: ("path", np.asarray(v)) for k, v in data.items()},
                     coords={"path": np.arange(paths.x.size)})
    for name in data:
        units, long = PATH_VARIABLES[name]
        out[name].attrs.update({"units": units, "long_name": long})
    if keep_geometry:
        px, pz, pt = _geometry(paths, entry_x, entry_z, release)
        for name, arr, units, long in (("path_x", px, "m", "x of the path where it crosses a cell face"),
                                       ("path_z", pz, "m", "elevation of the path where it crosses a cell face"),
                                       ("path_t", pt, "s", "time since the start of the run at each vertex")):
            out[name] = (("path", "vertex"), arr, {"units": units, "long_name": long})
    return out


def _geometry(paths: Paths, entry_x: np.ndarray, entry_z: np.ndarray, release: np.ndarray | None
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """NaN-padded ``(path, vertex)`` arrays of the vertices recorded while tracing, the entry
    first (a path that wraps around periodic sides jumps by the section's width there)."""
    n = paths.x.size
    ids = np.concatenate([np.arange(n)] + [v[0] for v in paths.vertices])
    x = np.concatenate([entry_x] + [v[1] for v in paths.vertices])
    z = np.concatenate([entry_z] + [v[2] for v in paths.vertices])
    t = np.concatenate([np.zeros(n) if release is None else release] + [v[3] for v in paths.vertices])
    order = np.argsort(ids, kind="stable")
    ids, x, z, t = ids[order], x[order], z[order], t[order]
    counts = np.bincount(ids, minlength=n)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    slot = np.arange(ids.size) - np.repeat(starts, counts)
    width = int(counts.max()) if n else 0
    px = np.full((n, width), np.nan)
    pz, pt = px.copy(), px.copy()
    px[ids, slot], pz[ids, slot], pt[ids, slot] = x, z, t
    return px, pz, pt


def _attributes(out: xr.Dataset, exchange: float, horizon: float, run: str) -> dict:
    weight = out["volume"].values if "volume" in out else out["weight"].values
    left = out["exit_kind"].values != EXIT_KINDS[NOT_OUT]
    stats = residence_statistics(out["time_tracked"].values, weight, left)
    attrs = {"exchange_flux": exchange, "horizon": horizon, "run": run,
             "downwelling_flow": float(out["weight"].values.sum()) if run == "steady" else float("nan"),
             "quantiles_percent": ",".join(str(q) for q in QUANTILES),
             "weighting": "volume" if run == "transient" else "weight (downwelling flow)"}
    attrs.update(stats)
    return attrs
