"""Scale-out on Dask: a check partition by partition, and region builds as futures.

:func:`dask_check` turns every file of a samples source into one ``dask.delayed`` task
(:func:`eftsieve.check.engine.partition_task`), computes them on a
``distributed`` cluster (a local cluster of two worker processes by default, or the
scheduler at ``scheduler``) and merges the results on the client strictly in partition
order, so the summary and flagged.csv are bit-identical to
:func:`eftsieve.check.engines.local.local_check`.

Faults: a task that raises is retried ``retries`` times (``distributed``'s task
retries); a task whose worker dies is rescheduled by the scheduler, up to
``distributed.scheduler.allowed-failures`` deaths (default 3).  A partition that still
fails stops the run with :class:`~eftsieve.errors.TaskFailedError` naming it
(file and rows); a partition is never dropped, and flagged.csv is not written.  Invalid
data (NaN rows, negative weights) is reported as the usual
:class:`~eftsieve.errors.InputError` without retrying.

Dask is imported inside the functions; without the optional extra every entry point
raises ``InputError`` with the install hint.
"""

from __future__ import annotations

import uuid
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from eftsieve.check.engine import (
    CheckMerger,
    PartitionJob,
    Prepared,
    describe_part,
    finish,
    partition_task,
    prepare,
)
from eftsieve.check.outputs import flagged_output
from eftsieve.check.result import CheckResult
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import TaskFailedError
from eftsieve.executors import InputFailure
from eftsieve.fit.model import Fit
from eftsieve.io.dask_client import cancel, connect, require_dask, wait_result
from eftsieve.io.samples import FilePart
from eftsieve.region.model import Region


@dataclass
class SubmittedCheck:
    """A check whose partitions run on the cluster.

    Attributes
    ----------
    fit, region, settings, region_path
        What is checked.
    prep
        The coordinate map, row source and uncertainty model.
    parts
        The partitions (files), in order.
    futures
        One future per partition, in order.
    engine
        The engine entry of the summary.
    """

    fit: Fit
    region: Region
    settings: CheckSettings
    region_path: str | None
    prep: Prepared
    parts: tuple[FilePart, ...]
    futures: list[Any]
    engine: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"fit": self.fit.name, "parts": [p.to_dict() for p in self.parts],
                "engine": self.engine}


def submit_check(client: Any, fit: Fit, region: Region, settings: CheckSettings, *,
                 write_flagged: bool, region_path: str | None = None, retries: int = 2,
                 hook: Callable[[FilePart], None] | None = None,
                 uncertainty: Any = None) -> SubmittedCheck:
    """Submit one ``dask.delayed`` task per partition (file, or the Gaussian draws)."""
    import dask

    prep = prepare(fit, region, settings, uncertainty)
    source = prep.source
    if fit.samples is not None:  # workers may run in another directory: absolute paths
        source = replace(fit.samples, path=fit.samples.path.absolute())
        fit = replace(fit, samples=source)
        prep = replace(prep, source=source)
        parts = tuple(replace(p, path=p.path.absolute()) for p in source.file_parts())
    else:
        parts = source.file_parts()
    token = f"eftsieve-check-{uuid.uuid4().hex[:12]}"
    task = dask.delayed(partition_task, pure=False)
    jobs = [PartitionJob(p, fit, source, region, prep.cmap, settings, write_flagged,
                         prep.uncertainty) for p in parts]
    values = [task(job, hook, dask_key_name=(token, job.part.index)) for job in jobs]
    futures = list(client.compute(values, retries=retries))
    engine = {"name": "dask", "scheduler": str(client.scheduler.address),
              "workers": len(client.nthreads()), "retries": retries}
    return SubmittedCheck(fit, region, settings, region_path, prep, parts, futures, engine)


def collect_check(sub: SubmittedCheck, outdir: Path | None,
                  partition_timeout: float | None = None) -> CheckResult:
    """Merge the partitions of a submitted check in order; write flagged.csv atomically."""
    retries = int(sub.engine.get("retries", 0))
    with flagged_output(outdir, sub.fit, sub.region, sub.settings.flagged_format,
                         sub.settings.flagged_margins, sub.prep.cmap,
                         sub.settings.flagged_limit) as flagged:
        return _merge_in_order(sub, flagged, partition_timeout, retries)


def _merge_in_order(sub: SubmittedCheck, flagged: Any, partition_timeout: float | None,
                    retries: int) -> CheckResult:
    """Wait for the partitions in order and merge them; cancel the rest on failure."""
    merger = CheckMerger(sub.fit, sub.region, sub.settings, sub.parts, flagged,
                         sub.prep.source.weighted)
    try:
        for i, part in enumerate(sub.parts):
            try:
                res = wait_result(sub.futures[i], describe_part(part, len(sub.parts)),
                                  partition_timeout, retries)
            except TaskFailedError as err:
                raise with_other_failures(err, sub, i) from err.__cause__
            if isinstance(res, InputFailure):
                raise res.error()
            merger.add_partition(res)
            sub.futures[i].release()
            sub.futures[i] = None
        result = merger.result(sub.prep.cmap, sub.region_path, sub.engine)
        return finish(result, sub.prep, merger.acc)
    except BaseException:
        cancel(sub.futures)
        raise


def with_other_failures(err: TaskFailedError, sub: SubmittedCheck, i: int
                        ) -> TaskFailedError:
    """``err``, also naming the other partitions that have failed by now."""
    others = [describe_part(p, len(sub.parts)) for j, (p, f) in
              enumerate(zip(sub.parts, sub.futures, strict=True))
              if j != i and f is not None and f.status == "error"]
    if not others:
        return err
    return TaskFailedError(err.task, f"{err.problem}; also failed by now: {', '.join(others)}",
                           err.hint)


def dask_check(fit: Fit, region: Region, settings: CheckSettings, outdir: Path | None,
               region_path: str | None = None, *, scheduler: str | None = None,
               retries: int = 2, partition_timeout: float | None = None,
               hook: Callable[[FilePart], None] | None = None,
               uncertainty: Any = None) -> CheckResult:
    """Check a fit on a Dask cluster, one partition per file, merged in order.

    Parameters
    ----------
    fit, region, settings, outdir, region_path
        As :func:`eftsieve.check.run.run_check`.  A Gaussian summary is one partition
        (its draws), checked on a worker like a file.
    scheduler
        Address of a running scheduler (``tcp://host:8786``); None starts a local
        cluster of two worker processes for this call.
    retries
        How often a partition that raises is retried before the run fails.
    partition_timeout
        Seconds to wait for each partition's result (None: no limit).
    hook
        Called on the worker with the partition's :class:`~eftsieve.io.samples.FilePart`
        before each attempt (instrumentation, fault-injection tests); must be picklable.

    Returns
    -------
    CheckResult
        With ``summary["engine"]`` naming the engine, scheduler and partitions.

    Raises
    ------
    InputError
        Invalid input, or the optional extra is missing.
    TaskFailedError
        A partition failed after its retries, or rows went missing; names the partition.
    """
    require_dask()
    with connect(scheduler) as client:
        sub = submit_check(client, fit, region, settings, write_flagged=outdir is not None,
                           region_path=region_path, retries=retries, hook=hook,
                           uncertainty=uncertainty)
        return collect_check(sub, outdir, partition_timeout)






