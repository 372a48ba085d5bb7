"""Fixtures of the scale-out tests: a partitioned Parquet dataset, a region, a cluster.

The cluster is one ``LocalCluster`` of two single-threaded worker processes on the
loopback interface, without a dashboard, shared by the whole session and closed at the
end with a bounded timeout.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.io.samples import SamplesSource
from eftsieve.theories.chpt_su2.conventions import convention

LBAR = convention("lbar", pion_mass_mev=139.57)
#: rows of the files of the standard dataset: a file longer than one block, a file of
#: one row, an empty file; 140,004 rows in all
FILE_ROWS = (25_000, 70_000, 1, 0, 5_000, 40_003)
CLUSTER_TIMEOUT = 30


def write_parts(directory: Path, sizes: tuple[int, ...], seed: int = 7,
                prefix: str = "part") -> list[Path]:
    """Parquet files ``prefix-000.parquet``... with columns lbar1, lbar2, nu, w."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    directory.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    paths = []
    for i, n in enumerate(sizes):
        table = pa.table({"lbar1": rng.normal(-0.5, 1.5, n), "lbar2": rng.normal(4.3, 0.8, n),
                          "nu": rng.normal(0.0, 1.0, n), "w": rng.gamma(2.0, 0.5, n)})
        path = directory / f"{prefix}-{i:03d}.parquet"
        pq.write_table(table, path, row_group_size=12_345)
        paths.append(path)
    return paths


def make_fit(path: Path, weighted: bool = True, name: str = "toy-multi") -> Fit:
    """A chpt-su2 fit over ``path`` (a file, directory or glob): lbar1, lbar2, nuisance nu."""
    params = (Parameter("lbar1", LBAR), Parameter("lbar2", LBAR),
              Parameter("nu", Convention("none")))
    source = SamplesSource(path, "parquet", ("lbar1", "lbar2", "nu"), "w" if weighted else None)
    return Fit(name, "chpt-su2", params, {"pion_mass_mev": 139.57}, samples=source)


def comparable(summary: dict) -> str:
    """The summary as JSON without the fields that name the engine or its settings."""
    return json.dumps({k: v for k, v in summary.items() if k not in ("settings", "engine")},
                      sort_keys=True)


@pytest.fixture(scope="session")
def dataset(tmp_path_factory) -> Path:
    """A directory of six Parquet files, 140,004 rows."""
    d = tmp_path_factory.mktemp("partitioned")
    write_parts(d, FILE_ROWS)
    return d


@pytest.fixture(scope="session")
def region():
    """The cheap chpt-su2 region (second-derivative family only)."""
    from eftsieve.theories import get_theory

    return get_theory("chpt-su2").build_region({"families": ["second-derivative"]})


@pytest.fixture(scope="session")
def cluster():
    """A LocalCluster of two single-threaded worker processes (loopback, no dashboard)."""
    distributed = pytest.importorskip("distributed")
    cl = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address="127.0.0.1:0", host="127.0.0.1")
    try:
        yield cl
    finally:
        cl.close(timeout=CLUSTER_TIMEOUT)
