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

import asyncio
import concurrent.futures
import uuid
import warnings
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from eftsieve.check.engine import (
    CheckMerger,
    InputFailure,
    PartitionJob,
    describe_part,
    partition_task,
)
from eftsieve.check.engines.local import gaussian_result, prepare
from eftsieve.check.run import CheckResult, flagged_output
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import InputError, TaskFailedError
from eftsieve.fit.model import Fit
from eftsieve.io.samples import FilePart
from eftsieve.region.model import Region

LOCAL_WORKERS = 2
CONNECT_TIMEOUT = 60.0


def require_dask() -> None:
    """Raise the install hint unless ``dask`` and ``distributed`` import."""
    try:
        import dask  # noqa: F401
        import distributed  # noqa: F401
    except ImportError as err:
        raise InputError(None, "--engine", "the dask engine needs the optional extra",
                         "pip install 'eftsieve[dask]'") from err


def local_cluster(n_workers: int = LOCAL_WORKERS) -> Any:
    """A ``LocalCluster`` of single-threaded worker processes on the loopback interface,
    without a dashboard.

    The workers keep distributed's single-threaded BLAS settings but not its
    ``MALLOC_TRIM_THRESHOLD_``: that setting switches off glibc's adaptive mmap threshold,
    so every large temporary array is mapped and zero-filled afresh, which made a check
    about twice as slow (see docs/scaleout.md).
    """
    import dask
    from distributed import LocalCluster

    env = dict(dask.config.get("distributed.nanny.pre-spawn-environ", default={}) or {})
    env.pop("MALLOC_TRIM_THRESHOLD_", None)
    with dask.config.set({"distributed.nanny.pre-spawn-environ": env}):
        return LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                            dashboard_address="127.0.0.1:0", host="127.0.0.1")


@contextmanager
def connect(scheduler: str | None = None, *, connect_timeout: float = CONNECT_TIMEOUT
            ) -> Iterator[Any]:
    """A ``distributed.Client``: to ``scheduler``, or to a new local cluster of
    :data:`LOCAL_WORKERS` single-threaded worker processes (closed on exit)."""
    require_dask()
    from distributed import Client

    if scheduler is None:
        cluster = local_cluster()
        try:
            with Client(cluster, timeout=connect_timeout) as client:
                yield client
        finally:
            cluster.close(timeout=connect_timeout)
        return
    try:
        client = Client(scheduler, timeout=connect_timeout)
    except (OSError, ValueError) as err:
        raise InputError(None, "--scheduler", f"cannot connect to '{scheduler}': {err}",
                         "give the scheduler's address (tcp://HOST:8786) and check it runs"
                         ) from err
    try:
        try:
            client.wait_for_workers(1, timeout=connect_timeout)
        except TimeoutError as err:
            raise TaskFailedError(f"scheduler {scheduler}", f"no worker joined within "
                                  f"{connect_timeout:g} s", "start workers: dask worker "
                                  f"{scheduler}") from err
        yield client
    finally:
        client.close(timeout=connect_timeout)


def wait_result(future: Any, task: str, timeout: float | None, retries: int) -> Any:
    """The result of one future, or :class:`TaskFailedError` naming ``task``."""
    from distributed import KilledWorker

    try:
        return future.result(timeout=timeout)
    except KilledWorker as err:
        raise TaskFailedError(task, f"its worker process died while running it, on every "
                              f"allowed attempt ({err})", "give the workers more memory or "
                              "split the file; see the workers' logs") from err
    except TimeoutError as err:
        if timeout is None:  # raised by the task itself
            raise TaskFailedError(task, f"failed after {retries + 1} attempt(s): "
                                  f"TimeoutError: {err}", "see the workers' logs") from err
        raise TaskFailedError(task, f"no result within {timeout:g} s (or the task itself "
                              f"timed out: {err})", "raise the timeout, or check that "
                              "workers are running") from err
    except (asyncio.CancelledError, concurrent.futures.CancelledError) as err:
        raise TaskFailedError(task, "was cancelled (the client lost the scheduler, or the "
                              "scheduler lost the task)", "rerun; check the cluster") from err
    except Exception as err:  # a task may raise anything; name the task and keep the cause
        raise TaskFailedError(task, f"failed after {retries + 1} attempt(s): "
                              f"{type(err).__name__}: {err}",
                              "see the workers' logs for the traceback") from err


