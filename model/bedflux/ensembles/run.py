"""``bedflux.ensemble``: run an ensemble and gather its members into one Dataset."""
from __future__ import annotations

import itertools
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np
import xarray as xr

from bedflux.errors import SolverError
from bedflux.scenario.spec import Scenario
from bedflux.section.grid import build_grid
from bedflux.ensembles.engine import run_members
from bedflux.ensembles.members import MemberResult
from bedflux.ensembles.results import members_dataset
from bedflux.ensembles.store import append_members, open_members
from bedflux.ensembles.spec import EnsembleSpec, build_spec

#: members gathered in memory before they are written to a part file
PART_MEMBERS = 256


class Gatherer:
    """Collects finished members; with a ``scratch`` folder, writes them to part files of
    :data:`PART_MEMBERS` members as they come (bounded memory) and reads the parts back lazily;
    with a zarr ``store`` instead, appends them to it in member order, one chunk of
    ``part_members`` members at a time, and reads the store back lazily."""

    def __init__(self, spec: EnsembleSpec, scratch: Path | None = None, part_members: int = PART_MEMBERS,
                 store: Path | None = None):
        self.spec = spec
        self.x = build_grid(spec.scenario).xc
        self.times: np.ndarray | None = None
        self.scratch = scratch
        self.part_members = part_members
        self.buffer: list[MemberResult] = []
        self.parts: list[Path] = []
        self.failures: list[MemberResult] = []
        self.done = 0
        self.store = store
        self.waiting: dict[int, MemberResult] = {}
        self.stored = 0

    def add(self, result: MemberResult) -> None:
        self.done += 1
        if result.failure:
            self.failures.append(result)
        elif self.times is None and result.times is not None:
            self.times = result.times
        if self.store is not None:
            self.waiting[result.index] = result
            self._append_ready(final=False)
            return
        self.buffer.append(result)
        if self.scratch is not None and len(self.buffer) >= self.part_members and self._shape_known():
            self._write_part()

    def _shape_known(self) -> bool:
        return not self.spec.scenario.transient or self.times is not None

    def _write_part(self) -> None:
        path = self.scratch / f"part-{len(self.parts):05d}.nc"
        members_dataset(self.spec, self.buffer, self.x, self.times).to_netcdf(path, engine="h5netcdf")
        self.parts.append(path)
        self.buffer = []

    def _append_ready(self, final: bool) -> None:
        """Append to the store every whole chunk of members (all of them when ``final``) that
        follows the members already stored without a gap."""
        while self._shape_known():
            batch = list(itertools.takewhile(lambda i: i in self.waiting,
                                             range(self.stored, self.stored + self.part_members)))
            if not batch or (len(batch) < self.part_members and not final):
                return
            ds = members_dataset(self.spec, [self.waiting.pop(i) for i in batch], self.x, self.times)
            append_members(ds, self.store, self.part_members, first=self.stored == 0)
            self.stored += len(batch)

    def dataset(self) -> xr.Dataset:
        """All members in member order.

        Raises
        ------
        SolverError
            When every member failed (the first reason is given).
        """
        if not self._shape_known() or len(self.failures) == self.done:
            first = min(self.failures, key=lambda r: r.index).failure if self.failures else "no members ran"
            raise SolverError(f"every member of the ensemble failed; member {min(r.index for r in self.failures)}: "
                              f"{first}" if self.failures else first)
        if self.store is not None:
            self._append_ready(final=True)
            return open_members(self.store)
        if not self.parts:
            return members_dataset(self.spec, self.buffer, self.x, self.times)
        if self.buffer:
            self._write_part()
        parts = [xr.open_dataset(p, engine="h5netcdf", chunks={"member": self.part_members}) for p in self.parts]
        return xr.concat(parts, dim="member", data_vars="minimal", coords="minimal",
                         compat="override").sortby("member")


def ensemble(scenario: Scenario, members: int, uncertain: Sequence[Mapping[str, Any]] = (),
             random_fields: Sequence[Mapping[str, Any]] = (), seed: int = 0, client=None, *,
             from_fit: str | Path | None = None,
             progress: Callable[[float], None] | None = None) -> xr.Dataset:
    """Run ``members`` variants of ``scenario`` and return their answers along ``member``.

    Parameters
    ----------
    scenario
        The scenario (:func:`bedflux.load`); its values are the medians of the random fields.
    members
        Number of members.
    uncertain
        Dicts keyed as the ensemble file's ``[[uncertain]]`` tables, e.g. ``{"path": "bed.kv",
        "distribution": "lognormal", "median": 2e-6, "sd_log10": 0.3}`` (SI, or strings with units).
    random_fields
        Dicts keyed as the ``[[random_field]]`` tables, e.g. ``{"zone": "bed", "property": "k",
        "sd_log10": 0.3, "along": 3.0, "across": 0.2}``.
    seed
        Member ``i`` draws from ``SeedSequence([seed, i])``: the same numbers on any number of
        workers.
    client
        A ``distributed.Client`` to run the members on; None runs them one after another here.
    from_fit
        A folder written by ``bedflux fit``: its calibrated values are drawn from its posterior.
    progress
        Called with the fraction of members done.

    Returns
    -------
    xarray.Dataset
        See :mod:`bedflux.ensembles.results`: ``parameter_value(member, parameter)``,
        ``exchange``, ``stage``, ``bed_flux``, the events, ``failed`` and ``failure``.

    Raises
    ------
    InputError
        For a bad member count, seed, distribution, parameter path or random field.
    SolverError
        When every member failed.
    """
    spec = build_spec(scenario, members, uncertain, random_fields, seed, from_fit)
    return run_spec(spec, client, progress)


def run_spec(spec: EnsembleSpec, client=None, progress: Callable[[float], None] | None = None,
             scratch: Path | None = None, chunk: int = 1, store: Path | None = None) -> xr.Dataset:
    """Run a checked ensemble (see :func:`ensemble`); with ``scratch``, members stream to part
    files there as they finish, with ``store`` to that zarr store; on a client, ``chunk``
    members go to a task."""
    gather = Gatherer(spec, scratch, store=store)
    for result in run_members(spec, range(spec.members), client, chunk=chunk):
        gather.add(result)
        if progress is not None:
            progress(gather.done / spec.members)
    return gather.dataset()
