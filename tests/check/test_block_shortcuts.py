"""Block arithmetic: shortcuts that must keep the exact bits of the general path."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.check.blocks import Ranked, Selection, empty_ranked, iter_blocks
from eftsieve.io.samples import Chunk
from eftsieve.stats.accumulate import block_sums


@pytest.mark.parametrize("n", [1, 255, 1000, 65536])
def test_unweighted_block_sums_equal_the_weighted_path_with_unit_weights(n):
    rng = np.random.default_rng(n)
    y = rng.normal(size=(n, 3))
    verdict = rng.integers(0, 3, n).astype(np.int8)
    sat = rng.random(n) < 0.6
    fast, ref = block_sums(y, None, verdict, sat).to_dict(), block_sums(
        y, np.ones(n), verdict, sat).to_dict()
    assert fast == ref


def test_selection_keeps_the_k_smallest_of_the_whole_stream():
    rng = np.random.default_rng(3)
    keys = rng.integers(0, 50, 20_000).astype(float)  # many ties: (key, row) decides
    rows = np.arange(20_000)
    pay = rng.normal(size=(20_000, 2))
    sel = Selection(empty_ranked((2,), (float,)), 700)
    for lo in range(0, 20_000, 1_234):
        sel.add(Ranked(keys[lo:lo + 1_234], rows[lo:lo + 1_234], (pay[lo:lo + 1_234],)))
    got = sel.result().ordered()
    want = np.lexsort((rows, keys))[:700]
    np.testing.assert_array_equal(got.rows, rows[want])
    np.testing.assert_array_equal(got.payload[0], pay[want])


def test_blocks_do_not_depend_on_chunking():
    rng = np.random.default_rng(5)
    values = rng.normal(size=(10_000, 2))

    def chunks(sizes):
        lo = 0
        for s in sizes:
            yield Chunk(np.arange(lo, lo + s), values[lo:lo + s], None)
            lo += s

    a = [b.rows.copy() for b in iter_blocks(chunks([10_000]), block=1024)]
    b = list(iter_blocks(chunks([3, 5000, 1, 0, 996, 4000]), block=1024))
    assert [len(x) for x in a] == [len(x.rows) for x in b]
    for ra, cb in zip(a, b, strict=True):
        np.testing.assert_array_equal(ra, cb.rows)
        np.testing.assert_array_equal(values[ra], cb.values)
