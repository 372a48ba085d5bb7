"""Chunked readers for posterior-samples files (CSV, Parquet; NetCDF posterior groups,
emcee HDF5 backends and NumPy arrays through :mod:`eftsieve.io.readers`).

A :class:`SamplesSource` never holds a whole large file in memory: ``iter_chunks``
yields bounded blocks with the original row index, the parameter values in the
requested column order and the weights.  Every row read is validated (finite values,
non-negative weights) and the error quotes the offending row numbers.

A source may also span several Parquet files: its path is then a directory (every
``.parquet``/``.pq`` file in it) or a glob pattern (``posterior/part-*.parquet``).  The
files are taken in sorted order of their paths (for one directory: by file name) and
streamed one at a time; row indices are global (file order, then row order within the
file), every chunk comes from a single file and records it in :attr:`Chunk.file`, and
:meth:`SamplesSource.file_parts` gives each file's first global row and row count (from
the Parquet metadata, without reading the data).
"""

from __future__ import annotations

import glob
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import EftsieveError, InputError
from eftsieve.io.readers import dispatch
from eftsieve.io.readers.columns import ColumnTable
from eftsieve.io.readers.options import ReadOptions

SUPPORTED_FORMATS = {".csv": "csv", ".parquet": "parquet", ".pq": "parquet", ".nc": "netcdf",
                     ".netcdf": "netcdf"}
DECLARED_FORMATS = ("csv", "parquet", *dispatch.SAMPLES_FORMATS)
PARQUET_SUFFIXES = (".parquet", ".pq")
GLOB_CHARS = frozenset("*?[")
DEFAULT_CHUNK_ROWS = 1_000_000
#: cells (rows x columns) of one CSV chunk at most: bounds the memory of wide files
CSV_CELLS_PER_CHUNK = 1 << 24
#: the largest finite double (a weight above it is infinite)
MAX_FLOAT = float(np.finfo(np.float64).max)


@dataclass(frozen=True)
class Chunk:
    """One block of samples.

    Attributes
    ----------
    rows
        Original 0-based row indices, shape (n,); global across the files of a
        multi-file source.
    values
        Parameter values, shape (n, p), columns in the order of the fit's parameters.
    weights
        Weights, shape (n,), or None for unweighted samples.
    file
        The file the rows were read from, or None (drawn samples, or rows from several
        files joined by :meth:`SamplesSource.read_all`).
    """

    rows: np.ndarray
    values: np.ndarray
    weights: np.ndarray | None
    file: str | None = None


@dataclass(frozen=True)
class FilePart:
    """One file of a samples source and its place in the global row order.

    Attributes
    ----------
    index
        Position of the file in the source's sorted file list (0-based).
    path
        The file.
    start
        Global row index of the file's first row.
    n_rows
        Rows in the file from its metadata, or None when the format does not say
        without reading (CSV, NetCDF); then ``start`` is only known for the first file.
    """

    index: int
    path: Path
    start: int
    n_rows: int | None

    @property
    def name(self) -> str:
        """The file name, as used in messages."""
        return self.path.name

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "path": str(self.path), "start": self.start,
                "n_rows": self.n_rows}


def detect_format(path: Path, declared: str | None, field: str = "samples.format") -> str:
    """The file format, from the declared name or the extension.

    A directory or a glob pattern (a multi-file source) is always ``parquet``.
    """
    if is_multi_file_path(path):
        if declared is not None and declared.lower() != "parquet":
            raise InputError(path, field, f"a directory or glob of files must be Parquet, "
                             f"not '{declared}'", "convert the files to Parquet")
        return "parquet"
    if declared is not None:
        fmt = declared.lower()
        if fmt not in DECLARED_FORMATS:
            raise InputError(path, field, f"unsupported format '{declared}'",
                             f"use one of {', '.join(DECLARED_FORMATS)}")
        return fmt
    fmt_opt = SUPPORTED_FORMATS.get(path.suffix.lower()) or dispatch.format_from_suffix(path)
    if fmt_opt is None:
        raise InputError(path, field, f"unsupported file extension '{path.suffix}'",
                         "use .csv, .parquet, .nc, .h5, .npy or .npz, or state "
                         "samples.format")
    return fmt_opt


