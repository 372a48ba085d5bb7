"""The ``columns`` card field and the ``--columns`` flag: select, rename, declare the weight."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from eftsieve.api import load_fit
from eftsieve.cli.args import load_fit_arg
from eftsieve.errors import InputError
from eftsieve.io.readers.columns import (
    ColumnTable,
    parse_columns,
    parse_columns_flag,
    resolve_columns,
)
from tests.fit.formats.common import assert_one_line, cli_args, write_card

BARE = ("--theory", "chpt-su2", "--convention", "lbar", "--pion-mass", "139.57")


@pytest.fixture()
def csv(tmp_path):
    rng = np.random.default_rng(5)
    frame = pd.DataFrame({"L1": rng.normal(size=50), "L2": rng.normal(size=50) + 4,
                          "junk": rng.normal(size=50), "w": rng.uniform(size=50)})
    frame.to_csv(tmp_path / "s.csv", index=False)
    frame.to_parquet(tmp_path / "s.parquet")
    return frame


def test_flag_forms():
    assert parse_columns_flag("lbar1,lbar2").is_list
    spec = parse_columns_flag("lbar1=L1,lbar2=m[0,1],c,weight=3")
    assert spec.names == ("lbar1", "lbar2", "c")
    assert spec.sources == ("L1", "m[0,1]", "c") and spec.weight == 3


@pytest.mark.parametrize("fmt", ["s.csv", "s.parquet"])
def test_card_mapping_renames_and_declares_the_weight(tmp_path, csv, fmt):
    card = write_card(tmp_path, {"samples": {"path": fmt, "columns": {
        "lbar1": "L1", "lbar2": "L2", "weight": "w"}}})
    got = load_fit(card).samples.read_all()
    assert np.array_equal(got.values, csv[["L1", "L2"]].to_numpy())
    assert np.array_equal(got.weights, csv["w"].to_numpy())


def test_bare_csv_flag_selects_and_renames(tmp_path, csv):
    fit = load_fit_arg(cli_args(str(tmp_path / "s.csv"), *BARE, "--columns",
                                "lbar2=L2,lbar1=L1,weight=w"))
    assert fit.names == ("lbar2", "lbar1") and fit.samples.columns == ("L2", "L1")
    got = fit.samples.read_all()
    assert np.array_equal(got.values, csv[["L2", "L1"]].to_numpy())
    assert np.array_equal(got.weights, csv["w"].to_numpy())


def test_bare_csv_list_keeps_only_the_named_columns(tmp_path, csv):
    csv.rename(columns={"L1": "lbar1", "L2": "lbar2"}).to_csv(tmp_path / "n.csv", index=False)
    fit = load_fit_arg(cli_args(str(tmp_path / "n.csv"), *BARE, "--columns", "lbar1,lbar2"))
    assert fit.names == ("lbar1", "lbar2")
    fit_all = load_fit_arg(cli_args(str(tmp_path / "n.csv"), *BARE))
    assert fit_all.names == ("lbar1", "lbar2", "junk", "w")


def test_resolution_uses_positions_and_aliases():
    table = ColumnTable(("v[0]", "v[1]", "c"), True, {"lbar1": 0, "lbar2": 1})
    res = resolve_columns(parse_columns({"lbar2": "lbar2", "lbar1": 0}, None, "c"), table,
                          "f.nc", "c", ("lbar1", "lbar2"))
    assert res.labels == ("v[0]", "v[1]")
    assert resolve_columns(None, table, "f.nc", "c").names == ("lbar1", "lbar2", "c")


# ---- bad specifications: one test per rule -------------------------------------------------

@pytest.mark.parametrize("columns, field, words", [
    ({"lbar1": "L1", "lbar2": "nope"}, "samples.columns.lbar2", "no column 'nope'"),
    ({"lbar1": "L1", "lbar2": 9}, "samples.columns.lbar2", "position 9 is outside"),
    ({"lbar1": "L1", "lbar2": "L1"}, "samples.columns", "given to two parameters"),
    ({"lbar1": "L1", "lbar2": "L2", "weight": "L1"}, "samples.columns", "both a parameter"),
    ({"lbar1": "L1", "lbar3": "L2"}, "samples.columns.lbar3", "not a parameter"),
    ({"lbar1": 1.5}, "samples.columns.lbar1", "0-based position"),
    ({"lbar1": -1}, "samples.columns.lbar1", "negative position"),
    (["lbar1", "weight"], "samples.columns", "ambiguous"),
    ("L1", "samples.columns", "list of names or a mapping"),
])
def test_bad_card_columns(tmp_path, csv, columns, field, words):
    card = write_card(tmp_path, {"samples": {"path": "s.csv", "columns": columns}}, "bad.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "bad.yaml", field, words)


def test_weight_declared_twice_differently(tmp_path, csv):
    card = write_card(tmp_path, {"samples": {"path": "s.csv", "weight_column": "junk",
                                             "columns": {"lbar1": "L1", "lbar2": "L2",
                                                         "weight": "w"}}}, "w2.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "w2.yaml", "samples.columns", "weight column given twice")


def test_unknown_samples_field_is_refused(tmp_path, csv):
    card = write_card(tmp_path, {"samples": {"path": "s.csv", "burnin": 5}}, "typo.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "typo.yaml", "samples.burnin", "unknown field")


@pytest.mark.parametrize("text, words", [
    ("lbar1=L1,lbar1=L2", "repeated entry"),
    ("lbar1,,lbar2", "empty entry"),
    ("lbar1,lbar1", "named twice"),
])
def test_bad_flag(text, words):
    with pytest.raises(InputError) as info:
        parse_columns_flag(text)
    assert info.value.field == "--columns" and words in str(info.value)
    assert info.value.hint
