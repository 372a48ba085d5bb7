"""The flagged rows (not inside) of a check, written atomically as CSV or Parquet.

:class:`FlaggedWriter` turns every block's flagged rows (:class:`FlaggedRows`) into an
Arrow table and writes it with pyarrow's CSV writer (``flagged.csv``) or Parquet writer
(``flagged.parquet``), into a temporary file beside the target that
:meth:`FlaggedWriter.commit` moves into place; :func:`flagged_output` does that around a
block of work and removes the temporary file when the block raises.

Columns: the row, its verdict, the fit's values, the region coordinates (``c (region)``;
left out when they are the fit's own columns unchanged, see :func:`same_coordinates`),
the smallest margin and the worst facet (index, family, channel, point).  The margin to every facet
(``margin_0`` ...) is opt-in (``margins=True``, ``eftsieve check --flagged-margins``): it
is recomputed exactly from the coordinates and region.json, and on a many-facet region
it multiplies the file's size and writing time by the facet count (68 facets: 78 instead
of 11 columns, about 25x slower to write as CSV; benchmarks/bench_stream.py).

Speed and memory: the writer formats whole columns in Arrow's C++ code (no per-cell
Python).  It gathers the flagged rows of consecutive blocks until :data:`MAX_CELLS` cells
wait (a mostly-inside check flags a few rows per block, and one small table per block
cost more than classifying the block) and formats at most that many cells at a time,
whatever the number of facets (the per-facet margins are made slice by slice), so the
memory of the flagged output stays bounded for any facet count and outside fraction.

Exactness: doubles are written in their shortest round-trip form, so every value reads
back to the same bits (``pyarrow.csv.read_csv``, ``float()``); the per-facet margins are
evaluated element-wise (no BLAS product, whose last bits depend on the batch and on the
thread count), so the file has the same bytes in every engine.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.check.verdicts import VERDICT_NAMES
from eftsieve.errors import InputError
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region

#: the formats of the flagged rows, and their file names
FLAGGED_FORMATS = {"csv": "flagged.csv", "parquet": "flagged.parquet"}
#: at most this many cells (rows x columns) of flagged output are formatted at once
MAX_CELLS = 1 << 21


@dataclass(frozen=True)
class FlaggedRows:
    """The flagged (marginal, outside or uncertain) rows of one block.

    Attributes
    ----------
    rows, values, y
        Global rows, fit values and region coordinates.
    verdict, min_margin, worst
        Verdicts, smallest margins and most violated facets of those rows.
    """

    rows: np.ndarray
    values: np.ndarray
    y: np.ndarray
    verdict: np.ndarray
    min_margin: np.ndarray
    worst: np.ndarray

    def __len__(self) -> int:
        return len(self.rows)

    def to_dict(self) -> dict[str, Any]:
        return {"rows": self.rows.tolist(), "verdict": self.verdict.tolist()}

    def slice(self, lo: int, hi: int) -> FlaggedRows:
        """Rows ``lo:hi``."""
        return FlaggedRows(self.rows[lo:hi], self.values[lo:hi], self.y[lo:hi],
                           self.verdict[lo:hi], self.min_margin[lo:hi], self.worst[lo:hi])


def concat_flagged(parts: list[FlaggedRows]) -> FlaggedRows:
    """The rows of several blocks, one after another."""
    return FlaggedRows(*(np.concatenate([getattr(p, name) for p in parts])
                         for name in ("rows", "values", "y", "verdict", "min_margin", "worst")))


def same_coordinates(cmap: Any, fit: Fit, region: Region) -> bool:
    """True when the region's coordinates are the fit's columns unchanged (same names, the
    identity map): the flagged output then does not repeat them as ``c (region)``."""
    jac, shift = getattr(cmap, "jacobian", None), getattr(cmap, "shift", None)
    return (tuple(region.coordinates) == tuple(fit.names) and jac is not None
            and jac.shape[0] == jac.shape[1] and bool(np.array_equal(jac, np.eye(len(jac))))
            and (shift is None or not np.any(shift)))


def flagged_columns(fit: Fit, region: Region, margins: bool = False,
                    coordinates: bool = True) -> list[str]:
    """The column names of the flagged output (``margin_<j>`` per facet with ``margins``;
    the region coordinates with ``coordinates``)."""
    per_facet = [f"margin_{i}" for i in range(len(region.facets))] if margins else []
    coords = [f"{c} (region)" for c in region.coordinates] if coordinates else []
    return ["row", "verdict", *fit.names, *coords, "min_margin", *per_facet,
            "worst_facet", "family", "channel", "point"]


def elementwise_margins(y: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``y @ a.T - b`` evaluated column by column with element-wise operations (the same
    bits for any batch of rows and any BLAS)."""
    out = np.empty((len(y), len(b)))
    for j in range(len(b)):
        col = y[:, 0] * a[j, 0]
        for k in range(1, y.shape[1]):
            col += y[:, k] * a[j, k]
        out[:, j] = col - b[j]
    return out


