"""NumPy .npy and .npz samples written by numpy.save / numpy.savez, read bit for bit."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.api import load_fit
from eftsieve.cli.args import load_fit_arg
from eftsieve.errors import InputError
from tests.fit.formats.common import assert_one_line, cli_args, write_card

BARE = ("--theory", "chpt-su2", "--convention", "lbar", "--pion-mass", "139.57")


@pytest.fixture()
def x():
    return np.random.default_rng(3).normal([-0.4, 4.3, 0.0], [0.6, 0.1, 1.0], size=(1000, 3))


def test_npy_columns_take_the_card_parameters_in_order(tmp_path, x):
    np.save(tmp_path / "s.npy", x[:, :2])
    fit = load_fit(write_card(tmp_path, {"samples": {"path": "s.npy"}}))
    assert fit.samples.fmt == "npy"
    got = fit.samples.read_all()
    assert np.array_equal(got.values, x[:, :2]) and got.weights is None
    chunks = list(fit.samples.iter_chunks(chunk_rows=300))
    assert [len(c.rows) for c in chunks] == [300, 300, 300, 100]


def test_npy_positions_select_and_reorder(tmp_path, x):
    np.save(tmp_path / "s3.npy", np.column_stack([x, np.abs(x[:, 2])]))
    card = write_card(tmp_path, {"samples": {"path": "s3.npy", "columns": {
        "lbar1": 1, "lbar2": 0, "weight": 3}}})
    got = load_fit(card).samples.read_all()
    assert np.array_equal(got.values, x[:, [1, 0]])
    assert np.array_equal(got.weights, np.abs(x[:, 2]))


def test_npy_bare_with_columns_flag(tmp_path, x):
    np.save(tmp_path / "s3.npy", x)
    fit = load_fit_arg(cli_args(str(tmp_path / "s3.npy"), *BARE, "--columns",
                                "lbar1,lbar2,c_sys"))
    assert fit.names == ("lbar1", "lbar2", "c_sys")
    assert fit.parameters[2].convention.name == "none"
    assert np.array_equal(fit.samples.read_all().values, x)


def test_structured_npy_names_its_columns(tmp_path, x):
    rec = np.zeros(len(x), dtype=[("lbar2", "f8"), ("lbar1", "f4")])
    rec["lbar2"], rec["lbar1"] = x[:, 1], x[:, 0]
    np.save(tmp_path / "rec.npy", rec)
    got = load_fit(write_card(tmp_path, {"samples": {"path": "rec.npy"}})).samples.read_all()
    assert np.array_equal(got.values, np.column_stack([rec["lbar1"], rec["lbar2"]]))


def test_npz_one_array_per_parameter_with_weight(tmp_path, x):
    w = np.abs(x[:, 2])
    np.savez(tmp_path / "s.npz", lbar1=x[:, 0], lbar2=x[:, 1], w=w)
    card = write_card(tmp_path, {"samples": {"path": "s.npz", "weight_column": "w"}})
    got = load_fit(card).samples.read_all()
    assert np.array_equal(got.values, x[:, :2]) and np.array_equal(got.weights, w)
    fit = load_fit_arg(cli_args(str(tmp_path / "s.npz"), *BARE, "--weight-column", "w"))
    assert fit.names == ("lbar1", "lbar2") and fit.samples.weight_column == "w"


def test_npz_matrix_array_gives_indexed_columns(tmp_path, x):
    np.savez_compressed(tmp_path / "m.npz", l=x[:, :2])
    card = write_card(tmp_path, {"samples": {"path": "m.npz", "columns": {
        "lbar1": "l[0]", "lbar2": "l[1]"}}})
    assert np.array_equal(load_fit(card).samples.read_all().values, x[:, :2])


# ---- bad files: one test per rule ---------------------------------------------------------

def test_object_array_is_refused_never_unpickled(tmp_path):
    np.save(tmp_path / "obj.npy", np.array([{"a": 1}, None], dtype=object), allow_pickle=True)
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "obj.npy"}}))
    assert_one_line(info, "obj.npy", None, "without unpickling")


def test_three_dimensional_npy_is_refused(tmp_path):
    np.save(tmp_path / "cube.npy", np.zeros((4, 2, 2)))
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "cube.npy"}}))
    assert_one_line(info, "cube.npy", None, "expected (n, d)")


def test_npz_arrays_of_different_lengths_are_refused(tmp_path):
    np.savez(tmp_path / "ragged.npz", lbar1=np.zeros(4), lbar2=np.zeros(5))
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "ragged.npz"}}))
    assert_one_line(info, "ragged.npz", None, "different lengths")


def test_npz_text_array_is_refused(tmp_path):
    np.savez(tmp_path / "txt.npz", lbar1=np.zeros(2), lbar2=np.array(["a", "b"]))
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "txt.npz"}}))
    assert_one_line(info, "txt.npz", "lbar2", "dtype <U1")


def test_list_must_name_every_column_of_an_unnamed_file(tmp_path, x):
    np.save(tmp_path / "s3.npy", x)
    with pytest.raises(InputError) as info:
        load_fit_arg(cli_args(str(tmp_path / "s3.npy"), *BARE, "--columns", "lbar1,lbar2"))
    assert_one_line(info, "s3.npy", "--columns", "names 2 columns but the file holds 3")


def test_nan_rows_are_quoted(tmp_path, x):
    y = x[:, :2].copy()
    y[[5, 7], 1] = np.nan
    np.save(tmp_path / "nan.npy", y)
    fit = load_fit(write_card(tmp_path, {"samples": {"path": "nan.npy"}}))
    with pytest.raises(InputError, match=r"row\(s\) 5, 7 \(0-based"):
        fit.samples.read_all()


def test_chain_options_are_refused_for_arrays(tmp_path, x):
    np.save(tmp_path / "s.npy", x[:, :2])
    with pytest.raises(InputError) as info:
        load_fit(write_card(tmp_path, {"samples": {"path": "s.npy", "burn_in": 10}}))
    assert_one_line(info, "card.yaml", "samples.burn_in/thin/walkers/group", "holds no chains")
