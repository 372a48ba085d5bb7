"""Dask plumbing shared by every distributed job: clusters, clients, futures, task maps.

Dask is imported inside the functions; without the optional extra
(``pip install 'eftsieve[dask]'``) every entry point raises
:class:`~eftsieve.errors.InputError` with the install hint.  Local clusters start
without a dashboard port of their own choosing (port 0 on the loopback interface), so a
busy port 8787 cannot stop them.

Interruptions (Ctrl-C, SIGTERM) of a run on a local cluster end quietly: the worker
processes are started with SIGINT ignored, so a Ctrl-C at the terminal (which signals the
whole process group) reaches only the client, which then closes the cluster with a short
timeout while distributed's shutdown chatter is silenced; the workers' scratch folder is
a temporary folder of our own, removed on every exit path.
"""

from __future__ import annotations

import asyncio
import concurrent.futures
import logging
import shutil
import signal
import tempfile
import threading
import uuid
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from eftsieve.errors import InputError, TaskFailedError

LOCAL_WORKERS = 2
CONNECT_TIMEOUT = 60.0
#: seconds a local cluster gets to close after an interruption before its workers are killed
INTERRUPTED_CLOSE_TIMEOUT = 2.0


def require_dask() -> None:
    """Raise the install hint unless ``dask`` and ``distributed`` import."""
    try:
        import dask  # noqa: F401
        import distributed  # noqa: F401
    except ImportError as err:
        raise InputError(None, "--engine", "the dask engine needs the optional extra",
                         "pip install 'eftsieve[dask]'") from err


def local_cluster(n_workers: int = LOCAL_WORKERS, local_directory: str | None = None) -> Any:
    """A ``LocalCluster`` of single-threaded worker processes on the loopback interface,
    without a dashboard.

    The workers keep distributed's single-threaded BLAS settings but not its
    ``MALLOC_TRIM_THRESHOLD_``: that setting switches off glibc's adaptive mmap threshold,
    so every large temporary array is mapped and zero-filled afresh, which made a check
    about twice as slow (see docs/scaleout.md).  The worker processes start with SIGINT
    ignored (:func:`_sigint_ignored`): a Ctrl-C interrupts the client, which closes them.
    Below ``--debug`` logging the workers print only critical records: a failed task
    reaches the client as :class:`~eftsieve.errors.TaskFailedError` with its exception,
    and a worker's heartbeat error while a finished cluster shuts down is noise.
    """
    import dask
    from distributed import LocalCluster

    env = dict(dask.config.get("distributed.nanny.pre-spawn-environ", default={}) or {})
    env.pop("MALLOC_TRIM_THRESHOLD_", None)
    quiet = not logging.getLogger().isEnabledFor(logging.DEBUG)
    with dask.config.set({"distributed.nanny.pre-spawn-environ": env}), _sigint_ignored():
        return LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                            dashboard_address="127.0.0.1:0", host="127.0.0.1",
                            local_directory=local_directory,
                            silence_logs=logging.CRITICAL if quiet else logging.WARN)


@contextmanager
def _sigint_ignored() -> Iterator[None]:
    """SIGINT ignored while worker processes are spawned: a spawned process inherits an
    ignored signal, and Python then installs no KeyboardInterrupt handler in it.  (A
    Ctrl-C in the second or so this takes is lost; the next one interrupts the run.)"""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, previous)


#: level of distributed's loggers after an interruption: above every record
SILENT = logging.CRITICAL + 1


@contextmanager
def _distributed_level(level: int) -> Iterator[None]:
    """distributed's loggers in this process print records of ``level`` and above.

    After an interruption (the block raised KeyboardInterrupt or SIGTERM's exception)
    they stay silent: the cluster's event loop may still be cancelling a worker restart
    when the block has ended, and the process is about to exit.
    """
    logger = logging.getLogger("distributed")
    old = logger.level
    logger.setLevel(level)
    try:
        yield
    except BaseException as err:
        if not isinstance(err, Exception):
            old = SILENT
        raise
    finally:
        logger.setLevel(old)


@contextmanager
def _local_client(connect_timeout: float) -> Iterator[Any]:
    """A client on a new local cluster.  Below ``--debug`` logging, distributed prints
    errors only; after an interruption, nothing.  The cluster and its scratch folder
    (``temporary-directory``, a folder of our own) are removed on every exit path."""
    import dask
    from distributed import Client

    quiet = not logging.getLogger().isEnabledFor(logging.DEBUG)
    scratch = tempfile.mkdtemp(prefix="eftsieve-dask-")
    try:
        with dask.config.set({"temporary-directory": scratch}), \
                _distributed_level(logging.ERROR if quiet else logging.NOTSET):
            cluster = local_cluster(local_directory=scratch)
            interrupted = False
            try:
                with Client(cluster, timeout=connect_timeout) as client:
                    yield client
            except BaseException as err:  # Ctrl-C, SIGTERM: not an Exception
                interrupted = not isinstance(err, Exception)
                raise
            finally:
                if interrupted:
                    _close_interrupted(cluster)
                else:
                    cluster.close(timeout=connect_timeout)
    finally:
        shutil.rmtree(scratch, ignore_errors=True)


def _close_interrupted(cluster: Any) -> None:
    """Close a local cluster after Ctrl-C or SIGTERM, quickly and without a word.

    The workers may be deep in a partition that cannot be cancelled, so their processes
    (ours) are killed first; the cluster is then closed with a short timeout.  Further
    Ctrl-C presses are ignored for these two seconds, distributed's logs are silenced,
    and a failure of the close is logged at debug level only: the run is over anyway.
    """
    import os

    pids = [getattr(n, "pid", None) for n in list(getattr(cluster, "workers", {}).values())]
    logging.getLogger("distributed").setLevel(SILENT)
    with _sigint_ignored():
        for pid in pids:
            if isinstance(pid, int) and pid > 0:
                try:
                    os.kill(pid, signal.SIGKILL)
                except OSError:  # already gone
                    pass
        try:
            cluster.close(timeout=INTERRUPTED_CLOSE_TIMEOUT)
        except Exception as err:  # noqa: BLE001 - the run is already interrupted
            logging.getLogger(__name__).debug("closing the interrupted cluster: %r", err)


@contextmanager
def connect(scheduler: str | None = None, *, connect_timeout: float = CONNECT_TIMEOUT
            ) -> Iterator[Any]:
    """A ``distributed.Client``: to ``scheduler``, or to a new local cluster of
    :data:`LOCAL_WORKERS` single-threaded worker processes (closed on exit, with its
    scratch folder)."""
    require_dask()
    from distributed import Client

    if scheduler is None:
        with _local_client(connect_timeout) as client:
            yield client
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
