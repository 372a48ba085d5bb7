"""One entry point per question for the readers of this package.

:func:`format_from_suffix` names the format of a file from its extension (sniffing
HDF5 files: an emcee backend or a NetCDF4 posterior); :func:`column_table` describes a
samples file's columns; :func:`iter_frames` streams the requested columns.  CSV and
Parquet stay with :mod:`eftsieve.io.samples`.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from pathlib import Path

from eftsieve.errors import InputError
from eftsieve.io.readers.columns import ColumnTable
from eftsieve.io.readers.options import ReadOptions

#: samples formats read by this package
SAMPLES_FORMATS = ("netcdf", "npy", "npz", "emcee")
#: the name of the Gaussian format (a gvar JSON dump)
GVAR_JSON = "gvar-json"
#: extensions of this package's formats; None means "sniff the HDF5 content"
SUFFIXES: dict[str, str | None] = {".npy": "npy", ".npz": "npz", ".h5": None,
                                   ".hdf5": None, ".hdf": None, ".json": GVAR_JSON}


def sniff_hdf5(path: Path) -> str:
    """``emcee`` for an HDF5 file holding an emcee backend group, else ``netcdf``."""
    from eftsieve.io.readers.emcee_hdf5 import is_emcee_file

    return "emcee" if Path(path).is_file() and is_emcee_file(Path(path)) else "netcdf"


def format_from_suffix(path: Path) -> str | None:
    """The format named by the extension, or None when this package does not read it."""
    suffix = Path(path).suffix.lower()
    if suffix not in SUFFIXES:
        return None
    fmt = SUFFIXES[suffix]
    return sniff_hdf5(path) if fmt is None else fmt


def column_table(fmt: str, path: Path, options: ReadOptions | None) -> ColumnTable:
    """The columns of one samples file of a format of this package."""
    opts = options or ReadOptions()
    if fmt == "emcee":
        from eftsieve.io.readers import emcee_hdf5

        return emcee_hdf5.column_table(path, opts)
    if fmt == "netcdf":
        from eftsieve.io.readers import arviz_netcdf

        return arviz_netcdf.column_table(path)
    if fmt in ("npy", "npz"):
        from eftsieve.io.readers import numpy_arrays

        return numpy_arrays.column_table(path, fmt)
    raise InputError(path, "samples.format", f"'{fmt}' is not a samples format",
                     f"use one of csv, parquet, {', '.join(SAMPLES_FORMATS)}")


def available(fmt: str, path: Path, options: ReadOptions | None) -> list[str]:
    """Every label that :func:`iter_frames` can deliver (columns and extras)."""
    table = column_table(fmt, path, options)
    return list(table.labels) + [v for v in table.extra.values() if v not in table.labels]


def iter_frames(fmt: str, path: Path, labels: Sequence[str], chunk_rows: int,
                options: ReadOptions | None) -> Iterator:
    """Stream pandas DataFrames of the requested labels, in the format's row order."""
    opts = options or ReadOptions()
    if fmt == "emcee":
        from eftsieve.io.readers import emcee_hdf5

        return emcee_hdf5.iter_frames(path, labels, chunk_rows, opts)
    if fmt == "netcdf":
        from eftsieve.io.readers import arviz_netcdf

        return arviz_netcdf.iter_frames(path, labels, chunk_rows, opts)
    from eftsieve.io.readers import numpy_arrays

    return numpy_arrays.iter_frames(path, fmt, labels, chunk_rows)
