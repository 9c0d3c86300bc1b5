"""The ensemble as a zarr store (``ensemble.zarr``): members appended along ``member`` in member
order, chunked by ``member`` (one chunk per batch of members), written as members finish."""
from __future__ import annotations

from pathlib import Path

import xarray as xr

from bedflux.outputs.files import TIMING_ATTRS

#: zarr format 3: its files carry no hidden names (the output manifests refuse those)
ZARR_FORMAT = 3
#: variables read back as Python strings, as from netCDF
TEXT = ("failure", "parameter")


def append_members(ds: xr.Dataset, store: Path, chunk: int, first: bool) -> None:
    """Write ``ds`` (members in order) into a new ``store`` (``first``) or append it along
    ``member``; variables along ``member`` get chunks of ``chunk`` members."""
    ds = ds.copy(deep=False)
    ds.attrs = {k: v for k, v in ds.attrs.items() if k not in TIMING_ATTRS}
    if first:
        encoding = {name: {"chunks": tuple(chunk if d == "member" else ds.sizes[d] for d in var.dims)}
                    for name, var in ds.variables.items() if "member" in var.dims}
        ds.to_zarr(store, mode="w-", zarr_format=ZARR_FORMAT, consolidated=False, encoding=encoding)
    else:
        ds.drop_vars([n for n, v in ds.variables.items() if "member" not in v.dims]).to_zarr(
            store, append_dim="member", consolidated=False)


def open_members(store: Path) -> xr.Dataset:
    """The ensemble in ``store``, read lazily by chunk of members."""
    ds = xr.open_zarr(store, consolidated=False)
    return ds.assign({n: ds[n].astype(object) for n in TEXT if n in ds.data_vars}).assign_coords(
        {n: ds[n].astype(object) for n in TEXT if n in ds.coords})
