"""Multi-file samples sources: file order, global rows, per-file errors."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from eftsieve.errors import InputError
from eftsieve.io.samples import Chunk, FilePart, detect_format, resolve_files
from tests.check.conftest import FILE_ROWS, make_fit, write_parts


def _frame(paths):
    import pandas as pd

    return pd.concat([pq.read_table(p).to_pandas() for p in paths], ignore_index=True)


def test_directory_is_read_in_name_order_with_global_rows(dataset):
    src = make_fit(dataset).samples
    files = src.files()
    assert [f.name for f in files] == sorted(f.name for f in dataset.glob("*.parquet"))
    parts = src.file_parts()
    assert [p.n_rows for p in parts] == list(FILE_ROWS)
    assert [p.start for p in parts] == list(np.cumsum((0,) + FILE_ROWS[:-1]))
    chunks = list(src.iter_chunks(chunk_rows=9_000))
    rows = np.concatenate([c.rows for c in chunks])
    np.testing.assert_array_equal(rows, np.arange(sum(FILE_ROWS)))
    want = _frame(files)
    np.testing.assert_array_equal(np.concatenate([c.values for c in chunks]),
                                  want[["lbar1", "lbar2", "nu"]].to_numpy())
    np.testing.assert_array_equal(np.concatenate([c.weights for c in chunks]), want["w"])


def test_every_chunk_comes_from_one_file_and_names_it(dataset):
    src = make_fit(dataset).samples
    parts = {str(p.path): p for p in src.file_parts()}
    for c in src.iter_chunks(chunk_rows=30_000):
        part = parts[c.file]
        assert part.start <= c.rows[0] and c.rows[-1] < part.start + part.n_rows


def test_glob_equals_directory(dataset):
    a = make_fit(dataset).samples.read_all()
    b = make_fit(dataset / "part-*.parquet").samples.read_all()
    np.testing.assert_array_equal(a.values, b.values)
    np.testing.assert_array_equal(a.rows, b.rows)
    assert a.file is None  # rows from several files


def test_order_is_by_path_string_not_by_creation(tmp_path):
    write_parts(tmp_path, (3,), seed=1, prefix="b")
    write_parts(tmp_path, (2,), seed=2, prefix="a")
    files = resolve_files(tmp_path)
    assert [f.name for f in files] == ["a-000.parquet", "b-000.parquet"]
    chunk = make_fit(tmp_path).samples.read_all()
    np.testing.assert_array_equal(chunk.values[:2], _frame(files[:1])[["lbar1", "lbar2", "nu"]])


def test_single_file_source_is_unchanged_and_records_its_file(dataset):
    path = dataset / "part-000.parquet"
    src = make_fit(path).samples
    assert not src.is_multi_file
    chunks = list(src.iter_chunks(chunk_rows=10_000))
    assert [len(c.rows) for c in chunks] == [10_000, 10_000, 5_000]
    assert {c.file for c in chunks} == {str(path)}
    assert chunks[2].rows[0] == 20_000


def test_chunk_file_defaults_to_none():
    c = Chunk(np.arange(2), np.zeros((2, 1)), None)
    assert c.file is None


def test_formats_of_multi_file_paths(dataset):
    assert detect_format(dataset, None) == "parquet"
    assert detect_format(dataset / "*.parquet", "parquet") == "parquet"
    with pytest.raises(InputError, match="must be Parquet"):
        detect_format(dataset, "csv")


def test_empty_directory_and_unmatched_glob_are_errors(tmp_path):
    with pytest.raises(InputError, match="holds no .parquet"):
        resolve_files(tmp_path)
    with pytest.raises(InputError, match="matches no file"):
        resolve_files(tmp_path / "nothing-*.parquet")


def test_glob_with_a_non_parquet_file_is_refused(tmp_path):
    write_parts(tmp_path, (4,))
    (tmp_path / "part-notes.txt").write_text("x")
    with pytest.raises(InputError, match=r"non-Parquet file\(s\) \['part-notes.txt'\]"):
        resolve_files(tmp_path / "part-*")


def test_missing_column_names_the_file(tmp_path):
    write_parts(tmp_path, (4, 4))
    pq.write_table(pa.table({"lbar1": [0.0], "w": [1.0]}), tmp_path / "part-002.parquet")
    with pytest.raises(InputError) as info:
        make_fit(tmp_path).samples.validate_columns()
    assert info.value.path.endswith("part-002.parquet")
    assert "missing column(s) ['lbar2', 'nu']" in str(info.value)


def test_nan_in_a_later_file_names_the_file_and_global_row(tmp_path):
    paths = write_parts(tmp_path, (10, 10, 10))
    t = pq.read_table(paths[2]).to_pandas()
    t.loc[3, "lbar2"] = np.nan
    pq.write_table(pa.Table.from_pandas(t, preserve_index=False), paths[2])
    with pytest.raises(InputError) as info:
        make_fit(tmp_path).samples.read_all()
    assert info.value.path == str(paths[2])
    assert "row(s) 23 (0-based data rows, global" in str(info.value)
    assert "starts at global row 20" in str(info.value)


def test_rows_that_disagree_with_the_metadata_stop_the_run(dataset):
    src = make_fit(dataset).samples
    part = src.file_parts()[0]
    wrong = FilePart(part.index, part.path, part.start, part.n_rows + 1)
    with pytest.raises(InputError, match="read 25000 rows but the file metadata states 25001"):
        list(src.iter_part(wrong))
