"""The single-process engine: every check, block by block, in this process.

:func:`local_check` reads the rows one partition (file, or the Gaussian draws) at a
time, block by block in the canonical order of :mod:`eftsieve.check.blocks`, with
bounded memory: three chunks (the one being checked, one read ahead on a second thread
and one being read, :mod:`eftsieve.check.prefetch`) plus at most
:data:`eftsieve.check.outputs.MAX_CELLS` cells of flagged rows waiting.  It calls the
same kernel (:func:`eftsieve.check.engine.run_partition`) as the Dask engine, so every
count and every figure of the result is bit-identical to
:func:`eftsieve.check.engines.dask.dask_check` on the same inputs, whatever the chunk
size, the file split, the number of workers or of BLAS threads.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.check.engine import (
    CheckMerger,
    PartitionJob,
    blas_threads,
    finish,
    prepare,
    run_partition,
)
from eftsieve.check.outputs import flagged_output
from eftsieve.check.result import CheckResult
from eftsieve.check.verdicts import CheckSettings
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region


def local_check(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
                region_path: str | None = None, *, uncertainty: Any = None,
                progress: Any = None) -> CheckResult:
    """Check a fit in this process in the canonical block order.

    Parameters
    ----------
    fit
        The fit: a Gaussian summary, or a samples source (one file, a directory or a
        glob of Parquet files).
    region
        The region (of the fit's theory, or of one its theory matches onto).
    settings
        Check settings.
    outdir
        Where flagged.csv goes (written atomically), or None for no file.
    region_path
        The region file, recorded in the result.
    uncertainty
        An :class:`eftsieve.stats.truncation.UncertaintySettings`, or None.
    progress
        None, or an object with ``start(total_rows or None)`` and ``update(rows)``.

    Returns
    -------
    CheckResult
        With ``engine`` naming this engine and its partitions.
    """
    with blas_threads(settings.blas_threads):
        return _local_check(fit, region, settings, outdir, region_path, uncertainty, progress)


def _local_check(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
                 region_path: str | None, uncertainty: Any, progress: Any = None) -> CheckResult:
    prep = prepare(fit, region, settings, uncertainty)
    parts = prep.source.file_parts()
    if progress is not None:
        sizes = [p.n_rows for p in parts]
        progress.start(None if None in sizes else sum(s for s in sizes if s is not None))
    with flagged_output(outdir, fit, region, settings.flagged_format,
                         settings.flagged_margins, prep.cmap,
                         settings.flagged_limit) as flagged:
        merger = CheckMerger(fit, region, settings, parts, flagged, prep.source.weighted)
        for part in parts:
            job = PartitionJob(part, fit, prep.source, region, prep.cmap, settings,
                               flagged is not None, prep.uncertainty)
            res = run_partition(job, sink=merger.add_block if progress is None
                                else _counted(merger.add_block, progress))
            merger.end_partition(part.index, part.start, res.n_rows)
        result = merger.result(prep.cmap, region_path, {"name": "local", "workers": 1})
    return finish(result, prep, merger.acc)


def _counted(sink: Any, progress: Any) -> Any:
    """``sink`` that also tells ``progress`` how many rows each block held."""
    def add(block: Any) -> None:
        sink(block)
        progress.update(block.n)
    return add
