"""The single-process partitioned engine: canonical order, and agreement with run_check."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from eftsieve.check.engines.local import local_check
from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from eftsieve.stats.accumulate import BLOCK
from tests.check.conftest import FILE_ROWS, comparable, make_fit, write_parts
from tests.helpers import gaussian_fit

SETTINGS = CheckSettings(plot_points=4000)


def test_chunk_size_does_not_change_a_bit(dataset, region, tmp_path):
    a = local_check(make_fit(dataset), region, CheckSettings(chunk_rows=7_777, plot_points=4000),
                    tmp_path / "a")
    b = local_check(make_fit(dataset), region, SETTINGS, tmp_path / "b")
    assert comparable(a.summary) == comparable(b.summary)
    assert (tmp_path / "a/flagged.csv").read_bytes() == (tmp_path / "b/flagged.csv").read_bytes()
    assert a.worst == b.worst
    np.testing.assert_array_equal(a.plot_samples, b.plot_samples)
    np.testing.assert_array_equal(a.plot_weights, b.plot_weights)


def test_every_row_is_accounted_for(dataset, region, tmp_path):
    res = local_check(make_fit(dataset), region, SETTINGS, tmp_path)
    s = res.summary
    assert s["n_total"] == sum(FILE_ROWS)
    assert s["n_inside"] + s["n_marginal"] + s["n_outside"] + s["n_uncertain"] == s["n_total"]
    assert [p["rows"] for p in s["engine"]["partitions"]] == list(FILE_ROWS)
    flagged = pd.read_csv(tmp_path / "flagged.csv")
    assert len(flagged) == s["n_marginal"] + s["n_outside"] + s["n_uncertain"] > 1000
    assert flagged["row"].is_monotonic_increasing and flagged["row"].max() < s["n_total"]
    assert s["engine"]["name"] == "local"


def test_one_file_agrees_with_run_check(dataset, region, tmp_path):
    fit = make_fit(dataset / "part-001.parquet")  # 70,000 rows: more than one block
    ours = local_check(fit, region, SETTINGS, tmp_path / "ours")
    ref = run_check(fit, region, SETTINGS, tmp_path / "ref")
    s, r = ours.summary, ref.summary
    for key in ("n_total", "n_inside", "n_marginal", "n_outside", "p_inside", "p_inside_err",
                "ess", "p_certainly_inside", "bayes_factor_note", "p_inside_mc_err_batch",
                "tau_inside", "n_batches"):
        assert s[key] == r[key], key
    np.testing.assert_allclose(s["mean_region"], r["mean_region"], rtol=1e-13)
    np.testing.assert_allclose(s["cov_region"], r["cov_region"], rtol=1e-11)
    assert s["tension_sigma"] == pytest.approx(r["tension_sigma"], abs=1e-9)
    fo, fr = pd.read_csv(tmp_path / "ours/flagged.csv"), pd.read_csv(tmp_path / "ref/flagged.csv")
    assert fo["row"].tolist() == fr["row"].tolist()
    assert fo["verdict"].tolist() == fr["verdict"].tolist()
    np.testing.assert_allclose(fo["min_margin"], fr["min_margin"], rtol=1e-12, atol=1e-12)
    assert [w.row for w in ours.worst] == [w.row for w in ref.worst]
    # the same key stream as run_check: the same subsample (order aside)
    np.testing.assert_array_equal(np.sort(ours.plot_samples[:, 0]), np.sort(ref.plot_samples[:, 0]))


def test_block_aligned_files_agree_with_run_check_exactly(tmp_path, region):
    write_parts(tmp_path / "d", (BLOCK, 2 * BLOCK, 999))
    fit = make_fit(tmp_path / "d")
    s = local_check(fit, region, SETTINGS, None).summary
    r = run_check(fit, region, SETTINGS, None).summary
    for key in ("n_total", "n_inside", "n_outside", "p_inside", "p_inside_err", "ess",
                "p_inside_mc_err_batch", "tau_inside", "n_batches"):
        assert s[key] == r[key], key


def test_unweighted_source(dataset, region):
    res = local_check(make_fit(dataset, weighted=False), region, SETTINGS, None)
    assert res.plot_weights is None
    assert res.summary["ess"] == res.summary["n_total"] == sum(FILE_ROWS)


def test_gaussian_draws_are_one_partition_of_the_block_engine(region):
    """Regression: Gaussian cards used a second, in-process stream; they are now one
    partition of the same kernel, and the result does not depend on the chunk size."""
    fit = gaussian_fit([-0.5, 4.3], [[1.0, 0.1], [0.1, 0.5]])
    res = run_check(fit, region, CheckSettings(draws=20_000, chunk_rows=20_000), None)
    ref = run_check(fit, region, CheckSettings(draws=20_000, chunk_rows=777), None)
    assert comparable(res.summary) == comparable(ref.summary)
    parts = res.summary["engine"]["partitions"]
    assert [p["rows"] for p in parts] == [20_000]


def test_bad_rows_stop_the_run_and_leave_no_flagged_file(tmp_path, region):
    paths = write_parts(tmp_path / "d", (100, 100))
    t = pq.read_table(paths[1]).to_pandas()
    t.loc[5, "w"] = -1.0
    pq.write_table(pa.Table.from_pandas(t, preserve_index=False), paths[1])
    out = tmp_path / "out"
    with pytest.raises(InputError, match=r"negative or non-finite weight in row\(s\) 105") as e:
        local_check(make_fit(tmp_path / "d"), region, SETTINGS, out)
    assert e.value.path == str(paths[1])
    assert list(out.iterdir()) == []


def test_engine_switch_refuses_bad_options(dataset, region):
    fit = make_fit(dataset)
    with pytest.raises(InputError, match="unknown engine 'spark'"):
        run_check(fit, region, SETTINGS, None, engine="spark")
    with pytest.raises(InputError, match="needs the dask engine") as e:
        run_check(fit, region, SETTINGS, None, scheduler="tcp://127.0.0.1:1")
    assert e.value.field == "--scheduler"


def test_region_of_another_theory_is_refused(dataset, region):
    from dataclasses import replace

    with pytest.raises(InputError, match="region is for 'scalar-eft'"):
        local_check(make_fit(dataset), replace(region, theory="scalar-eft"), SETTINGS, None)


def test_a_theory_uncertainty_model_runs_on_the_partitioned_engine(dataset, region):
    """Regression: the partitioned engines refused a theory-uncertainty model; the one
    kernel now runs it, and the hard-edge counts are unchanged by it."""
    from eftsieve.stats.truncation import UncertaintySettings

    fit = make_fit(dataset)
    hard = run_check(fit, region, SETTINGS, None, uncertainty=UncertaintySettings("none"))
    assert hard.summary["n_total"] == sum(FILE_ROWS)
    soft = run_check(fit, region, SETTINGS, None,
                     uncertainty=UncertaintySettings("power-counting"))
    assert soft.n_total == sum(FILE_ROWS)
    tu = soft.theory_uncertainty
    assert tu is not None and 0.0 <= tu["p_inside"] <= 1.0
    assert tu["hard"]["p_inside"] == hard.p_inside