def cancel(futures: Sequence[Any]) -> None:
    """Cancel the futures that are still pending (best effort, on the way out of an error)."""
    pending = [f for f in futures if f is not None and not f.done()]
    if pending:
        pending[0].client.cancel(pending)


@dataclass
class SubmittedCheck:
    """A check whose partitions run on the cluster.

    Attributes
    ----------
    fit, region, settings, region_path
        What is checked.
    cmap
        The coordinate map.
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
    cmap: Any
    parts: tuple[FilePart, ...]
    futures: list[Any]
    engine: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"fit": self.fit.name, "parts": [p.to_dict() for p in self.parts],
                "engine": self.engine}


def submit_check(client: Any, fit: Fit, region: Region, settings: CheckSettings, *,
                 write_flagged: bool, region_path: str | None = None, retries: int = 2,
                 hook: Callable[[FilePart], None] | None = None) -> SubmittedCheck:
    """Submit one ``dask.delayed`` task per file of ``fit``'s samples source."""
    import dask

    assert fit.samples is not None
    cmap = prepare(fit, region, region_path)
    # workers may run in another directory: send absolute paths
    source = replace(fit.samples, path=fit.samples.path.absolute())
    fit = replace(fit, samples=source)
    parts = tuple(replace(p, path=p.path.absolute()) for p in source.file_parts())
    token = f"eftsieve-check-{uuid.uuid4().hex[:12]}"
    task = dask.delayed(partition_task, pure=False)
    jobs = [PartitionJob(p, fit, region, cmap, settings, write_flagged) for p in parts]
    values = [task(job, hook, dask_key_name=(token, job.part.index)) for job in jobs]
    futures = list(client.compute(values, retries=retries))
    engine = {"name": "dask", "scheduler": str(client.scheduler.address),
              "workers": len(client.nthreads()), "retries": retries}
    return SubmittedCheck(fit, region, settings, region_path, cmap, parts, futures, engine)


def collect_check(sub: SubmittedCheck, outdir: Path | None,
                  partition_timeout: float | None = None) -> CheckResult:
    """Merge the partitions of a submitted check in order; write flagged.csv atomically."""
    retries = int(sub.engine.get("retries", 0))
    with flagged_output(outdir, sub.fit, sub.region) as flagged:
        return _merge_in_order(sub, flagged, partition_timeout, retries)


