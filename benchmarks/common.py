"""Shared helpers of the benchmark scripts: timing, one-core pinning, markdown tables,
and the one-line target records that ``run_all.py`` gathers into docs/performance.md."""

from __future__ import annotations

import json
import os
import statistics
import time
from collections.abc import Callable

#: prefix of the machine-readable target lines (run_all.py collects them)
TARGET_PREFIX = "TARGET "


def one_core() -> None:
    """Pin this process to one core (where the OS allows), for single-core figures."""
    if hasattr(os, "sched_setaffinity"):
        os.sched_setaffinity(0, {sorted(os.sched_getaffinity(0))[0]})


def best_time(fn: Callable[[], object], repeat: int = 3) -> float:
    """The best wall time of ``repeat`` calls, in seconds."""
    return min(times(fn, repeat))


def times(fn: Callable[[], object], repeat: int = 3) -> list[float]:
    """Wall times of ``repeat`` calls, in seconds."""
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return out


def spread(values: list[float], fmt: str = "{:.3g}") -> str:
    """``median (min-max)``."""
    return (f"{fmt.format(statistics.median(values))} "
            f"({fmt.format(min(values))}-{fmt.format(max(values))})")


def load() -> str:
    """The machine's load while measuring (1-minute load average, cores)."""
    return f"load average {os.getloadavg()[0]:.1f} on {len(os.sched_getaffinity(0))} cores"


def target(name: str, measured: str, ratio: str, met: bool, note: str = "") -> None:
    """Print one target record: what, the measured median (min-max), the ratio, met."""
    print(TARGET_PREFIX + json.dumps({"target": name, "measured": measured, "ratio": ratio,
                                      "met": bool(met), "note": note}))


def table(title: str, header: list[str], rows: list[list[str]]) -> str:
    """A markdown table with a heading; printed and returned."""
    lines = [f"### {title}", "", "| " + " | ".join(header) + " |",
             "|" + "|".join("---" for _ in header) + "|"]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    text = "\n".join(lines) + "\n"
    print(text)
    return text