def is_multi_file_path(path: str | Path) -> bool:
    """True for a directory or a glob pattern (a multi-file source).

    An existing file whose name happens to hold ``*?[`` is a single file, not a pattern.
    """
    p = Path(path)
    return p.is_dir() or (not p.is_file() and any(c in GLOB_CHARS for c in str(p)))


def resolve_files(path: str | Path) -> tuple[Path, ...]:
    """The files of a source path: itself, the Parquet files of a directory, or the
    matches of a glob pattern, in sorted order of their paths.

    Raises
    ------
    InputError
        When nothing matches, or a match is not a Parquet file.
    """
    p = Path(path)
    if p.is_dir():
        files = sorted((f for f in p.iterdir()
                        if f.is_file() and f.suffix.lower() in PARQUET_SUFFIXES), key=str)
        if not files:
            raise InputError(p, "samples.path", "the directory holds no .parquet or .pq file",
                             "point at a directory of Parquet files, or at one file")
        return tuple(files)
    if is_multi_file_path(p):
        files = sorted((Path(f) for f in glob.glob(str(p))), key=str)
        files = [f for f in files if f.is_file()]
        if not files:
            raise InputError(p, "samples.path", "the pattern matches no file",
                             "check the pattern; it is relative to the card")
        odd = [f.name for f in files if f.suffix.lower() not in PARQUET_SUFFIXES]
        if odd:
            raise InputError(p, "samples.path", f"the pattern matches non-Parquet file(s) "
                             f"{odd[:5]}", "a multi-file source must be Parquet files only")
        return tuple(files)
    return (p,)


