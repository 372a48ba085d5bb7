"""Several cards in one run (local and Dask engines), and the summary table."""

from __future__ import annotations

import shutil

import pandas as pd
import pytest
import yaml

from eftsieve.check.many import SUMMARY_COLUMNS, check_many, write_summary_table
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from tests.check.conftest import comparable

SETTINGS = CheckSettings(draws=20_000, chunk_rows=30_000, plot_points=2000)
PARAMS = [{"name": "lbar1", "convention": "lbar"}, {"name": "lbar2", "convention": "lbar"},
          {"name": "nu", "convention": "none"}]


def _card(path, name, **body):
    card = {"format_version": 1, "name": name, "theory": "chpt-su2",
            "kinematics": {"pion_mass_mev": 139.57}, "parameters": PARAMS, **body}
    path.write_text(yaml.safe_dump(card))
    return path


@pytest.fixture(scope="module")
def cards(dataset, tmp_path_factory):
    d = tmp_path_factory.mktemp("cards")
    shutil.copy(dataset / "part-000.parquet", d / "a.parquet")
    shutil.copy(dataset / "part-005.parquet", d / "b.parquet")
    return [_card(d / "alpha.yaml", "alpha", samples={"path": "a.parquet", "weight_column": "w"}),
            _card(d / "beta.yaml", "beta", samples={"path": "b.parquet"}),
            _card(d / "gamma.yaml", "gamma", mean=[-0.5, 4.3, 0.0],
                  covariance=[[1.0, 0.2, 0.0], [0.2, 0.6, 0.0], [0.0, 0.0, 1.0]])]


def test_three_cards_one_table(cards, tmp_path):
    many = check_many(cards, SETTINGS, tmp_path)
    assert [r["fit"] for r in many.rows] == ["alpha", "beta", "gamma"]
    assert [r["n_total"] for r in many.rows] == [25_000, 40_003, 20_000]
    for row, d in zip(many.rows, many.outdirs, strict=True):
        assert set(row) == set(SUMMARY_COLUMNS)
        assert row["n_inside"] + row["n_marginal"] + row["n_outside"] + row["n_uncertain"] \
            == row["n_total"]
        assert {"summary.json", "flagged.csv", "region.json"} <= {p.name for p in d.iterdir()}
    # one region build shared by the three cards (same kinematics)
    assert len({r["region_hash"] for r in many.rows}) == 1
    assert many.table == tmp_path / "checks.csv"
    back = pd.read_csv(many.table)
    assert list(back.columns) == list(SUMMARY_COLUMNS)
    assert back["fit"].tolist() == ["alpha", "beta", "gamma"]
    assert back["p_inside"].tolist() == [r["p_inside"] for r in many.rows]  # exact round trip
    again = write_summary_table(many.rows, tmp_path / "again.csv")
    assert again.read_bytes() == many.table.read_bytes()


def test_dask_engine_gives_the_same_table(cards, cluster, tmp_path):
    local = check_many(cards, SETTINGS, tmp_path / "local")
    dask = check_many(cards, SETTINGS, tmp_path / "dask", engine="dask",
                      scheduler=cluster.scheduler_address, partition_timeout=60.0)
    for a, b in zip(local.results, dask.results, strict=True):
        assert comparable(a.summary).replace(str(tmp_path / "local"), "") == \
            comparable(b.summary).replace(str(tmp_path / "dask"), "")
    for d_local, d_dask in zip(local.outdirs, dask.outdirs, strict=True):
        assert (d_local / "flagged.csv").read_bytes() == (d_dask / "flagged.csv").read_bytes()
    assert [r["engine"] for r in dask.rows] == ["dask"] * 3


def test_cards_with_one_name_are_refused(cards, tmp_path):
    other = tmp_path / "x"
    other.mkdir()
    twin = shutil.copy(cards[0], other / cards[0].name)
    with pytest.raises(InputError, match="two cards share the name 'alpha'"):
        check_many([cards[0], twin], SETTINGS, tmp_path / "out")


def test_bad_engine_options_and_no_cards(cards, tmp_path):
    with pytest.raises(InputError, match="unknown engine"):
        check_many(cards, SETTINGS, tmp_path, engine="ray")
    with pytest.raises(InputError, match="needs the dask engine"):
        check_many(cards, SETTINGS, tmp_path, scheduler="tcp://127.0.0.1:1")
    with pytest.raises(InputError, match="no fit cards given"):
        check_many([], SETTINGS, tmp_path)


def test_table_rows_must_be_complete(tmp_path):
    with pytest.raises(ValueError, match="lacks"):
        write_summary_table([{"card": "a.yaml"}], tmp_path / "t.csv")
    assert not (tmp_path / "t.csv").exists()
