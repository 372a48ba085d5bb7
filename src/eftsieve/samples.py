"""Chunked readers for posterior-samples files (CSV, Parquet, NetCDF posterior groups).

A :class:`SamplesSource` never holds a whole large file in memory: ``iter_chunks``
yields bounded blocks with the original row index, the parameter values in the
requested column order and the weights.  Every row read is validated (finite values,
non-negative weights) and the error quotes the offending row numbers.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from eftsieve.errors import InputError

SUPPORTED_FORMATS = {".csv": "csv", ".parquet": "parquet", ".pq": "parquet", ".nc": "netcdf",
                     ".netcdf": "netcdf", ".h5": "netcdf"}
DEFAULT_CHUNK_ROWS = 1_000_000


@dataclass(frozen=True)
class Chunk:
    """One block of samples.

    Attributes
    ----------
    rows
        Original 0-based row indices, shape (n,).
    values
        Parameter values, shape (n, p), columns in the order of the fit's parameters.
    weights
        Weights, shape (n,), or None for unweighted samples.
    """

    rows: np.ndarray
    values: np.ndarray
    weights: np.ndarray | None


def detect_format(path: Path, declared: str | None, field: str = "samples.format") -> str:
    """The file format, from the declared name or the extension."""
    if declared is not None:
        fmt = declared.lower()
        if fmt not in {"csv", "parquet", "netcdf"}:
            raise InputError(path, field, f"unsupported format '{declared}'",
                             "use one of csv, parquet, netcdf")
        return fmt
    fmt_opt = SUPPORTED_FORMATS.get(path.suffix.lower())
    if fmt_opt is None:
        raise InputError(path, field, f"unsupported file extension '{path.suffix}'",
                         "use .csv, .parquet or .nc, or state samples.format")
    return fmt_opt


@dataclass(frozen=True)
class SamplesSource:
    """A samples file with a mapping from parameter names to its columns.

    Attributes
    ----------
    path
        The file.
    fmt
        ``csv``, ``parquet`` or ``netcdf``.
    columns
        The file's column for each parameter, in parameter order.
    weight_column
        The weight column, or None.
    """

    path: Path
    fmt: str
    columns: tuple[str, ...]
    weight_column: str | None = None

    def available_columns(self) -> list[str]:
        """The column names that the file holds."""
        if self.fmt == "csv":
            import pandas as pd

            return list(pd.read_csv(self.path, nrows=0).columns)
        if self.fmt == "parquet":
            import pyarrow.parquet as pq

            return list(pq.ParquetFile(self.path).schema_arrow.names)
        return list(_netcdf_frame(self.path).columns)

    def validate_columns(self) -> None:
        """Check that every mapped column exists; name the missing ones."""
        have = self.available_columns()
        wanted = list(self.columns) + ([self.weight_column] if self.weight_column else [])
        missing = [c for c in wanted if c not in have]
        if missing:
            raise InputError(self.path, "columns", f"missing column(s) {missing}",
                             f"the file has {have}; fix samples.columns or the file")

    def iter_chunks(self, chunk_rows: int = DEFAULT_CHUNK_ROWS) -> Iterator[Chunk]:
        """Yield validated chunks in file order with their original row indices."""
        start = 0
        for frame in self._iter_frames(chunk_rows):
            chunk = self._to_chunk(frame, start)
            start += len(chunk.rows)
            yield chunk

    def read_all(self) -> Chunk:
        """Read the whole file into one chunk (for modest files)."""
        chunks = list(self.iter_chunks())
        if not chunks:
            raise InputError(self.path, None, "the samples file holds no rows",
                             "supply at least one sample")
        w = None if chunks[0].weights is None else np.concatenate([c.weights for c in chunks])
        return Chunk(np.concatenate([c.rows for c in chunks]),
                     np.concatenate([c.values for c in chunks]), w)

    def _iter_frames(self, chunk_rows: int) -> Iterator:
        wanted = list(dict.fromkeys(list(self.columns) + (
            [self.weight_column] if self.weight_column else [])))
        if self.fmt == "csv":
            import pandas as pd

            yield from pd.read_csv(self.path, usecols=wanted, chunksize=chunk_rows)
        elif self.fmt == "parquet":
            import pyarrow.parquet as pq

            # no pre-buffering: pyarrow would otherwise hold the whole file in memory
            pf = pq.ParquetFile(self.path, pre_buffer=False, buffer_size=1 << 20)
            for batch in pf.iter_batches(batch_size=chunk_rows, columns=wanted,
                                         use_threads=False):
                yield batch.to_pandas()
        else:
            frame = _netcdf_frame(self.path)
            for lo in range(0, len(frame), chunk_rows):
                yield frame.iloc[lo:lo + chunk_rows][wanted]

    def _to_chunk(self, frame, start: int) -> Chunk:
        n = len(frame)
        rows = np.arange(start, start + n, dtype=np.int64)
        try:
            values = frame[list(self.columns)].to_numpy(dtype=float)
        except (ValueError, TypeError) as err:
            raise InputError(self.path, "columns", f"non-numeric values in rows {start}.."
                             f"{start + n - 1}: {err}", "samples must be numbers") from err
        bad = ~np.isfinite(values).all(axis=1)
        if bad.any():
            raise InputError(self.path, "samples",
                             f"NaN or inf in row(s) {_rows_text(rows[bad])}",
                             "remove or repair those rows; nothing is repaired silently")
        weights = None
        if self.weight_column:
            weights = frame[self.weight_column].to_numpy(dtype=float)
            badw = ~np.isfinite(weights) | (weights < 0)
            if badw.any():
                raise InputError(
                    self.path, self.weight_column,
                    f"negative or non-finite weight in row(s) {_rows_text(rows[badw])}",
                    "weights must be finite and >= 0")
        return Chunk(rows, values, weights)


def _rows_text(rows: np.ndarray, limit: int = 10) -> str:
    shown = ", ".join(str(int(r)) for r in rows[:limit])
    more = f" and {len(rows) - limit} more" if len(rows) > limit else ""
    return f"{shown}{more} (0-based data rows)"


def _netcdf_frame(path: Path):
    """Flatten the ``posterior`` group of a NetCDF file to one row per (chain, draw)."""
    try:
        import xarray as xr
    except ImportError as err:
        raise InputError(path, None, "reading NetCDF needs the optional extra",
                         "pip install 'eftsieve[netcdf]'") from err
    try:
        ds = xr.open_dataset(path, group="posterior", engine="h5netcdf")
    except OSError:
        try:
            ds = xr.open_dataset(path, engine="h5netcdf")
        except (OSError, ValueError) as err:
            raise InputError(path, None, f"cannot read NetCDF: {err}",
                             "supply a NetCDF4 file with a 'posterior' group") from err
    with ds:
        frame = ds.to_dataframe().reset_index(drop=True)
    return frame