@dataclass(frozen=True)
class SamplesSource:
    """A samples file (or several Parquet files) with a mapping from parameter names to
    its columns.

    Attributes
    ----------
    path
        The file, or a directory or glob pattern of Parquet files.
    fmt
        ``csv``, ``parquet``, ``netcdf``, ``npy``, ``npz`` or ``emcee``.
    columns
        The file's column for each parameter, in parameter order.
    weight_column
        The weight column, or None.
    options
        Burn-in, thinning and walker selection of chain files (emcee, NetCDF).
    """

    path: Path
    fmt: str
    columns: tuple[str, ...]
    weight_column: str | None = None
    options: ReadOptions | None = None

    @property
    def weighted(self) -> bool:
        """True when the rows carry weights."""
        return self.weight_column is not None

    @property
    def is_multi_file(self) -> bool:
        """True when the path is a directory or a glob pattern."""
        return is_multi_file_path(self.path)

    def files(self) -> tuple[Path, ...]:
        """The files in reading order (one for a single-file source)."""
        return resolve_files(self.path)

    def file_parts(self) -> tuple[FilePart, ...]:
        """Each file with its first global row and row count (Parquet metadata only)."""
        parts: list[FilePart] = []
        start: int | None = 0
        for i, f in enumerate(self.files()):
            n = _parquet_rows(f) if self.fmt == "parquet" else None
            if start is None:
                raise InputError(f, None, "row offsets of later files are unknown",
                                 "only Parquet sources can span several files")
            parts.append(FilePart(i, f, start, n))
            start = None if n is None else start + n
        return tuple(parts)

    def available_columns(self, file: Path | None = None) -> list[str]:
        """The column names that the file (default: the first file) holds."""
        f = self.files()[0] if file is None else file
        with read_errors(f, self.fmt):
            names = self._columns_of(f)
        check_width(f, names)
        return names

    def _columns_of(self, f: Path) -> list[str]:
        if self.fmt in dispatch.SAMPLES_FORMATS:
            return dispatch.available(self.fmt, f, self.options)
        if self.fmt == "csv":
            return csv_header(f)
        if self.fmt == "parquet":
            import pyarrow.parquet as pq

            return list(pq.ParquetFile(f).schema_arrow.names)
        raise InputError(f, "samples.format", f"unknown format '{self.fmt}'",  # pragma: no cover
                         "see docs/formats.md")

    def column_table(self, file: Path | None = None) -> ColumnTable:
        """The columns of the file (default: the first file), with aliases."""
        f = self.files()[0] if file is None else file
        if self.fmt in dispatch.SAMPLES_FORMATS:
            with read_errors(f, self.fmt):
                table = dispatch.column_table(self.fmt, f, self.options)
            check_width(f, list(table.labels))
            return table
        return ColumnTable(tuple(self.available_columns(f)))

    def validate_columns(self) -> None:
        """Check that every mapped column exists in every file; name the missing ones."""
        wanted = list(self.columns) + ([self.weight_column] if self.weight_column else [])
        for f in self.files():
            have = self.available_columns(f)
            missing = [c for c in wanted if c not in have]
            if missing:
                raise InputError(f, "columns", f"missing column(s) {missing}",
                                 f"the file has {have}; fix samples.columns or the file")

    def iter_chunks(self, chunk_rows: int = DEFAULT_CHUNK_ROWS) -> Iterator[Chunk]:
        """Yield validated chunks in file order with their global row indices.

        Every chunk comes from one file; a file whose rows differ from its metadata
        stops the run with an error naming it.
        """
        start = 0
        for part in self.file_parts():
            if part.start != start:  # pragma: no cover - file_parts builds them so
                raise InputError(part.path, None, "file row offsets are inconsistent", "")
            for chunk in self.iter_part(part, chunk_rows):
                start += len(chunk.rows)
                yield chunk

    def iter_part(self, part: FilePart, chunk_rows: int = DEFAULT_CHUNK_ROWS
                  ) -> Iterator[Chunk]:
        """Yield the validated chunks of one file, rows numbered from ``part.start``."""
        start = part.start
        for frame in _guarded(self._iter_frames(chunk_rows, part.path), part.path, self.fmt):
            chunk = self._to_chunk(frame, start, part)
            start += len(chunk.rows)
            yield chunk
        read = start - part.start
        if part.n_rows is not None and read != part.n_rows:
            raise InputError(part.path, None, f"read {read} rows but the file metadata "
                             f"states {part.n_rows}", "the file changed while being read or "
                             "is damaged; rewrite it")

    def read_all(self) -> Chunk:
        """Read the whole source into one chunk (for modest files)."""
        chunks = list(self.iter_chunks())
        if not chunks:
            raise InputError(self.path, None, "the samples file holds no rows",
                             "supply at least one sample")
        w = None if chunks[0].weights is None else np.concatenate([c.weights for c in chunks])
        files = {c.file for c in chunks}
        return Chunk(np.concatenate([c.rows for c in chunks]),
                     np.concatenate([c.values for c in chunks]), w,
                     files.pop() if len(files) == 1 else None)

    def _iter_frames(self, chunk_rows: int, file: Path) -> Iterator:
        wanted = list(dict.fromkeys(list(self.columns) + (
            [self.weight_column] if self.weight_column else [])))
        if self.fmt == "csv":
            import pandas as pd

            # every column is parsed, so that a row with an extra field is an error (with
            # usecols pandas would drop it silently); wide files get shorter chunks
            width = max(1, len(csv_header(file)))
            rows = min(chunk_rows, max(1024, CSV_CELLS_PER_CHUNK // width))
            with pd.read_csv(file, chunksize=rows, encoding="utf-8") as reader:
                for frame in reader:
                    yield frame[wanted]
        elif self.fmt == "parquet":
            import pyarrow.parquet as pq

            # no pre-buffering: pyarrow would otherwise hold the whole file in memory
            pf = pq.ParquetFile(file, pre_buffer=False, buffer_size=1 << 20)
            for batch in pf.iter_batches(batch_size=chunk_rows, columns=wanted,
                                         use_threads=False):
                yield BatchFrame(batch)
        else:
            yield from dispatch.iter_frames(self.fmt, file, wanted, chunk_rows, self.options)

    def _to_chunk(self, frame, start: int, part: FilePart) -> Chunk:
        n = len(frame)
        rows = np.arange(start, start + n, dtype=np.int64)
        where = part.path if self.is_multi_file else self.path
        first = part.start if self.is_multi_file else None
        try:
            values = frame[list(self.columns)].to_numpy(dtype=float)
        except (ValueError, TypeError) as err:
            raise InputError(where, "columns", f"non-numeric values in rows {start}.."
                             f"{start + n - 1}: {err}", "samples must be numbers") from err
        from eftsieve.io import limits

        if not in_range(values, -limits.MAX_ABS_VALUE, limits.MAX_ABS_VALUE):
            bad = ~np.isfinite(values).all(axis=1)
            if bad.any():
                raise InputError(where, "samples",
                                 f"NaN or inf in row(s) {_rows_text(rows[bad], first)}",
                                 "remove or repair those rows; nothing is repaired silently")
            huge = (np.abs(values) > limits.MAX_ABS_VALUE).any(axis=1)
            if huge.any():  # always true here: in_range failed on a finite value
                raise InputError(where, "samples", f"values outside the supported range "
                                 f"|x| <= {limits.MAX_ABS_VALUE:g} in row(s) "
                                 f"{_rows_text(rows[huge], first)}",
                                 "rescale the parameter or remove those rows")
        weights = None
        if self.weight_column:
            weights = frame[self.weight_column].to_numpy(dtype=float)
            badw = None if in_range(weights[:, None], 0.0, MAX_FLOAT) else (
                ~np.isfinite(weights) | (weights < 0))
            if badw is not None and badw.any():
                raise InputError(
                    where, self.weight_column,
                    f"negative or non-finite weight in row(s) {_rows_text(rows[badw], first)}",
                    "weights must be finite and >= 0")
        return Chunk(rows, values, weights, str(part.path))


class BatchFrame:
    """An Arrow record batch with the two frame operations the reader uses (columns by
    name or list, ``to_numpy(dtype=float)``), so Parquet rows reach numpy without a
    pandas frame (about 40% of the read time, and pandas' import, saved)."""

    def __init__(self, batch: Any, column: bool = False) -> None:
        self.batch, self.column = batch, column

    def __len__(self) -> int:
        return int(self.batch.num_rows)

    def __getitem__(self, key: Any) -> BatchFrame:
        if isinstance(key, list):
            return BatchFrame(self.batch.select(key))
        return BatchFrame(self.batch.select([key]), column=True)

    def to_numpy(self, dtype: Any = float) -> np.ndarray:
        """The columns as one array, column-major (``order="F"``): every column is one
        contiguous copy of the Arrow buffer, and the check reads the rows column by column
        (:func:`eftsieve.check.blocks.apply_map`, :func:`eftsieve.check.verdicts.classify`)
        without copying them again.  One column: a fresh 1-D array."""
        cols = [arrow_column_numpy(c) for c in self.batch.columns]
        if self.column:
            return cols[0].astype(dtype)
        out = np.empty((len(self), len(cols)), dtype=dtype, order="F")
        for i, c in enumerate(cols):
            out[:, i] = c
        return out


def arrow_column_numpy(col: Any) -> np.ndarray:
    """A numeric Arrow array as numpy.  Plain (null-free) numeric columns are read straight
    from their buffer: ``Array.to_numpy`` imports pandas on first use (about 0.4 s of a
    small check's start-up; issue 18).  Anything else goes through ``to_numpy``."""
    import pyarrow as pa

    if isinstance(col, pa.ChunkedArray):
        col = col.combine_chunks()
    t = col.type
    if col.null_count == 0 and (pa.types.is_floating(t) or pa.types.is_integer(t)) \
            and not pa.types.is_float16(t):
        kind = "f" if pa.types.is_floating(t) else "i" if pa.types.is_signed_integer(t) else "u"
        dtype = np.dtype(f"{kind}{t.bit_width // 8}")
        return np.frombuffer(col.buffers()[1], dtype=dtype, count=len(col),
                             offset=col.offset * dtype.itemsize)
    return np.asarray(col.to_numpy(zero_copy_only=False))


def in_range(values: np.ndarray, lo: float, hi: float) -> bool:
    """True when every value of ``values`` (n, p) lies in [lo, hi] (NaN never does).

    Two reductions per column and no temporary arrays: the cheap test of every row read;
    the rows that fail are found only when it fails.  ``min`` and ``max`` propagate NaN,
    and a NaN compares false.
    """
    if values.size == 0:
        return True
    for k in range(values.shape[1]):
        col = values[:, k]
        if not (lo <= col.min() and col.max() <= hi):
            return False
    return True


@contextmanager
def read_errors(path: Path, fmt: str) -> Iterator[None]:
    """Turn a reader library's error on ``path`` into an InputError naming the file."""
    try:
        yield
    except EftsieveError:
        raise
    except UnicodeDecodeError as err:
        raise InputError(path, None, f"the {fmt} file is not UTF-8 text (byte "
                         f"0x{err.object[err.start]:02x} at offset {err.start})",
                         "save it as UTF-8") from err
    except MemoryError as err:
        raise InputError(path, None, f"the {fmt} file is too large to read",
                         "split it into Parquet parts") from err
    except (OSError, ValueError, TypeError, KeyError, IndexError, EOFError) as err:
        raise InputError(path, None, f"cannot read the file as {fmt}: "
                         f"{type(err).__name__}: {_short(err)}",
                         f"check that it is a complete {fmt} file") from err
    except Exception as err:  # pyarrow's and h5py's own error classes
        if type(err).__module__.split(".")[0] in ("pyarrow", "h5py", "pandas", "xarray",
                                                  "netCDF4", "h5netcdf"):
            raise InputError(path, None, f"cannot read the file as {fmt}: "
                             f"{type(err).__name__}: {_short(err)}",
                             f"check that it is a complete {fmt} file") from err
        raise


def _short(err: BaseException, limit: int = 200) -> str:
    text = " ".join(str(err).split())
    return text if len(text) <= limit else text[:limit] + "..."


def _guarded(frames: Iterator[Any], path: Path, fmt: str) -> Iterator[Any]:
    """The frames of a reader, its errors turned into InputErrors naming ``path``."""
    it = iter(frames)
    try:
        while True:
            with read_errors(path, fmt):
                try:
                    frame = next(it)
                except StopIteration:
                    return
            yield frame
    finally:  # a caller that stops early (an error in a later chunk) closes the reader
        close = getattr(it, "close", None)
        if close is not None:
            close()


def check_width(path: Path, names: list[str]) -> None:
    """Refuse absurd widths and duplicate column names."""
    from eftsieve.io import limits

    if len(names) > limits.MAX_COLUMNS:
        raise InputError(path, None, f"the file has {len(names)} columns (the cap is "
                         f"{limits.MAX_COLUMNS})", "keep only the parameter columns")
    seen: set[str] = set()
    for n in names:
        if n in seen:
            raise InputError(path, None, f"duplicate column '{n}'",
                             "give every column a distinct name")
        seen.add(n)


def csv_header(path: Path) -> list[str]:
    """The column names of a CSV file, read from its first line only (capped)."""
    import csv

    from eftsieve.io import limits
    from eftsieve.io.textfile import decode_utf8

    with open(path, "rb") as fh:
        raw = fh.readline(limits.MAX_HEADER_BYTES + 1)
    if not raw:
        raise InputError(path, None, "the file is empty (no header line)",
                         "write a header line of column names and the samples")
    if len(raw) > limits.MAX_HEADER_BYTES:
        raise InputError(path, None, f"the header line is over {limits.MAX_HEADER_BYTES} "
                         "bytes (too many columns)", "keep only the parameter columns")

    def make(p: Path, problem: str, hint: str) -> InputError:
        return InputError(p, None, problem, hint)
    text = decode_utf8(raw, path, make)
    line = text.rstrip("\r\n")
    if any(ord(c) < 32 and c != "\t" for c in line):
        raise InputError(path, None, "the header line holds control bytes: not a text CSV "
                         "file", "give a CSV file (UTF-8 text, a header line of names)")
    names = next(csv.reader([line]), [])
    if not names or all(not n.strip() for n in names):
        raise InputError(path, None, "the header line is empty",
                         "write a header line of column names")
    return [n.strip() for n in names]


def _parquet_rows(path: Path) -> int:
    """Rows of a Parquet file, from its metadata."""
    import pyarrow.parquet as pq

    try:
        return int(pq.ParquetFile(path).metadata.num_rows)
    except Exception as err:  # pyarrow's errors: ArrowInvalid, OSError, ...
        raise InputError(path, None, f"cannot read Parquet metadata: {err}",
                         "supply a valid Parquet file") from err


def _rows_text(rows: np.ndarray, file_start: int | None = None, limit: int = 10) -> str:
    shown = ", ".join(str(int(r)) for r in rows[:limit])
    more = f" and {len(rows) - limit} more" if len(rows) > limit else ""
    if file_start is None:
        return f"{shown}{more} (0-based data rows)"
    return (f"{shown}{more} (0-based data rows, global across the sorted files; this file "
            f"starts at global row {file_start})")
