"""Run every benchmark and write benchmarks/results.md (``make bench``)."""

from __future__ import annotations

import datetime
import platform
import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
SCRIPTS = ["bench_region.py", "bench_classify.py", "bench_exact.py", "bench_refit.py",
           "bench_scalar_eft.py", "bench_su3.py", "bench_tension.py", "bench_dask.py",
           "bench_readers.py"]


def main() -> int:
    parts = [f"# Benchmark results\n\nMeasured {datetime.date.today()} on {platform.machine()},"
             f" {platform.python_implementation()} {platform.python_version()}, "
             f"{len(__import__('os').sched_getaffinity(0))} cores. Each table compares "
             "methods measured side by side in the same run.\n"]
    failed = []
    for name in SCRIPTS:
        if not (HERE / name).is_file():
            continue
        print(f"== {name}", flush=True)
        res = subprocess.run([sys.executable, str(HERE / name)], capture_output=True, text=True,
                             cwd=HERE)
        sys.stdout.write(res.stdout)
        if res.returncode != 0:
            failed.append(name)
            sys.stderr.write(res.stderr)
            continue
        parts.append(f"## {name}\n\n" + res.stdout)
    (HERE / "results.md").write_text("\n".join(parts))
    print(f"wrote {HERE / 'results.md'}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
