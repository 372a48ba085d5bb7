"""Shared helpers of the benchmark scripts: timing, one-core pinning, markdown tables."""

from __future__ import annotations

import os
import time
from collections.abc import Callable


def one_core() -> None:
    """Pin this process to one core (where the OS allows), for single-core figures."""
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {sorted(os.sched_getaffinity(0))[0]})


def best_time(fn: Callable[[], object], repeat: int = 3) -> float:
    """The best wall time of ``repeat`` calls, in seconds."""
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def table(title: str, header: list[str], rows: list[list[str]]) -> str:
    """A markdown table with a heading; printed and returned."""
    lines = [f"### {title}", "", "| " + " | ".join(header) + " |",
             "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    text = "\n".join(lines) + "\n"
    print(text)
    return text
