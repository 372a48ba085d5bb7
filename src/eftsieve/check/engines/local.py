"""The single-process engine of a partitioned check, and the engine switch.

:func:`local_check` streams a samples source one file at a time, block by block in the
canonical order of :mod:`eftsieve.check.blocks`, in this process and with bounded memory
(one chunk plus the flagged rows of one block at a time).  Its summary numbers and
flagged rows are bit-identical to :func:`eftsieve.check.engines.dask.dask_check` on the
same inputs, whatever the number of workers or BLAS threads.

Compared with :func:`eftsieve.check.run.run_check` (which sums blocks that run across
file boundaries and uses BLAS for the moments): the counts, ``n_total``, ``ess`` and the
probabilities inside are identical whenever every file but the last holds a multiple of
:data:`eftsieve.stats.accumulate.BLOCK` rows (in particular for one file); the moments, and hence
the tension, agree to rounding (about 1e-15 relative).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.check.engine import CheckMerger, PartitionJob, run_partition
from eftsieve.check.run import CheckResult, flagged_output, run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region

ENGINES = ("local", "dask")


def prepare(fit: Fit, region: Region, region_path: str | None):
    """The coordinate map of a fit to a region, after checking that they belong together."""
    from eftsieve.theories import get_theory

    if fit.theory != region.theory:
        raise InputError(region_path, "theory", f"region is for '{region.theory}' but the fit "
                         f"is '{fit.theory}'", "build the region for the fit's theory")
    return get_theory(fit.theory).coordinate_map(fit, region)


def gaussian_result(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
                    region_path: str | None, engine: str) -> CheckResult:
    """A Gaussian summary has no files to partition: it is drawn in this process."""
    res = run_check(fit, region, settings, outdir, region_path)
    res.summary["engine"] = {"name": engine, "mode": "gaussian summary drawn in one process",
                             "partitions": []}
    return res


def local_check(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
                region_path: str | None = None) -> CheckResult:
    """Check a fit in this process in the canonical per-file block order.

    Parameters
    ----------
    fit
        The fit; a samples source of one file, a directory or a glob of Parquet files.
        A Gaussian summary is handed to :func:`~eftsieve.check.run.run_check`.
    region
        The region.
    settings
        Check settings.
    outdir
        Where flagged.csv goes (written atomically), or None for no file.
    region_path
        The region file, recorded in the summary.

    Returns
    -------
    CheckResult
        As :func:`~eftsieve.check.run.run_check`, with ``summary["engine"]``.
    """
    if fit.samples is None:
        return gaussian_result(fit, region, settings, outdir, region_path, "local")
    cmap = prepare(fit, region, region_path)
    parts = fit.samples.file_parts()
    with flagged_output(outdir, fit, region) as flagged:
        merger = CheckMerger(fit, region, settings, parts, flagged)
        for part in parts:
            job = PartitionJob(part, fit, region, cmap, settings, flagged is not None)
            res = run_partition(job, sink=merger.add_block)
            merger.end_partition(part.index, part.start, res.n_rows)
        return merger.result(cmap, region_path, {"name": "local", "workers": 1})


def refuse_uncertainty(uncertainty: Any) -> None:
    """The partitioned engines classify with hard facets only; refuse a model."""
    if uncertainty is not None and getattr(uncertainty, "model", "none") != "none":
        raise InputError(None, "--theory-uncertainty", "a theory-uncertainty model is not "
                         "available with the partitioned engines (--engine, multi-file "
                         "samples)", "check a single samples file without --engine, or "
                         "drop --theory-uncertainty")


def check_with_engine(engine: str, fit: Fit, region: Region, settings: CheckSettings,
                      outdir: Path | None, region_path: str | None = None, *,
                      scheduler: str | None = None, retries: int = 2,
                      uncertainty: Any = None, **dask_options: Any) -> CheckResult:
    """Run a check with the named engine: ``local`` or ``dask``.

    ``scheduler``, ``retries`` and ``dask_options`` (see
    :func:`~eftsieve.check.engines.dask.dask_check`) apply to ``dask`` only; giving a
    scheduler with the local engine is an error rather than silently ignored, and so is
    an ``uncertainty`` model (:class:`eftsieve.stats.truncation.UncertaintySettings`) other
    than ``none``, which only :func:`~eftsieve.check.run.run_check` implements.
    """
    refuse_uncertainty(uncertainty)
    if engine == "local":
        if scheduler is not None:
            raise InputError(None, "--scheduler", "a scheduler address needs the dask engine",
                             "add --engine dask, or drop --scheduler")
        return local_check(fit, region, settings, outdir, region_path)
    if engine == "dask":
        from eftsieve.check.engines.dask import dask_check

        return dask_check(fit, region, settings, outdir, region_path, scheduler=scheduler,
                          retries=retries, **dask_options)
    raise InputError(None, "--engine", f"unknown engine '{engine}'",
                     f"use one of {', '.join(ENGINES)}")
