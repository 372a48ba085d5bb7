"""The Dask engine on a LocalCluster of two worker processes: exactness and faults."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from eftsieve.check.engines.dask import connect, dask_check
from eftsieve.check.engines.local import local_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError, TaskFailedError
from tests.check.conftest import FILE_ROWS, comparable, make_fit, write_parts
from tests.check.faults import FailAlways, KillAlways, KillOnce

pytest.importorskip("distributed")

SETTINGS = CheckSettings(chunk_rows=20_000, plot_points=4000)
TIMEOUT = 60.0


@pytest.fixture(scope="module")
def reference(dataset, region, tmp_path_factory):
    """The single-process multi-file check of the standard dataset."""
    out = tmp_path_factory.mktemp("local")
    return local_check(make_fit(dataset), region, SETTINGS, out), out


def _same(res, out: Path, reference) -> None:
    ref, ref_out = reference
    assert comparable(res.summary) == comparable(ref.summary)
    assert (out / "flagged.csv").read_bytes() == (ref_out / "flagged.csv").read_bytes()
    assert res.worst == ref.worst
    np.testing.assert_array_equal(res.plot_samples, ref.plot_samples)
    np.testing.assert_array_equal(res.plot_region_coords, ref.plot_region_coords)
    np.testing.assert_array_equal(res.plot_weights, ref.plot_weights)


def test_two_workers_give_the_single_process_result_bit_for_bit(
        dataset, region, cluster, reference, tmp_path):
    res = dask_check(make_fit(dataset), region, SETTINGS, tmp_path,
                     scheduler=cluster.scheduler_address, partition_timeout=TIMEOUT)
    _same(res, tmp_path, reference)
    eng = res.summary["engine"]
    assert eng["name"] == "dask" and eng["workers"] == 2
    assert [p["rows"] for p in eng["partitions"]] == list(FILE_ROWS)
    assert res.summary["n_total"] == sum(FILE_ROWS)


def test_a_worker_killed_mid_run_still_gives_the_complete_result(
        dataset, region, cluster, reference, tmp_path):
    marker = tmp_path / "killed"
    res = dask_check(make_fit(dataset), region, SETTINGS, tmp_path / "out",
                     scheduler=cluster.scheduler_address, partition_timeout=TIMEOUT,
                     hook=KillOnce(str(marker), index=1))
    assert marker.exists()  # the worker really died once
    _same(res, tmp_path / "out", reference)
    cluster.wait_for_workers(2, timeout=TIMEOUT)


def test_a_partition_that_keeps_failing_is_named_after_its_retries(
        dataset, region, cluster, tmp_path):
    log = tmp_path / "attempts.log"
    with pytest.raises(TaskFailedError) as info:
        dask_check(make_fit(dataset), region, SETTINGS, tmp_path / "out",
                   scheduler=cluster.scheduler_address, retries=1, partition_timeout=TIMEOUT,
                   hook=FailAlways(str(log), index=4))
    err = info.value
    assert "partition 4 of 6 (part-004.parquet, rows 95001..100000)" in str(err)
    assert "after 2 attempt(s)" in str(err) and "injected read failure" in str(err)
    assert err.exit_code == 7
    assert log.read_text().split().count("4") == 2
    assert not (tmp_path / "out" / "flagged.csv").exists()
    assert list((tmp_path / "out").iterdir()) == []


def test_invalid_rows_come_back_as_input_error_without_retry(region, cluster, tmp_path):
    paths = write_parts(tmp_path / "d", (50, 50, 50))
    t = pq.read_table(paths[2]).to_pandas()
    t.loc[7, "lbar1"] = np.inf
    pq.write_table(pa.Table.from_pandas(t, preserve_index=False), paths[2])
    log = tmp_path / "attempts.log"
    with pytest.raises(InputError, match=r"NaN or inf in row\(s\) 107") as info:
        dask_check(make_fit(tmp_path / "d"), region, SETTINGS, None,
                   scheduler=cluster.scheduler_address, partition_timeout=TIMEOUT,
                   hook=FailAlways(str(log), index=-1))
    assert info.value.path == str(paths[2])
    assert log.read_text().split().count("2") == 1


def test_a_worker_that_dies_on_every_attempt_is_named(dataset, region, cluster, tmp_path,
                                                       monkeypatch):
    """With allowed-failures 0 the scheduler gives up at the first death (the scheduler of
    a LocalCluster lives in this process; a second cluster would compete for its ports)."""
    monkeypatch.setattr(cluster.scheduler, "allowed_failures", 0)
    with pytest.raises(TaskFailedError) as info:
        dask_check(make_fit(dataset), region, SETTINGS, tmp_path,
                   scheduler=cluster.scheduler_address, partition_timeout=TIMEOUT,
                   hook=KillAlways(index=0))
    assert str(info.value).startswith("partition 0 of 6 (part-000.parquet, rows 0..24999)")
    assert "worker process died" in str(info.value)
    assert not (tmp_path / "flagged.csv").exists()
    cluster.wait_for_workers(2, timeout=TIMEOUT)


def test_a_single_file_is_one_partition(dataset, region, cluster):
    fit = make_fit(dataset / "part-001.parquet")
    a = local_check(fit, region, SETTINGS, None)
    b = dask_check(fit, region, SETTINGS, None, scheduler=cluster.scheduler_address,
                   partition_timeout=TIMEOUT)
    assert comparable(a.summary) == comparable(b.summary)
    assert len(b.summary["engine"]["partitions"]) == 1


def test_unreachable_scheduler_is_an_input_error():
    with pytest.raises(InputError, match="cannot connect to 'tcp://127.0.0.1:9'") as info:
        with connect("tcp://127.0.0.1:9", connect_timeout=1.0):
            pass
    assert info.value.field == "--scheduler"


def test_missing_extra_gives_the_install_hint(dataset, region, monkeypatch):
    from eftsieve.check.many import check_many
    from eftsieve.region.build import parallel_region_builds

    monkeypatch.setitem(sys.modules, "distributed", None)
    for call in (lambda: dask_check(make_fit(dataset), region, SETTINGS, None),
                 lambda: parallel_region_builds([("chpt-su2", {})]),
                 lambda: check_many(["x.yaml"], SETTINGS, "out", engine="dask")):
        with pytest.raises(InputError) as info:
            call()
        err = info.value
        assert err.field == "--engine" and err.path is None
        assert err.problem == "the dask engine needs the optional extra"
        assert err.hint == "pip install 'eftsieve[dask]'"


def test_a_partition_that_never_finishes_is_named(dataset, region, cluster, tmp_path):
    from tests.check.faults import Sleep

    with pytest.raises(TaskFailedError, match=r"partition 0 of 6 .*no result within 0.5 s"):
        dask_check(make_fit(dataset), region, SETTINGS, tmp_path,
                   scheduler=cluster.scheduler_address, partition_timeout=0.5,
                   hook=Sleep(seconds=3.0, index=0))
    assert list(tmp_path.iterdir()) == []
