"""Executors: how independent tasks are mapped, chosen by the caller and injected.

An :data:`Executor` is a function ``(fn, args, names) -> results`` that returns
``[fn(*a) for a in args]`` in order, however it runs them; ``names`` name the tasks in
error messages.  Region builds take one from their caller (so a theory never imports an
engine); :func:`serial` runs in this process, :func:`processes` in a local process pool,
:func:`dask_map` on a Dask cluster (:mod:`eftsieve.io.dask_client`).

A task that stops on invalid input returns an :class:`InputFailure` value rather than
raising, so that it is not retried and reaches the caller intact (eftsieve's errors do
not all survive pickling); :func:`raise_failures` turns it back into the error.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from eftsieve.errors import InputError, TaskFailedError

#: ``executor(fn, args, names) -> [fn(*a) for a in args]``, in order
Executor = Callable[[Callable[..., Any], Sequence[tuple[Any, ...]], Sequence[str]], list[Any]]


@dataclass(frozen=True)
class InputFailure:
    """A task (a partition, a region build) that stopped on invalid input: returned as a
    value, so that it is not retried (the input will not change).

    Attributes
    ----------
    index
        The partition's index (-1 for other tasks).
    path, field, problem, hint
        The :class:`~eftsieve.errors.InputError` it raised.
    """

    index: int
    path: str | None
    field: str | None
    problem: str
    hint: str

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "path": self.path, "field": self.field,
                "problem": self.problem, "hint": self.hint}

    def error(self) -> InputError:
        return InputError(self.path, self.field, self.problem, self.hint)


def serial(fn: Callable[..., Any], args: Sequence[tuple[Any, ...]],
           names: Sequence[str]) -> list[Any]:
    """Run the tasks one after another in this process."""
    return [fn(*a) for a in args]


def processes(n_workers: int = 2) -> Executor:
    """An executor on a local pool of ``n_workers`` processes (results in order)."""
    def run(fn: Callable[..., Any], args: Sequence[tuple[Any, ...]],
            names: Sequence[str]) -> list[Any]:
        from concurrent.futures import ProcessPoolExecutor

        with ProcessPoolExecutor(max_workers=n_workers) as pool:
            futures = [pool.submit(fn, *a) for a in args]
            out = []
            for fut, name in zip(futures, names, strict=True):
                try:
                    out.append(fut.result())
                except InputError:
                    raise
                except Exception as err:  # a task may raise anything; name it
                    raise TaskFailedError(name, f"{type(err).__name__}: {err}",
                                          "rerun with the serial executor to debug") from err
            return out
    return run


def dask_map(scheduler: str | None = None, *, retries: int = 2,
             timeout: float | None = None) -> Executor:
    """An executor on a Dask cluster (a local one of two workers when ``scheduler`` is None)."""
    def run(fn: Callable[..., Any], args: Sequence[tuple[Any, ...]],
            names: Sequence[str]) -> list[Any]:
        from eftsieve.io.dask_client import map_tasks

        return map_tasks(fn, args, names, scheduler, retries=retries, timeout=timeout)
    return run


def raise_failures(results: Sequence[Any]) -> None:
    """Raise the first :class:`InputFailure` among task results as its InputError."""
    for r in results:
        if isinstance(r, InputFailure):
            raise r.error()
