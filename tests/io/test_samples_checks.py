"""The checks on every row read from Parquet: the fast range test lets through exactly
the rows the per-row tests let through, and a failing chunk names its rows."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from eftsieve.errors import InputError
from eftsieve.io import limits
from eftsieve.io.samples import SamplesSource, in_range


def _source(tmp_path: Path, a, b, w=None) -> SamplesSource:
    cols = {"a": pa.array(a), "b": pa.array(b)}
    if w is not None:
        cols["w"] = pa.array(w, type=pa.float64())
    path = tmp_path / "s.parquet"
    pq.write_table(pa.table(cols), path, row_group_size=4)
    return SamplesSource(path, "parquet", ("a", "b"), "w" if w is not None else None)


def _read(src: SamplesSource, chunk_rows: int = 5):
    return list(src.iter_chunks(chunk_rows))


def test_in_range_agrees_with_the_per_value_test(rng):
    big = limits.MAX_ABS_VALUE
    for special in (np.nan, np.inf, -np.inf, big, -big, np.nextafter(big, np.inf), 0.0, -0.0):
        x = rng.normal(size=(64, 3))
        x[rng.integers(64), rng.integers(3)] = special
        expected = bool((np.abs(x) <= big).all())  # NaN compares false
        assert in_range(x, -big, big) is expected, special
        assert in_range(np.asfortranarray(x), -big, big) is expected, special
    assert in_range(np.empty((0, 2)), -1.0, 1.0)


@pytest.mark.parametrize(("value", "message"), [
    (np.nan, r"NaN or inf in row\(s\) 6 "),
    (-np.inf, r"NaN or inf in row\(s\) 6 "),
    (1e200, r"outside the supported range \|x\| <= 1e\+150 in row\(s\) 6 "),
])
def test_a_bad_value_names_its_row(tmp_path, value, message):
    a = np.arange(9.0)
    b = np.ones(9)
    b[6] = value
    src = _source(tmp_path, a, b)
    with pytest.raises(InputError, match=message) as info:
        _read(src)
    assert info.value.field == "samples"


def test_bad_weights_name_their_row(tmp_path):
    w = np.ones(9)
    w[3] = -0.5
    with pytest.raises(InputError, match=r"negative or non-finite weight in row\(s\) 3 "):
        _read(_source(tmp_path, np.arange(9.0), np.ones(9), w))
    for bad in (np.nan, np.inf):
        w[3] = bad
        with pytest.raises(InputError, match=r"negative or non-finite weight in row\(s\) 3 "):
            _read(_source(tmp_path, np.arange(9.0), np.ones(9), w))
    w[3] = -0.0  # not negative: accepted, as by the per-row test (w < 0 is false)
    assert len(_read(_source(tmp_path, np.arange(9.0), np.ones(9), w))) == 2


def test_the_values_arrive_unchanged_and_column_major(tmp_path, rng):
    a = rng.normal(size=23)
    b = np.arange(23, dtype=np.int32)  # an integer column is read as doubles
    w = rng.gamma(2.0, 0.5, 23)
    a[4] = -0.0
    chunks = _read(_source(tmp_path, a, b, w), chunk_rows=10)
    values = np.concatenate([c.values for c in chunks])
    np.testing.assert_array_equal(values, np.column_stack([a, b.astype(float)]))
    assert np.signbit(values[4, 0])  # bit for bit, the sign of zero included
    np.testing.assert_array_equal(np.concatenate([c.weights for c in chunks]), w)
    assert all(c.values.flags.f_contiguous and c.values.dtype == np.float64 for c in chunks)
    np.testing.assert_array_equal(np.concatenate([c.rows for c in chunks]), np.arange(23))
