"""Run the benchmarks and write benchmarks/results.md and the target table of
docs/performance.md (``make bench``; ``run_all.py bench_stream.py ...`` runs a subset).

Each script prints its tables and one ``TARGET {json}`` line per issue-18 target
(:func:`common.target`); the targets are gathered into one table, with the targets no
script reported in this run listed as not measured.
"""

from __future__ import annotations

import datetime
import json
import os
import platform
import subprocess
import sys
from pathlib import Path

from common import TARGET_PREFIX

HERE = Path(__file__).resolve().parent
PERF = HERE.parent / "docs" / "performance.md"
SCRIPTS = ["bench_stream.py", "bench_refit.py", "bench_region.py", "bench_classify.py",
           "bench_exact.py", "bench_scalar_eft.py", "bench_su3.py", "bench_tension.py",
           "bench_dask.py", "bench_readers.py", "bench_cones.py"]
#: targets whose scripts print no target line yet
UNREPORTED: list[str] = []
BEGIN, END = "<!-- targets:begin -->", "<!-- targets:end -->"


def target_table(records: list[dict], ran: list[str]) -> str:
    lines = ["| target | measured: median (min-max) | ratio | met |", "|---|---|---|---|"]
    for r in records:
        note = f" ({r['note']})" if r.get("note") else ""
        lines.append(f"| {r['target']} | {r['measured']}{note} | {r['ratio']} | "
                     f"{'met' if r['met'] else '**not met**'} |")
    for name in UNREPORTED:
        lines.append(f"| {name} | not measured by this run | - | **not done** |")
    load = os.getloadavg()
    return (f"Measured {datetime.date.today()} by `benchmarks/run_all.py` "
            f"({', '.join(ran)}), load average {load[0]:.1f} / {load[1]:.1f} / {load[2]:.1f} "
            f"on {len(os.sched_getaffinity(0))} cores.\n\n" + "\n".join(lines) + "\n")


def update_performance(text: str) -> None:
    doc = PERF.read_text()
    if BEGIN in doc and END in doc:
        head, rest = doc.split(BEGIN, 1)
        doc = head + BEGIN + "\n" + text + END + rest.split(END, 1)[1]
        PERF.write_text(doc)


def main(argv: list[str]) -> int:
    chosen = [s for s in SCRIPTS if not argv or s in argv]
    parts = [f"# Benchmark results\n\nMeasured {datetime.date.today()} on {platform.machine()},"
             f" {platform.python_implementation()} {platform.python_version()}, "
             f"{len(os.sched_getaffinity(0))} cores, shared with other work. Each table "
             "compares methods measured side by side in the same run.\n"]
    failed, records, ran = [], [], []
    for name in chosen:
        if not (HERE / name).is_file():
            continue
        print(f"== {name}", flush=True)
        res = subprocess.run([sys.executable, str(HERE / name)], capture_output=True, text=True,
                             cwd=HERE)
        body = []
        for line in res.stdout.splitlines():
            if line.startswith(TARGET_PREFIX):
                records.append(json.loads(line[len(TARGET_PREFIX):]))
            else:
                body.append(line)
        sys.stdout.write("\n".join(body) + "\n")
        if res.returncode != 0:
            failed.append(name)
            sys.stderr.write(res.stderr)
            continue
        ran.append(name)
        parts.append(f"## {name}\n\n" + "\n".join(body) + "\n")
    targets = target_table(records, ran)
    parts.insert(1, "## Targets (issue 18)\n\n" + targets)
    (HERE / "results.md").write_text("\n".join(parts))
    update_performance(targets)
    print(targets)
    print(f"wrote {HERE / 'results.md'} and the target table of {PERF}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
