"""Scale-out of ``check``: multi-file sources, exact partitioned sums, a Dask engine.

- :func:`~eftsieve.scale.local_engine.local_check`: one process, one file at a time,
  in the canonical block order (bit-identical to the Dask engine).
- :func:`~eftsieve.scale.dask_engine.dask_check`: one partition per file on a Dask
  cluster, merged in partition order on the client.
- :func:`~eftsieve.scale.local_engine.check_with_engine`: either, by name.
- :func:`~eftsieve.scale.many.check_many`: several fit cards, one summary table.
- :func:`~eftsieve.scale.dask_engine.parallel_region_builds`: region builds as futures.

Nothing here imports Dask until a Dask engine function is called; without the
optional extra (``pip install 'eftsieve[dask]'``) those raise
:class:`~eftsieve.errors.InputError` with the install hint.  See docs/scaleout.md.
"""

from __future__ import annotations

from eftsieve.scale.dask_engine import (
    RegionTask,
    dask_check,
    parallel_region_builds,
    require_dask,
)
from eftsieve.scale.local_engine import ENGINES, check_with_engine, local_check
from eftsieve.scale.many import ManyResult, check_many, write_summary_table
from eftsieve.scale.partition import TaskFailedError

__all__ = ["ENGINES", "ManyResult", "RegionTask", "TaskFailedError", "check_many",
           "check_with_engine", "dask_check", "local_check", "parallel_region_builds",
           "require_dask", "write_summary_table"]
