"""The flagged output (check/outputs.py): exact round trip of CSV and Parquet, and the cell cap.

The oracles are outside the writer: the input Parquet file read with pyarrow (the fit
values must come back bit for bit), numpy's ``A y - b`` for the margins (Region.margins),
and Python's ``float()`` of the CSV text (shortest round-trip repr, common practice).
"""

from __future__ import annotations

import numpy as np
import pyarrow.csv as pcsv
import pyarrow.parquet as pq
import pytest

from eftsieve.check import outputs
from eftsieve.check.engines.local import local_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from tests.check.conftest import make_fit, write_parts


@pytest.fixture(scope="module")
def flagged_pair(tmp_path_factory, region):
    d = tmp_path_factory.mktemp("flagged")
    (path,) = write_parts(d / "in", (90_000,), seed=11)
    fit = make_fit(path)
    res = {}
    for fmt in ("csv", "parquet"):
        local_check(fit, region, CheckSettings(plot_points=1000, flagged_format=fmt,
                                               flagged_margins=True), d / fmt)
        res[fmt] = d / fmt / f"flagged.{fmt}"
    return path, res


def test_per_facet_margins_are_opt_in(tmp_path, region):
    (path,) = write_parts(tmp_path / "in", (20_000,), seed=12)
    fit = make_fit(path)
    local_check(fit, region, CheckSettings(plot_points=100), tmp_path / "out")
    table = pcsv.read_csv(tmp_path / "out" / "flagged.csv")
    assert not [c for c in table.column_names if c.startswith("margin_")]
    y = np.column_stack([table[f"{c} (region)"].to_numpy() for c in region.coordinates])
    # the smallest margin and the worst facet are still exact (oracle: numpy A y - b)
    m = region.margins(y)
    np.testing.assert_allclose(table["min_margin"].to_numpy(), m.min(axis=1), atol=1e-12)
    assert np.array_equal(table["worst_facet"].to_numpy(), m.argmin(axis=1))


def test_csv_and_parquet_read_back_exactly(flagged_pair, region):
    src, files = flagged_pair
    csv = pcsv.read_csv(files["csv"])
    par = pq.read_table(files["parquet"])
    assert csv.column_names == par.column_names
    assert csv.num_rows == par.num_rows > 1000
    for name in csv.column_names:
        a, b = csv[name].to_numpy(), par[name].to_numpy()
        if a.dtype.kind == "f":
            assert np.array_equal(a.view(np.int64), b.view(np.int64)), name  # same bits
        else:
            assert a.tolist() == b.tolist(), name
    rows = csv["row"].to_numpy()
    inp = pq.read_table(src)
    for p in ("lbar1", "lbar2", "nu"):
        np.testing.assert_array_equal(csv[p].to_numpy(), inp[p].to_numpy()[rows])
    y = np.column_stack([csv[f"{c} (region)"].to_numpy() for c in region.coordinates])
    m = np.column_stack([csv[f"margin_{i}"].to_numpy() for i in range(len(region.facets))])
    np.testing.assert_allclose(m, region.margins(y), rtol=1e-12, atol=1e-12)
    np.testing.assert_array_equal(csv["min_margin"].to_numpy(), m.min(axis=1))
    assert set(csv["verdict"].to_pylist()) <= {"marginal", "outside", "uncertain"}


def test_csv_text_is_the_shortest_round_trip_form(flagged_pair):
    _, files = flagged_pair
    lines = files["csv"].read_text().splitlines()[1:200]
    par = pq.read_table(files["parquet"]).slice(0, 199)
    first = [float(line.split(",")[2]) for line in lines]
    assert first == par["lbar1"].to_pylist()


def test_cell_cap_does_not_change_the_bytes(flagged_pair, region, monkeypatch, tmp_path):
    src, files = flagged_pair
    monkeypatch.setattr(outputs, "MAX_CELLS", 97)  # a few rows per slice
    local_check(make_fit(src), region, CheckSettings(plot_points=1000, flagged_margins=True),
                tmp_path)
    assert (tmp_path / "flagged.csv").read_bytes() == files["csv"].read_bytes()


def test_unknown_format_is_an_input_error():
    with pytest.raises(InputError, match="flagged-format"):
        CheckSettings(flagged_format="xlsx")


def test_region_columns_left_out_when_they_are_the_fit_columns(tmp_path, region):
    from eftsieve.fit.model import Fit, Parameter
    from eftsieve.io.samples import SamplesSource
    from tests.check.conftest import LBAR

    (path,) = write_parts(tmp_path / "in", (20_000,), seed=13)
    source = SamplesSource(path, "parquet", ("lbar1", "lbar2"), None)
    fit = Fit("two", "chpt-su2", (Parameter("lbar1", LBAR), Parameter("lbar2", LBAR)),
              {"pion_mass_mev": 139.57}, samples=source)
    local_check(fit, region, CheckSettings(plot_points=100), tmp_path / "out")
    table = pcsv.read_csv(tmp_path / "out" / "flagged.csv")
    assert table.column_names[:5] == ["row", "verdict", "lbar1", "lbar2", "min_margin"]
    y = np.column_stack([table["lbar1"].to_numpy(), table["lbar2"].to_numpy()])
    np.testing.assert_allclose(table["min_margin"].to_numpy(), region.margins(y).min(axis=1),
                               atol=1e-12)


def test_flagged_limit_writes_the_first_rows_and_says_so(flagged_pair, region, tmp_path):
    """--flagged-limit N: the file holds the first N flagged rows of the full file, in
    row order; the report's text names N and the total."""
    from eftsieve.report.check_report import flagged_file_text

    src, files = flagged_pair
    res = local_check(make_fit(src), region, CheckSettings(plot_points=1000, flagged_limit=25,
                                                           flagged_margins=True), tmp_path)
    lines = (tmp_path / "flagged.csv").read_text().splitlines()
    full = files["csv"].read_text().splitlines()
    assert lines == full[:26]  # header + the first 25 rows
    total = len(full) - 1
    assert f"first 25 of the {total} rows" in flagged_file_text(res)
