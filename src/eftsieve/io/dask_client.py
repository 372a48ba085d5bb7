"""Dask plumbing shared by every distributed job: clusters, clients, futures, task maps.

Dask is imported inside the functions; without the optional extra
(``pip install 'eftsieve[dask]'``) every entry point raises
:class:`~eftsieve.errors.InputError` with the install hint.  Local clusters start
without a dashboard port of their own choosing (port 0 on the loopback interface), so a
busy port 8787 cannot stop them.
"""

from __future__ import annotations

import asyncio
import concurrent.futures
import uuid
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from eftsieve.errors import InputError, TaskFailedError

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


def client_map(client: Any, *, retries: int = 2, timeout: float | None = None) -> Any:
    """An executor (:data:`eftsieve.executors.Executor`) on an open client."""
    def run(fn: Any, args: Sequence[tuple[Any, ...]], names: Sequence[str]) -> list[Any]:
        import dask

        if len(args) != len(names):
            raise ValueError("one name per task")
        token = f"eftsieve-map-{uuid.uuid4().hex[:12]}"
        task = dask.delayed(fn, pure=False)
        futures = list(client.compute([task(*a, dask_key_name=(token, i))
                                       for i, a in enumerate(args)], retries=retries))
        try:
            return [wait_result(f, n, timeout, retries)
                    for f, n in zip(futures, names, strict=True)]
        except BaseException:
            cancel(futures)
            raise
    return run


def map_tasks(fn: Any, args: Sequence[tuple[Any, ...]], names: Sequence[str],
              scheduler: str | None = None, *, retries: int = 2,
              timeout: float | None = None) -> list[Any]:
    """``[fn(*a) for a in args]`` as distributed futures on ``scheduler`` (or a local
    cluster), results in order.  A task that fails after ``retries`` retries raises
    :class:`~eftsieve.errors.TaskFailedError` with its name; nothing is dropped."""
    require_dask()
    with connect(scheduler) as client:
        return client_map(client, retries=retries, timeout=timeout)(fn, args, names)
