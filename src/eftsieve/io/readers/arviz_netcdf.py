"""Posterior groups of ArviZ InferenceData NetCDF files, scalar and vector variables.

``idata.to_netcdf(path)`` (ArviZ before 1.0) and ``datatree.to_netcdf(path)`` (ArviZ
1.x, where InferenceData is an ``xarray.DataTree``) both store the draws in the group
``posterior``; every variable there has the leading dims ``(chain, draw)``.  This
reader needs xarray and h5netcdf, not ArviZ.  It reads the group through
``xarray.open_datatree`` when the installed xarray has it, so that coordinates a tree
keeps at its root (inherited by ``posterior``) are seen; otherwise through
``open_dataset(group='posterior')``.  A file without a ``posterior`` group is refused
(it is never read from its root group).  Other groups (``sample_stats``,
``observed_data``, ...) and variables without the ``(chain, draw)`` dims are ignored.

Columns: a scalar variable ``c`` is one column ``c``; a vector variable ``lbar`` with
dims ``(chain, draw, lbar_dim_0)`` gives columns ``lbar[0]``, ``lbar[1]`` (``m[i,j]``
for more dims).  When the coordinate labels of a vector variable's one extra dim are
strings (``coords={'p': ['lbar1', 'lbar2']}``), they are aliases, so parameters named
``lbar1``, ``lbar2`` map automatically.  Rows are chain-major: chain 0's draws in order,
then chain 1's, ...; burn-in, thinning and chain selection (``samples.walkers``) apply
to each chain.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.io.readers.columns import ColumnTable
from eftsieve.io.readers.options import ReadOptions

GROUP = "posterior"
HOW_TO = "write it with arviz: idata.to_netcdf(path) (the draws in the 'posterior' group)"


def _groups(path: Path) -> list[str]:
    try:
        import h5py
    except ImportError as err:
        raise InputError(path, None, "reading NetCDF needs the optional extra",
                         "pip install 'eftsieve[netcdf]'") from err
    try:
        with h5py.File(path, "r") as f:
            return [k for k in f.keys() if isinstance(f[k], h5py.Group)]
    except OSError as err:
        raise InputError(path, None, f"cannot read NetCDF4/HDF5: {err}", HOW_TO) from err


def open_posterior(path: Path):
    """The ``posterior`` group as an in-memory xarray Dataset (inherited coords included)."""
    groups = _groups(path)
    if GROUP not in groups:
        raise InputError(path, GROUP, f"no '{GROUP}' group (groups: {groups or 'none'})",
                         HOW_TO)
    try:
        import xarray as xr
    except ImportError as err:
        raise InputError(path, None, "reading NetCDF needs the optional extra",
                         "pip install 'eftsieve[netcdf]'") from err
    try:
        if hasattr(xr, "open_datatree"):
            with xr.open_datatree(path, engine="h5netcdf") as tree:
                return tree[GROUP].to_dataset().load()
        with xr.open_dataset(path, group=GROUP, engine="h5netcdf") as ds:
            return ds.load()
    except (OSError, ValueError, KeyError) as err:
        raise InputError(path, GROUP, f"cannot read the group: {err}", HOW_TO) from err


def _variables(path: Path, ds: Any) -> list[tuple[str, Any]]:
    out = [(str(k), v) for k, v in ds.data_vars.items() if v.dims[:2] == ("chain", "draw")]
    if not out:
        raise InputError(path, GROUP, "no variable with the dims (chain, draw)", HOW_TO)
    return out


def _columns(path: Path, ds: Any) -> list[tuple[str, str, tuple[int, ...], str | None]]:
    """(label, variable, element index, alias) for every flat column."""
    cols: list[tuple[str, str, tuple[int, ...], str | None]] = []
    for name, v in _variables(path, ds):
        extra = v.shape[2:]
        if not extra:
            cols.append((name, name, (), None))
            continue
        labels = None
        if len(extra) == 1 and v.dims[2] in ds.coords:
            vals = ds.coords[v.dims[2]].values
            if vals.dtype.kind in "US":
                labels = [str(x) for x in vals]
        for i, idx in enumerate(np.ndindex(*extra)):
            label = name + "[" + ",".join(str(j) for j in idx) + "]"
            cols.append((label, name, idx, None if labels is None else labels[i]))
    return cols


def column_table(path: Path) -> ColumnTable:
    """The flat columns of the posterior group, with coordinate labels as aliases."""
    cols = _columns(path, open_posterior(path))
    labels = tuple(c[0] for c in cols)
    aliases: dict[str, int | None] = {}
    for i, (_, _, _, alias) in enumerate(cols):
        if alias is not None:
            aliases[alias] = None if alias in aliases else i
    return ColumnTable(labels, True, aliases)


def iter_frames(path: Path, labels: Sequence[str], chunk_rows: int,
                options: ReadOptions) -> Iterator:
    """Yield DataFrames of the requested labels, chain-major, draws in order."""
    import pandas as pd

    ds = open_posterior(path)
    cols = {c[0]: c for c in _columns(path, ds)}
    n_chain, n_draw = int(ds.sizes["chain"]), int(ds.sizes["draw"])
    chains = options.walkers if options.walkers is not None else tuple(range(n_chain))
    bad = [c for c in chains if c >= n_chain]
    if bad:
        raise InputError(path, "samples.walkers", f"chain(s) {bad} beyond the {n_chain} "
                         "chains of the file", f"give chain positions 0..{n_chain - 1}")
    keep = options.keep(n_draw)
    if len(keep) == 0:
        raise InputError(path, "samples.burn_in", f"burn-in and thinning leave no draw of "
                         f"the {n_draw}", "lower the burn-in or the thinning")
    draws = np.arange(keep.start, keep.stop, keep.step)
    data: dict[str, np.ndarray] = {}
    for lab in labels:
        _, var, idx, _ = cols[lab]
        arr = ds[var].values[(slice(None), slice(None), *idx)]
        data[lab] = arr[np.asarray(chains)][:, draws].reshape(-1)
    n = len(chains) * len(draws)
    for lo in range(0, n, chunk_rows):
        yield pd.DataFrame({k: v[lo:lo + chunk_rows] for k, v in data.items()})
