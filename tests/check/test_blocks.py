"""The reproducible pieces: block sums, their replay, the map, blocking, rankings, keys."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.check.blocks import Ranked, apply_map, iter_blocks, sample_keys
from eftsieve.check.verdicts import classify
from eftsieve.io.samples import Chunk
from eftsieve.stats.accumulate import BLOCK, Accumulator, block_sums
from eftsieve.theories.base import CoordinateMap

EXACT = ("n_total", "sw", "sw2", "sw_in", "sw2_in", "sw_in_inner")


def _points(rng, n):
    y = np.column_stack([rng.normal(-0.5, 1.5, n), rng.normal(4.3, 0.8, n)])
    return y, rng.gamma(2.0, 0.5, n)


def test_block_sums_agree_with_direct_weighted_sums(region, rng):
    """Block sums against the same sums written directly with numpy (einsum, masks)."""
    y, w = _points(rng, BLOCK)
    v = classify(y, region)
    b = block_sums(y, w, v.verdict, v.satisfies)
    assert b.n == BLOCK
    np.testing.assert_array_equal(b.counts, np.bincount(v.verdict, minlength=4))
    assert b.sw == pytest.approx(np.sum(w), rel=1e-13)
    assert b.sw2 == pytest.approx(np.dot(w, w), rel=1e-13)
    assert b.sw_in == pytest.approx(np.dot(w, v.satisfies), rel=1e-13)
    assert b.sw_in_inner == pytest.approx(np.dot(w, v.verdict == 0), rel=1e-13)
    np.testing.assert_allclose(b.mean_sum, np.einsum("i,ij->j", w, y), rtol=1e-13)
    np.testing.assert_allclose(b.outer_sum, np.einsum("i,ij,ik->jk", w, y, y), rtol=1e-13)
    assert b.sw_soft == pytest.approx(b.sw_in, rel=1e-13)  # hard verdicts: P = indicator
    assert b.outer_sum[0, 1] == b.outer_sum[1, 0]


def test_replayed_blocks_equal_streaming_the_accumulator_block_by_block(region, rng):
    """Absorbing blocks in order = the accumulator's own left-to-right block sums."""
    y, w = _points(rng, 3 * BLOCK + 123)
    v = classify(y, region)
    acc = Accumulator(2)
    scalars = dict.fromkeys(EXACT[1:], 0.0)
    for lo in range(0, len(y), BLOCK):
        sl = slice(lo, lo + BLOCK)
        b = block_sums(y[sl], w[sl], v.verdict[sl], v.satisfies[sl])
        acc.absorb(b)
        for k in scalars:
            scalars[k] += getattr(b, k)
    for k, val in scalars.items():
        assert getattr(acc, k) == val
    assert acc.n_total == len(y)
    assert acc.p_inside()[0] == pytest.approx(float(w[v.satisfies].sum() / w.sum()), rel=1e-12)




def test_apply_map_matches_the_map_and_is_row_wise_reproducible(rng):
    jac = np.array([[1.0, 0.0, 0.0], [0.3, -2.0, 0.0]])
    cmap = CoordinateMap(jac, np.array([0.5, -1.0]))
    x = rng.normal(size=(20_000, 3))
    y = apply_map(cmap, x)
    np.testing.assert_allclose(y, cmap(x), rtol=1e-14, atol=1e-14)
    for lo, n in ((0, 1), (7, 3), (999, 4096)):
        np.testing.assert_array_equal(apply_map(cmap, x[lo:lo + n].copy()), y[lo:lo + n])
    np.testing.assert_array_equal(apply_map(CoordinateMap(np.zeros((1, 3)), np.array([2.0])),
                                            x[:3]), [[2.0]] * 3)


