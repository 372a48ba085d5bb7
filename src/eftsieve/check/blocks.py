"""Reproducible arithmetic of a check: the same bits whoever computes it.

The canonical order of a check is: the partitions in order (the files of a samples
source in sorted order, or the one partition of a Gaussian summary's draws), and within
each partition fixed blocks of :data:`eftsieve.stats.accumulate.BLOCK` rows counted from
its first row (the last block may be short).  Every per-row and per-block quantity
depends only on the rows of its block, never on how the file was read (chunk sizes), on
which process computes it, or on how many BLAS threads that process runs:

- :func:`apply_map` evaluates an affine coordinate map column by column with numpy's
  element-wise operations.  A BLAS product ``x @ J.T`` is not used because its last bits
  depend on the batch size (numpy picks different kernels for one row and for many).
- :func:`eftsieve.stats.accumulate.block_sums` forms one block's weighted sums with
  numpy's pairwise reductions (no BLAS), and
  :meth:`eftsieve.stats.accumulate.Accumulator.absorb` adds blocks in canonical order:
  every engine sums exactly these blocks in exactly this order.
- :class:`Ranked` keeps the ``k`` smallest rows under the total order (key, row); the
  kept set is the same whatever the grouping of the rows, so per-partition selections
  merged on the client equal one selection over the whole stream.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.io.samples import Chunk
from eftsieve.stats.accumulate import BLOCK
from eftsieve.theories.base import CoordinateMap


def apply_map(cmap: CoordinateMap, x: np.ndarray) -> np.ndarray:
    """Region coordinates of fit points ``x`` (n, p), row by row reproducible.

    Affine maps are evaluated as ``sum_i x[:, i] * J[k, i] + c[k]`` with element-wise
    operations (zero coefficients skipped, and products by exactly 1.0, which change no
    bit, left out: the identity map costs one pass per column); nonlinear maps are
    called as they are.  The result is column-major (``order="F"``), so its columns are
    contiguous for :func:`eftsieve.check.verdicts.classify`.
    """
    if not cmap.is_affine or cmap.shift is None:
        return np.asarray(cmap(x), dtype=float)
    x = np.asarray(x, dtype=float)
    jac = cmap.jacobian
    if jac is None:  # is_affine says it is not; kept for the type checker
        return np.asarray(cmap(x), dtype=float)
    out = np.empty((len(x), jac.shape[0]), order="F")
    for k in range(jac.shape[0]):
        col = out[:, k]  # a contiguous view
        terms = [(i, float(jac[k, i])) for i in np.flatnonzero(jac[k] != 0)]
        if not terms:
            col[:] = cmap.shift[k]
            continue
        i0, c0 = terms[0]
        acc = x[:, i0] if c0 == 1.0 else np.multiply(x[:, i0], c0, out=col)
        for i, c in terms[1:]:
            acc = np.add(acc, x[:, i] if c == 1.0 else x[:, i] * c, out=col)
        np.add(acc, cmap.shift[k], out=col)
    return out


def iter_blocks(chunks: Iterable[Chunk], block: int = BLOCK) -> Iterator[Chunk]:
    """Regroup the chunks of one file into blocks of exactly ``block`` rows (the last
    one shorter), counted from the first row of the stream.

    A block inside one chunk is a view; only blocks that straddle chunks are copied.
    """
    pending: list[Chunk] = []
    n = 0
    for chunk in chunks:
        if not len(chunk.rows):
            continue
        pending.append(chunk)
        n += len(chunk.rows)
        while n >= block:
            head, pending = _take(pending, block)
            n -= block
            yield head
    if n:
        yield _join(pending)


def _take(chunks: list[Chunk], k: int) -> tuple[Chunk, list[Chunk]]:
    """The first ``k`` rows of ``chunks`` (which hold at least k) and the rest."""
    first = chunks[0]
    if len(first.rows) >= k:
        rest = _cut(first, k, len(first.rows))
        return _cut(first, 0, k), ([rest] if len(rest.rows) else []) + chunks[1:]
    parts, got, i = [], 0, 0
    while got < k:
        c = chunks[i]
        need = min(k - got, len(c.rows))
        parts.append(_cut(c, 0, need))
        got += need
        if need < len(c.rows):
            return _join(parts), [_cut(c, need, len(c.rows))] + chunks[i + 1:]
        i += 1
    return _join(parts), chunks[i:]


def _join(chunks: list[Chunk]) -> Chunk:
    if len(chunks) == 1:
        return chunks[0]
    w = None if chunks[0].weights is None else np.concatenate([c.weights for c in chunks])
    return Chunk(np.concatenate([c.rows for c in chunks]),
                 np.concatenate([c.values for c in chunks]), w, chunks[0].file)


def _cut(c: Chunk, lo: int, hi: int) -> Chunk:
    w = None if c.weights is None else c.weights[lo:hi]
    return Chunk(c.rows[lo:hi], c.values[lo:hi], w, c.file)


def sample_keys(seed: int, start: int) -> np.random.Generator:
    """The generator of the plot subsample's keys, positioned at global row ``start``.

    One uniform double per row, drawn in row order from ``default_rng(seed + 1)`` (the
    stream that :func:`eftsieve.check.run.run_check` uses); PCG64 advances exactly one
    step per double, so a partition can jump to its first row.
    """
    bits = np.random.PCG64(seed + 1)  # what default_rng(seed + 1) uses
    bits.advance(start)
    return np.random.Generator(bits)


@dataclass(frozen=True)
class Ranked:
    """Rows kept by smallest (key, row), with aligned payload arrays.

    Attributes
    ----------
    keys
        The ranking key of each row (a random number, or a margin).
    rows
        Global row indices (unique, so (key, row) is a total order).
    payload
        Arrays aligned with ``rows`` along their first axis (None entries stay None).
    """

    keys: np.ndarray
    rows: np.ndarray
    payload: tuple[np.ndarray | None, ...]

    def __len__(self) -> int:
        return len(self.rows)

    def to_dict(self) -> dict[str, Any]:
        return {"keys": self.keys.tolist(), "rows": self.rows.tolist(),
                "payload": [None if p is None else p.tolist() for p in self.payload]}

    def take(self, idx: np.ndarray) -> Ranked:
        """The rows at ``idx``, in that order."""
        return Ranked(self.keys[idx], self.rows[idx],
                      tuple(None if p is None else p[idx] for p in self.payload))

    def smallest(self, k: int) -> Ranked:
        """The ``k`` smallest rows by (key, row), in no particular order."""
        n = len(self.keys)
        if n <= k:
            return self
        if k <= 0:
            return self.take(np.zeros(0, dtype=np.int64))
        kth = np.partition(self.keys, k - 1)[k - 1]
        below = np.flatnonzero(self.keys < kth)
        tied = np.flatnonzero(self.keys == kth)
        tied = tied[np.argsort(self.rows[tied], kind="stable")][: k - len(below)]
        return self.take(np.concatenate([below, tied]))

    def merged(self, other: Ranked, k: int) -> Ranked:
        """The ``k`` smallest rows of both."""
        if not len(other):
            return self.smallest(k)
        if not len(self):
            return other.smallest(k)
        if len(self) >= k:  # rows after the current k-th cannot enter
            kth = self.keys.max()
            other = other.take(np.flatnonzero(other.keys <= kth))
        pay = tuple(None if a is None or b is None else np.concatenate([a, b])
                    for a, b in zip(self.payload, other.payload, strict=True))
        both = Ranked(np.concatenate([self.keys, other.keys]),
                      np.concatenate([self.rows, other.rows]), pay)
        return both.smallest(k)

    def ordered(self) -> Ranked:
        """The rows sorted by (key, row)."""
        return self.take(np.lexsort((self.rows, self.keys)))


class Selection:
    """The ``k`` smallest rows by (key, row) of a stream of :class:`Ranked` pieces.

    Pieces are filtered by the current cut-off (the largest key kept once ``k`` rows are
    held: no row above it can enter) and buffered; the buffer is merged only when it
    holds ``k`` rows, so each block costs O(its candidates), not O(k).  The result is
    :meth:`Ranked.merged` of every piece, whatever the grouping.
    """

    def __init__(self, empty: Ranked, k: int) -> None:
        self.kept, self.k = empty, k
        self.pending: list[Ranked] = []
        self.n_pending = 0

    @property
    def cutoff(self) -> float:
        """Keys above this cannot enter (inf until ``k`` rows are held)."""
        if self.k <= 0:
            return -np.inf
        return float(self.kept.keys.max()) if len(self.kept) >= self.k else np.inf

    def add(self, piece: Ranked) -> None:
        """Offer a piece (rows after every row offered before)."""
        if not len(piece):
            return
        cut = self.cutoff
        if cut < np.inf:
            piece = piece.take(np.flatnonzero(piece.keys <= cut))
        if not len(piece):
            return
        self.pending.append(piece)
        self.n_pending += len(piece)
        if self.n_pending >= max(self.k, 1):
            self.flush()

    def flush(self) -> None:
        if self.pending:
            self.kept = concat([self.kept, *self.pending]).smallest(self.k)
        self.pending, self.n_pending = [], 0

    def result(self) -> Ranked:
        """The ``k`` smallest rows of everything offered."""
        self.flush()
        return self.kept.smallest(self.k)


def concat(pieces: list[Ranked]) -> Ranked:
    """The rows of every piece, one after another."""
    pay = tuple(None if any(p.payload[i] is None for p in pieces) else
                np.concatenate([p.payload[i] for p in pieces])
                for i in range(len(pieces[0].payload)))
    return Ranked(np.concatenate([p.keys for p in pieces]),
                  np.concatenate([p.rows for p in pieces]), pay)


def empty_ranked(widths: tuple[int | None, ...], dtypes: tuple[Any, ...]) -> Ranked:
    """An empty :class:`Ranked`; ``widths[i]`` is the payload's second axis (None: 1-D,
    and dtype None: a None payload entry)."""
    pay = tuple(None if dt is None else (np.empty((0, w), dtype=dt) if w else
                                          np.empty(0, dtype=dt))
                for w, dt in zip(widths, dtypes, strict=True))
    return Ranked(np.empty(0), np.empty(0, dtype=np.int64), pay)
