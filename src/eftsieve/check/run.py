"""The ``check`` job: classify a fit against a region, with statistics, on one engine.

Use :func:`eftsieve.check` (or :func:`run_check`) from scripts; ``eftsieve check`` calls
it.  Every engine runs the same block kernel (:mod:`eftsieve.check.engine`): the rows of
the fit (a samples source, or draws from its Gaussian summary with an explicit seed) are
read partition by partition, classified block by block and accounted for exactly (the
counts always add up to the rows read).  flagged.csv is written atomically and never
over an input.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from eftsieve.check.result import CheckResult
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region

#: the engines :func:`run_check` offers
ENGINES = ("local", "dask")


def run_check(fit: Fit, region: Region, settings: CheckSettings | None = None,
              outdir: Path | None = None, region_path: str | None = None,
              uncertainty: Any = None, *, engine: str = "local",
              scheduler: str | None = None, progress: Any = None,
              **dask_options: Any) -> CheckResult:
    """Classify the fit against the region and compute the statistics.

    Parameters
    ----------
    fit, region
        What to check; the region is of the fit's theory, or of one that the fit's theory
        has a matching onto.
    settings
        Check settings (draws, seed, band, chunk rows, plot points); defaults if None.
    outdir
        Where flagged.csv goes, or None for none.
    region_path
        The region file, recorded in the result.
    uncertainty
        An :class:`eftsieve.stats.truncation.UncertaintySettings` (model other than
        ``none``: probabilistic verdicts, and the result's ``theory_uncertainty``).
    engine
        ``local`` (this process) or ``dask`` (one task per partition); both give the same
        result bit for bit.
    progress
        For ``local`` only: an object with ``start(total_rows or None)`` and
        ``update(rows)`` told of every block classified (a progress bar), or None.
    scheduler, dask_options
        For ``dask`` only: the scheduler address (None: a local cluster), ``retries``,
        ``partition_timeout``, ``hook``.
    """
    settings = settings or CheckSettings()
    if engine == "local":
        if scheduler is not None or dask_options:
            raise InputError(None, "--scheduler", "a scheduler address needs the dask engine",
                             "add --engine dask, or drop --scheduler")
        from eftsieve.check.engines.local import local_check

        return local_check(fit, region, settings, outdir, region_path, uncertainty=uncertainty,
                           progress=progress)
    if engine == "dask":
        from eftsieve.check.engines.dask import dask_check

        return dask_check(fit, region, settings, outdir, region_path, scheduler=scheduler,
                          uncertainty=uncertainty, **dask_options)
    raise InputError(None, "--engine", f"unknown engine '{engine}'",
                     f"use one of {', '.join(ENGINES)}")
