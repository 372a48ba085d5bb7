"""Classification speed and check end to end (issue: check), with comparators side by side.

- ours: eftsieve.check.verdicts.classify on 10^7 two-parameter samples (chunks of 10^6);
- a plain numpy pass over the same array (the memory-bandwidth stand-in);
- every kinematic-grid constraint for every sample (the naive use of the raw scan),
  measured on a subset and extrapolated;
- a per-sample LP feasibility check (scipy HiGHS), measured on a subset, extrapolated;
- `eftsieve check` end to end on a 10^6-row Parquet file (time, peak memory), and the
  peak memory of streaming a 10^8-row file.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from common import best_time, one_core, table

N = 10_000_000
CHUNK = 1_000_000


def grid_constraints():
    """All (normal, offset) pairs of the raw kinematic scan of both families."""
    from eftsieve.bounds.fixed_t import normalised_offsets, unit_grid
    from eftsieve.theories.chpt_su2.theory import CHANNELS, DEFAULT_SCAN, ChannelFunctionals

    normals, offsets = [], []
    for fam, scan in DEFAULT_SCAN.items():
        cube = unit_grid(scan.points_per_axis)
        for x1, x2 in CHANNELS.values():
            fn = ChannelFunctionals(x1, x2)
            ev = fn.second_derivative if fam == "second-derivative" else fn.t_derivative
            b, n = normalised_offsets(ev, cube)
            ok = np.isfinite(b)
            normals.append(n[ok])
            offsets.append(b[ok])
    return np.vstack(normals), np.concatenate(offsets)


def in_memory(region) -> list[list[str]]:
    from scipy.optimize import linprog

    from eftsieve.check.verdicts import classify

    rng = np.random.default_rng(0)
    y = np.column_stack([rng.normal(-1, 2, N), rng.normal(4, 1, N)])
    t_ours = best_time(lambda: [classify(y[i:i + CHUNK], region) for i in range(0, N, CHUNK)])
    t_numpy = best_time(lambda: [y[i:i + CHUNK].sum(axis=1) for i in range(0, N, CHUNK)])
    gn, gb = grid_constraints()
    sub = y[:2000]
    t0 = time.perf_counter()
    for i in range(0, len(sub), 100):
        ((sub[i:i + 100] @ gn.T - gb) >= 0).all(axis=1)
    t_grid = (time.perf_counter() - t0) / len(sub) * N
    a, b = region.arrays()
    m = 200
    t0 = time.perf_counter()
    for p in y[:m]:
        linprog(np.zeros(2), A_ub=-a, b_ub=-b, bounds=[(v, v) for v in p], method="highs")
    t_lp = (time.perf_counter() - t0) / m * N
    return [["eftsieve classify", f"{t_ours:.3f} s", "1"],
            ["plain numpy pass (bandwidth stand-in)", f"{t_numpy:.3f} s",
             f"ours / numpy = {t_ours / t_numpy:.1f}x (target <= 5x)"],
            [f"all {len(gb):,} grid constraints per sample (extrapolated from 2000)",
             f"{t_grid:,.0f} s", f"{t_grid / t_ours:,.0f}x slower (target >= 100x)"],
            ["per-sample LP feasibility (extrapolated from 200)", f"{t_lp:,.0f} s",
             f"{t_lp / t_ours:,.0f}x slower (target >= 1e4x)"]]


def write_parquet(path: Path, n: int, rng: np.random.Generator, group: int = 1_000_000):
    import pyarrow as pa
    import pyarrow.parquet as pq

    schema = pa.schema([("lbar1", pa.float64()), ("lbar2", pa.float64())])
    with pq.ParquetWriter(path, schema) as w:
        for lo in range(0, n, group):
            k = min(group, n - lo)
            w.write_table(pa.table({"lbar1": rng.normal(1.0, 1.0, k),
                                    "lbar2": rng.normal(4.5, 0.4, k)}, schema=schema))


def run_check_process(card: Path, region: Path, out: Path, plots: bool) -> tuple[float, float]:
    code = ("import resource, sys, time; from eftsieve.cli.main import main; "
            "t=time.perf_counter(); "
            f"rc=main(['check', {str(card)!r}, '--region', {str(region)!r}, '-o', {str(out)!r}"
            + ("" if plots else ", '--no-plots'") + "]); "
            "print(time.perf_counter()-t, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss); "
            "sys.exit(rc)")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    t, rss = res.stdout.strip().splitlines()[-1].split()
    return float(t), float(rss) / 1024**2   # ru_maxrss is in KiB on Linux


def end_to_end(region) -> list[list[str]]:
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        region.save(d / "region.json")
        rng = np.random.default_rng(1)
        for n, plots in ((1_000_000, True), (100_000_000, False)):
            write_parquet(d / "s.parquet", n, rng)
            card = d / "c.yaml"
            card.write_text("format_version: 1\nname: bench\ntheory: chpt-su2\n"
                            "kinematics: {pion_mass_mev: 139.57}\nparameters: [{name: lbar1, "
                            "convention: lbar}, {name: lbar2, convention: lbar}]\n"
                            "samples: {path: s.parquet}\n")
            t, rss = run_check_process(card, d / "region.json", d / f"out{n}", plots)
            target = "10 s, 1 GB" if n == 1_000_000 else "-, 1.5 GB"
            rows.append([f"check {n:.0e} rows" + (" (with plots)" if plots else ""),
                         f"{t:.1f} s", f"{rss:.2f} GiB", target])
            (d / "s.parquet").unlink()
    return rows


def main() -> str:
    one_core()
    from eftsieve.theories import get_theory

    region = get_theory("chpt-su2").build_region({})
    out = table(f"Classification of {N:.0e} two-parameter samples, {len(region.facets)} facets "
                "(one core)", ["method", "time", "ratio"], in_memory(region))
    out += "\n" + table("check end to end (one process)", ["run", "wall time", "peak RSS",
                                                          "target"], end_to_end(region))
    return out


if __name__ == "__main__":
    sys.exit(0 if main() else 1)