def test_apply_map_skips_products_by_one_with_the_same_bits(rng):
    """The identity map (products by 1.0 left out) gives x + 0.0, exactly what the
    general formula x * 1.0 + 0.0 gives (the sign of an exact zero included), and
    columns that are contiguous."""
    x = rng.normal(size=(5_000, 3))
    x[0, 0], x[1, 1] = -0.0, 0.0
    ident = CoordinateMap(np.eye(3), np.zeros(3))
    y = apply_map(ident, x)
    np.testing.assert_array_equal(y, x * 1.0 + 0.0)
    assert not np.signbit(y[0, 0])  # -0.0 + 0.0 is +0.0 under round-to-nearest
    assert all(y[:, k].flags.c_contiguous for k in range(3))
    # a coefficient of one next to others: (x0 * 1.0 + x2 * 2.5) + 1.0 as written out
    mixed = CoordinateMap(np.array([[1.0, 0.0, 2.5], [0.0, 1.0, 1.0]]), np.array([1.0, 0.0]))
    ym = apply_map(mixed, x)
    np.testing.assert_array_equal(ym[:, 0], (x[:, 0] * 1.0 + x[:, 2] * 2.5) + 1.0)
    np.testing.assert_array_equal(ym[:, 1], (x[:, 1] * 1.0 + x[:, 2] * 1.0) + 0.0)


def test_apply_map_calls_a_nonlinear_map():
    cmap = CoordinateMap(None, None, nonlinear=lambda x: x**2)
    np.testing.assert_array_equal(apply_map(cmap, np.array([[2.0, 3.0]])), [[4.0, 9.0]])


def _chunks(n, size):
    for lo in range(0, n, size):
        rows = np.arange(lo, min(n, lo + size))
        yield Chunk(rows, rows[:, None] * 1.0, rows * 2.0, "f")


@pytest.mark.parametrize("chunk", [1, 7, 1000, BLOCK, BLOCK + 1, 10 * BLOCK])
def test_blocks_are_fixed_whatever_the_chunk_size(chunk):
    n = 2 * BLOCK + 77
    blocks = list(iter_blocks(_chunks(n, chunk)))
    assert [len(b.rows) for b in blocks] == [BLOCK, BLOCK, 77]
    assert [int(b.rows[0]) for b in blocks] == [0, BLOCK, 2 * BLOCK]
    np.testing.assert_array_equal(np.concatenate([b.weights for b in blocks]),
                                  2.0 * np.arange(n))
    assert {b.file for b in blocks} == {"f"}


def test_iter_blocks_of_nothing_is_empty():
    assert list(iter_blocks([])) == []


def _ranked(keys, rows):
    keys, rows = np.asarray(keys, dtype=float), np.asarray(rows, dtype=np.int64)
    return Ranked(keys, rows, (rows * 10.0, None))


def test_ranked_merges_equal_one_selection_including_ties(rng):
    keys = rng.integers(0, 50, 3000).astype(float)  # many ties
    rows = rng.permutation(3000)
    whole = _ranked(keys, rows).smallest(100).ordered()
    merged = _ranked([], [])
    for lo in range(0, 3000, 37):
        merged = merged.merged(_ranked(keys[lo:lo + 37], rows[lo:lo + 37]).smallest(100), 100)
    merged = merged.ordered()
    np.testing.assert_array_equal(merged.rows, whole.rows)
    np.testing.assert_array_equal(merged.keys, whole.keys)
    np.testing.assert_array_equal(merged.payload[0], whole.rows * 10.0)
    assert merged.payload[1] is None
    order = np.lexsort((rows, keys))[:100]
    np.testing.assert_array_equal(whole.rows, rows[order])


def test_ranked_small_cases():
    r = _ranked([3.0, 1.0, 2.0], [0, 1, 2])
    assert len(r.smallest(5)) == 3
    assert len(r.smallest(0)) == 0
    assert r.smallest(2).ordered().rows.tolist() == [1, 2]


def test_sample_keys_jump_to_a_row():
    whole = np.random.default_rng(12).random(1000)
    np.testing.assert_array_equal(sample_keys(11, 0).random(1000), whole)
    np.testing.assert_array_equal(sample_keys(11, 640).random(360), whole[640:])