def _merge_in_order(sub: SubmittedCheck, flagged: Any, partition_timeout: float | None,
                    retries: int) -> CheckResult:
    """Wait for the partitions in order and merge them; cancel the rest on failure."""
    merger = CheckMerger(sub.fit, sub.region, sub.settings, sub.parts, flagged)
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
        return merger.result(sub.cmap, sub.region_path, sub.engine)
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
               hook: Callable[[FilePart], None] | None = None) -> CheckResult:
    """Check a fit on a Dask cluster, one partition per file, merged in order.

    Parameters
    ----------
    fit, region, settings, outdir, region_path
        As :func:`eftsieve.check.run.run_check`.  A Gaussian summary has nothing to
        partition and is drawn in this process.
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
    if fit.samples is None:
        return gaussian_result(fit, region, settings, outdir, region_path, "dask")
    with connect(scheduler) as client:
        sub = submit_check(client, fit, region, settings, write_flagged=outdir is not None,
                           region_path=region_path, retries=retries, hook=hook)
        return collect_check(sub, outdir, partition_timeout)


@dataclass(frozen=True)
class RegionTask:
    """One region build: ``get_theory(theory).build_region(settings)``.

    Attributes
    ----------
    theory
        The theory name.
    settings
        The build settings.
    label
        A name for messages (default: theory and settings).
    """

    theory: str
    settings: dict[str, Any]
    label: str | None = None

    def name(self, index: int, n: int) -> str:
        what = self.label or f"{self.theory} {self.settings}"
        return f"region build {index} of {n} ({what})"

    def to_dict(self) -> dict[str, Any]:
        return {"theory": self.theory, "settings": dict(self.settings), "label": self.label}


def build_region_task(theory: str, settings: dict[str, Any]
                      ) -> tuple[Region, list[tuple[type[Warning], str]]] | InputFailure:
    """Build one region on a worker; its warnings are returned to be re-issued."""
    from eftsieve.theories import get_theory

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            region = get_theory(theory).build_region(settings)
        except InputError as err:
            return InputFailure(-1, err.path, err.field, err.problem, err.hint)
        except KeyError as err:
            return InputFailure(-1, None, "theory", str(err.args[0]),
                                    "run `eftsieve theories`")
    return region, [(w.category, str(w.message)) for w in caught]


def parallel_region_builds(tasks: Sequence[RegionTask | tuple[str, dict[str, Any]]],
                           scheduler: str | None = None, *, retries: int = 2,
                           timeout: float | None = None) -> list[Region]:
    """Build independent regions as distributed futures; the regions in task order.

    Each task is a :class:`RegionTask` or a ``(theory, settings)`` pair.  Warnings raised
    by a build (e.g. :class:`~eftsieve.errors.KinematicsWarning`) are re-issued here.
    A build that fails after ``retries`` retries raises
    :class:`~eftsieve.errors.TaskFailedError` naming it.
    """
    require_dask()
    todo = [t if isinstance(t, RegionTask) else RegionTask(t[0], dict(t[1])) for t in tasks]
    if not todo:
        return []
    with connect(scheduler) as client:
        return region_builds_on(client, todo, retries=retries, timeout=timeout)


def region_builds_on(client: Any, todo: Sequence[RegionTask], *, retries: int = 2,
                     timeout: float | None = None) -> list[Region]:
    """:func:`parallel_region_builds` on an open client."""
    import dask

    token = f"eftsieve-region-{uuid.uuid4().hex[:12]}"
    task = dask.delayed(build_region_task, pure=False)
    futures = list(client.compute([task(t.theory, t.settings, dask_key_name=(token, i))
                                   for i, t in enumerate(todo)], retries=retries))
    out: list[Region] = []
    try:
        for i, (t, fut) in enumerate(zip(todo, futures, strict=True)):
            res = wait_result(fut, t.name(i, len(todo)), timeout, retries)
            if isinstance(res, InputFailure):
                raise res.error()
            region, caught = res
            for category, message in caught:
                warnings.warn(f"{t.name(i, len(todo))}: {message}", category, stacklevel=3)
            out.append(region)
    except BaseException:
        cancel(futures)
        raise
    return out


def map_tasks(fn: Any, args: Sequence[tuple[Any, ...]], names: Sequence[str],
              scheduler: str | None = None, *, retries: int = 2,
              timeout: float | None = None) -> list[Any]:
    """``[fn(*a) for a in args]`` as distributed futures, results in order.

    Used for independent solves inside one region build (the directions of a scalar-eft
    region).  A task that fails after ``retries`` retries raises
    :class:`~eftsieve.errors.TaskFailedError` with its name; nothing is dropped.
    """
    require_dask()
    import dask

    if len(args) != len(names):
        raise ValueError("one name per task")
    token = f"eftsieve-map-{uuid.uuid4().hex[:12]}"
    task = dask.delayed(fn, pure=False)
    with connect(scheduler) as client:
        futures = list(client.compute([task(*a, dask_key_name=(token, i))
                                       for i, a in enumerate(args)], retries=retries))
        try:
            return [wait_result(f, n, timeout, retries)
                    for f, n in zip(futures, names, strict=True)]
        except BaseException:
            cancel(futures)
            raise