def arrow_numbers(a: np.ndarray) -> Any:
    """A numeric Arrow array over a numpy array's buffer.  Unlike ``pyarrow.array`` it
    does not import pandas (about 0.4 s of a small check's start-up; issue 18)."""
    import pyarrow as pa

    a = np.ascontiguousarray(a)
    return pa.Array.from_buffers(pa.from_numpy_dtype(a.dtype), len(a), [None, pa.py_buffer(a)])


def arrow_strings(items: list[str]) -> Any:
    """An Arrow string array built from its offsets and bytes (no pandas import)."""
    import pyarrow as pa

    data = [str(x).encode("utf-8") for x in items]
    offsets = np.zeros(len(data) + 1, dtype=np.int32)
    offsets[1:] = np.cumsum([len(d) for d in data])
    return pa.Array.from_buffers(pa.string(), len(data),
                                 [None, pa.py_buffer(offsets), pa.py_buffer(b"".join(data))])


class FlaggedWriter:
    """Writes flagged rows to a temporary CSV or Parquet file, moved into place by
    :meth:`commit`.

    Parameters
    ----------
    path
        The target file.
    fit, region
        What is checked (column names, facets).
    fmt
        ``csv`` or ``parquet``.
    margins
        Also write the margin to every facet (``margin_<j>``).
    coordinates
        Write the region coordinates (False when they equal the fit's columns).
    limit
        Write at most this many rows, the first in row order (None: all).  ``n`` still
        counts every flagged row offered, ``written`` those in the file.
    """

    def __init__(self, path: Path, fit: Fit, region: Region, fmt: str = "csv",
                 margins: bool = False, coordinates: bool = True,
                 limit: int | None = None) -> None:
        import pyarrow as pa

        if fmt not in FLAGGED_FORMATS:
            raise InputError(None, "--flagged-format", f"unknown format '{fmt}'",
                             f"use one of {', '.join(FLAGGED_FORMATS)}")
        self.path, self.fmt, self.region = path, fmt, region
        self.columns = flagged_columns(fit, region, margins, coordinates)
        self.margins, self.coordinates, self.limit = margins, coordinates, limit
        self.written = 0
        self.a, self.b = region.arrays()
        self.n_values = len(fit.names)
        facets = region.facets
        self.text = [arrow_strings([f.family for f in facets]),
                     arrow_strings([f.channel for f in facets]),
                     arrow_strings([";".join(f"{a}={v:.6g}" for a, v in f.point.items())
                                    for f in facets])]
        self.verdicts = arrow_strings(list(VERDICT_NAMES))
        types = ([pa.int64(), pa.dictionary(pa.int8(), pa.string())]
                 + [pa.float64()] * (len(self.columns) - 6)
                 + [pa.int32()] + [pa.dictionary(pa.int32(), pa.string())] * 3)
        self.schema = pa.schema(list(zip(self.columns, types, strict=True)))
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, self.tmp = tempfile.mkstemp(prefix=".flagged.", suffix=f".{fmt}", dir=path.parent)
        self.fh = open(fd, "wb")  # noqa: SIM115 - closed by commit or abort
        self.sink = self._open_sink()
        self.n = 0
        self.pending: list[FlaggedRows] = []
        self.n_pending = 0

    def _open_sink(self) -> Any:
        if self.fmt == "csv":
            import pyarrow.csv as pcsv

            return pcsv.CSVWriter(self.fh, self.schema,
                                  write_options=pcsv.WriteOptions(quoting_style="needed"))
        import pyarrow.parquet as pq

        # dictionary encoding only for the text columns: on the float columns it costs
        # about 7x the rest of the write (measured with pyarrow 26) and saves nothing on
        # noise-like doubles
        return pq.ParquetWriter(self.fh, self.schema, compression="snappy",
                                use_dictionary=["verdict", "family", "channel", "point"])

    @property
    def step(self) -> int:
        """Rows formatted at once: :data:`MAX_CELLS` cells."""
        return max(1, MAX_CELLS // len(self.columns))

    def write_rows(self, f: FlaggedRows) -> None:
        """Append one block's flagged rows (blocks in row order).

        Rows are gathered until :attr:`step` rows (:data:`MAX_CELLS` cells) are waiting and
        then formatted together: a mostly-inside check flags a few rows per block, and
        one Arrow table per block cost more than the classification of the block
        (issue 18).  The file holds the same rows whatever the blocks; both engines call
        this with the same blocks, so their files have the same bytes.
        """
        room = len(f) if self.limit is None else max(0, min(len(f), self.limit - self.written))
        if room:
            self.pending.append(f if room == len(f) else f.slice(0, room))
            self.n_pending += room
        self.n += len(f)
        self.written += room
        if self.n_pending >= self.step:
            self.flush()

    def flush(self) -> None:
        """Format and write the waiting rows, :attr:`step` rows at a time."""
        if not self.pending:
            return
        rows = self.pending[0] if len(self.pending) == 1 else concat_flagged(self.pending)
        self.pending, self.n_pending = [], 0
        for lo in range(0, len(rows), self.step):
            self.sink.write_table(self._table(rows.slice(lo, min(lo + self.step, len(rows)))))

    def _table(self, f: FlaggedRows) -> Any:
        import pyarrow as pa

        w = arrow_numbers(f.worst.astype(np.int32))
        cols = [arrow_numbers(f.rows.astype(np.int64)),
                pa.DictionaryArray.from_arrays(arrow_numbers(f.verdict.astype(np.int8)),
                                               self.verdicts)]
        cols += [arrow_numbers(f.values[:, i]) for i in range(f.values.shape[1])]
        if self.coordinates:
            cols += [arrow_numbers(f.y[:, i]) for i in range(f.y.shape[1])]
        cols.append(arrow_numbers(f.min_margin))
        if self.margins:
            margins = elementwise_margins(f.y, self.a, self.b)
            cols += [arrow_numbers(margins[:, j]) for j in range(margins.shape[1])]
        cols.append(w)
        cols += [pa.DictionaryArray.from_arrays(w, t) for t in self.text]
        return pa.Table.from_arrays(cols, schema=self.schema)

    def commit(self) -> None:
        self.flush()
        self.sink.close()
        self.fh.flush()
        os.fsync(self.fh.fileno())
        self.fh.close()
        from eftsieve.io.atomic import umask_mode

        os.chmod(self.tmp, umask_mode())
        os.replace(self.tmp, self.path)

    def abort(self) -> None:
        self.pending, self.n_pending = [], 0
        if not self.fh.closed:
            try:
                self.sink.close()
            except OSError:
                pass
            self.fh.close()
        Path(self.tmp).unlink(missing_ok=True)


@contextmanager
def flagged_output(outdir: Path | None, fit: Fit, region: Region, fmt: str = "csv",
                   margins: bool = False, cmap: Any = None, limit: int | None = None
                   ) -> Iterator[FlaggedWriter | None]:
    """A FlaggedWriter for ``outdir/flagged.csv`` (or ``flagged.parquet``; None without an
    outdir): moved into place when the block succeeds, removed when it raises, so the
    file is never half-written."""
    if outdir is None:
        yield None
        return
    writer = FlaggedWriter(outdir / FLAGGED_FORMATS.get(fmt, "flagged.csv"), fit, region, fmt,
                           margins, not same_coordinates(cmap, fit, region), limit)
    try:
        yield writer
    except BaseException:
        writer.abort()
        raise
    writer.commit()
