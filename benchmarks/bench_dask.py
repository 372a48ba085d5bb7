"""Throughput of a partitioned check: one process against two local Dask workers.

A dataset of 2e7 weighted two-parameter samples in 8 Parquet files is written to a
temporary directory (deleted at the end) and checked against the default chpt-su2 region
(flagged.csv written) by each engine, best wall time of two runs:

- ``local_check``: this process, one file at a time (the canonical block order);
- ``dask_check`` on the engine's LocalCluster of 2 single-threaded worker processes
  (``eftsieve.io.dask_client.local_cluster``, started before the clock runs; its
  start-up time is shown separately).

Both runs must give the same summary numbers and the same flagged.csv bytes, which the
script asserts.  The last row measures how much parallel CPU the machine really offers
(two pure-Python loops at once against one), the ceiling of the speed-up.  Needs the
optional extra: ``pip install 'eftsieve[dask]'``.
"""

from __future__ import annotations

import importlib
import json
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from common import table

N_FILES = 8
ROWS_PER_FILE = 2_500_000
GROUP = 500_000


def write_dataset(d: Path) -> None:
    """N_FILES Parquet files of ROWS_PER_FILE rows (lbar1, lbar2, w)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(2024)
    schema = pa.schema([("lbar1", pa.float64()), ("lbar2", pa.float64()), ("w", pa.float64())])
    for i in range(N_FILES):
        with pq.ParquetWriter(d / f"part-{i:03d}.parquet", schema) as w:
            for _ in range(0, ROWS_PER_FILE, GROUP):
                w.write_table(pa.table({"lbar1": rng.normal(0.5, 1.2, GROUP),
                                        "lbar2": rng.normal(4.0, 0.5, GROUP),
                                        "w": rng.gamma(4.0, 0.25, GROUP)}, schema=schema))


def bench_fit(d: Path):
    from eftsieve.fit.conventions import Convention
    from eftsieve.fit.model import Fit, Parameter
    from eftsieve.io.samples import SamplesSource

    lbar = Convention("lbar", pion_mass_mev=139.57)
    return Fit("bench", "chpt-su2", (Parameter("lbar1", lbar), Parameter("lbar2", lbar)),
               {"pion_mass_mev": 139.57},
               samples=SamplesSource(d, "parquet", ("lbar1", "lbar2"), "w"))


def strip(summary: dict) -> str:
    return json.dumps({k: v for k, v in summary.items() if k not in ("settings", "engine")},
                      sort_keys=True)


def spin(n: int = 8_000_000) -> float:
    """CPU time of a pure-Python loop, in seconds of wall time."""
    t0 = time.perf_counter()
    x = 0
    for i in range(n):
        x += i
    return time.perf_counter() - t0


def effective_cores() -> float:
    """How many of the machine's cores really run at once: the throughput of two
    processes spinning side by side relative to one (2.0 on two free cores)."""
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(2) as pool:
        list(pool.map(spin, [100_000] * 2))  # start both processes first
        one = pool.submit(spin).result()
        t0 = time.perf_counter()
        list(pool.map(spin, [8_000_000] * 2))
        both = time.perf_counter() - t0
    return 2 * one / both


def timed(fn, repeat: int = 2):
    """The best wall time of ``repeat`` calls and the last result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def run(d: Path, region) -> tuple[list[list[str]], float]:
    """Local against Dask on ``region``: the table rows and the Dask speed-up."""
    from distributed import Client

    from eftsieve.check.engines.dask import dask_check
    from eftsieve.check.engines.local import local_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.io.dask_client import local_cluster

    fit, settings = bench_fit(d), CheckSettings()
    n = N_FILES * ROWS_PER_FILE
    t_local, a = timed(lambda: local_check(fit, region, settings, d / "local"))
    t0 = time.perf_counter()
    cluster = local_cluster(2)
    with Client(cluster) as client:  # warm-up: the workers import eftsieve once
        client.run(importlib.import_module, "eftsieve.check.engine")
    t_start = time.perf_counter() - t0
    try:
        t_dask, b = timed(lambda: dask_check(fit, region, settings, d / "dask",
                                             scheduler=cluster.scheduler_address))
    finally:
        cluster.close(timeout=60)
    assert a.summary["n_total"] == b.summary["n_total"] == n
    assert strip(a.summary) == strip(b.summary), "summaries differ"
    assert (d / "local/flagged.csv").read_bytes() == (d / "dask/flagged.csv").read_bytes()
    flagged = a.summary["n_marginal"] + a.summary["n_outside"]
    return ([["local_check (1 process)", f"{t_local:.1f} s", f"{n / t_local:,.0f}", "1.00"],
            ["dask_check, 2 local worker processes", f"{t_dask:.1f} s", f"{n / t_dask:,.0f}",
             f"{t_local / t_dask:.2f}"],
            ["(LocalCluster start-up and worker imports, not timed)", f"{t_start:.1f} s", "-",
             "-"],
            [f"(identical summary and flagged.csv: {flagged:,} flagged rows)", "-", "-", "-"],
            ["(effective parallel cores: two pure-Python loops side by side)", "-", "-",
             f"{effective_cores():.2f}"]], t_local / t_dask)


def main() -> str:
    """Two regions: the 3-facet chpt-su2 default (reading dominates) and a 68-facet polygon
    (classification dominates), to show where Dask starts to pay on this machine."""
    from bench_stream import polygon_region
    from common import load, target

    from eftsieve.theories import get_theory

    out, gains = [], {}
    with tempfile.TemporaryDirectory(prefix="eftsieve-bench-dask-") as tmp:
        d = Path(tmp)
        t0 = time.perf_counter()
        write_dataset(d)
        t_write = time.perf_counter() - t0
        cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else 2
        for label, region in (("3 facets (chpt-su2 default)",
                               get_theory("chpt-su2").build_region({})),
                              ("68 facets (synthetic polygon)", polygon_region(68, 3.0))):
            rows, gains[label] = run(d, region)
            out.append(table(f"check of {N_FILES * ROWS_PER_FILE:.0e} rows in {N_FILES} "
                             f"Parquet files, {label}, best of 2 ({cores} cores; dataset "
                             f"written in {t_write:.0f} s; {load()})",
                             ["engine", "wall time", "rows/s", "speed-up"], rows))
    few, many = gains.values()
    target("Dask: where it starts to pay (many files, a cluster, data larger than memory)",
           f"2 local workers: {few:.2f}x at 3 facets, {many:.2f}x at 68 facets",
           f"{many:.2f}x", many > 1.0, "pays when classification, not reading, dominates; "
           "docs/performance.md")
    return "\n".join(out)


if __name__ == "__main__":
    sys.exit(0 if main() else 1)
