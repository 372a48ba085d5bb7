"""The flagged writer gathers the rows of many blocks before formatting them: the file
is the same whatever the blocks, the row limit still holds, and the rows waiting at the
end are written when the file is committed (and dropped when it is aborted)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyarrow.csv as pcsv

from eftsieve.check.outputs import FlaggedRows, FlaggedWriter, concat_flagged
from tests.check.conftest import make_fit


def _rows(rng, start: int, n: int) -> FlaggedRows:
    rows = np.arange(start, start + n, dtype=np.int64)
    values = rng.normal(size=(n, 3))
    return FlaggedRows(rows, values, values[:, :2].copy(), rng.integers(1, 3, n).astype(np.int8),
                       -rng.random(n), rng.integers(0, 3, n).astype(np.int32))


def _write(path: Path, fit, region, blocks, limit=None) -> FlaggedWriter:
    w = FlaggedWriter(path, fit, region, "csv", limit=limit)
    for b in blocks:
        w.write_rows(b)
    w.commit()
    return w


def test_the_file_does_not_depend_on_the_blocks(tmp_path, region, rng):
    fit = make_fit(tmp_path / "unused.parquet")
    whole = _rows(rng, 0, 500_000)  # more than one batch of MAX_CELLS cells
    n = len(whole)
    pieces = [whole.slice(lo, min(lo + 7_919, n)) for lo in range(0, n, 7_919)]
    pieces.insert(3, whole.slice(0, 0))  # a block without flagged rows changes nothing
    a = _write(tmp_path / "a.csv", fit, region, [whole])
    b = _write(tmp_path / "b.csv", fit, region, pieces)
    assert a.n == b.n == len(whole)
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    table = pcsv.read_csv(tmp_path / "b.csv")
    np.testing.assert_array_equal(table["row"].to_numpy(), whole.rows)
    np.testing.assert_array_equal(table["min_margin"].to_numpy(), whole.min_margin)


def test_the_limit_holds_across_gathered_blocks(tmp_path, region, rng):
    fit = make_fit(tmp_path / "unused.parquet")
    blocks = [_rows(rng, 100 * i, 37) for i in range(10)]
    w = _write(tmp_path / "c.csv", fit, region, blocks, limit=100)
    assert w.n == 370 and w.written == 100
    rows = pcsv.read_csv(tmp_path / "c.csv")["row"].to_numpy()
    np.testing.assert_array_equal(rows, concat_flagged(blocks).rows[:100])


def test_abort_drops_the_waiting_rows_and_the_file(tmp_path, region, rng):
    fit = make_fit(tmp_path / "unused.parquet")
    w = FlaggedWriter(tmp_path / "d.csv", fit, region, "csv")
    w.write_rows(_rows(rng, 0, 10))
    assert w.n_pending == 10
    w.abort()
    assert not (tmp_path / "d.csv").exists()
    assert not list(tmp_path.glob(".flagged.*"))
