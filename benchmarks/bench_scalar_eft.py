"""Benchmark of the scalar-EFT sum-rule bounds (not a test; run by hand).

    .venv/bin/python benchmarks/bench_scalar_eft.py [--skip-2d] [--orders 4 6 8 10 11]

Prints three tables:

1. the default g3~ = g3 M^2/g2 interval (inner = exact positive spectra, outer = verified
   dual bounds) with its build time, against -10.346 <= g3~ <= 3 of arXiv:2011.02957;
2. the default 64-direction (g3~, g4~) region: build time, facet counts, extents;
3. convergence of the lower end of the g3~ interval with the truncation order (spins
   <= 40) and with the spin cut-off of the LP grid (at order 10).

A solve that fails prints its SolverError status instead of a number: no bound is ever
reported from a failed or unverified solve.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path
from typing import Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.theories.scalar_eft.theory import THEORY

PUBLISHED = (-10.346, 3.0)  # arXiv:2011.02957, Sec. 3
ROOT = Path(__file__).resolve().parents[1]


def _interval(settings: dict[str, Any]) -> dict[str, Any]:
    t0 = time.perf_counter()
    try:
        r = THEORY.build_region(settings)
    except SolverError as err:
        return {"status": err.status, "time": time.perf_counter() - t0}
    lo, hi = r.facets
    return {"status": "optimal", "time": time.perf_counter() - t0,
            "lo_out": lo.offset, "lo_in": r.inner_vertices[0][0],
            "hi_in": r.inner_vertices[1][0], "hi_out": -hi.offset,
            "rounds": max(f.extra["rounds"] for f in r.facets),
            "order": r.settings["order"], "spins": r.settings["spins"],
            "nulls": r.settings["n_null_constraints"]}


def _row(label: str, res: dict[str, Any]) -> str:
    if res["status"] != "optimal":
        return f"{label:<22} {'failed: ' + res['status']:<58} {res['time']:7.1f}"
    return (f"{label:<22} {res['lo_out']:13.6f} {res['lo_in']:13.6f} {res['hi_in']:10.6f} "
            f"{res['hi_out']:10.6f} {res['rounds']:6d} {res['time']:7.1f}")


HEADER = (f"{'':<22} {'lo outer':>13} {'lo inner':>13} {'hi inner':>10} {'hi outer':>10} "
          f"{'rounds':>6} {'time/s':>7}")


def default_interval() -> None:
    print("1. default g3~ interval: outer = verified dual bounds (rigorous), inner = exact "
          "positive spectra of the truncated problem")
    print(HEADER)
    res = _interval({})
    print(_row(f"order {res.get('order')} spins {res.get('spins')}", res))
    print(f"{'published':<22} {PUBLISHED[0]:13.3f} {'':13} {'':10} {PUBLISHED[1]:10.3f}")
    if res["status"] == "optimal":
        dev_out, dev_in = res["lo_out"] / PUBLISHED[0] - 1, res["lo_in"] / PUBLISHED[0] - 1
        print(f"relative deviation from published: lower outer {dev_out:+.2e}, "
              f"inner {dev_in:+.2e}")


def default_region_2d(directions: int) -> None:
    """Time the default (g3~, g4~) region on one process and on a process pool of two,
    side by side, and report issue 18's target (< 60 s on 2 cores)."""
    from common import load, target

    from eftsieve.executors import processes, serial

    print(f"\n2. default (g3~, g4~) region, {directions} directions ({load()})")
    settings = {"coordinates": ["g3t", "g4t"], "directions": directions}
    timing, region = {}, None
    for label, executor in (("process pool, 2 workers", processes(2)), ("one process", serial)):
        t0 = time.perf_counter()
        try:
            region = THEORY.build_region(dict(settings), executor=executor)
        except SolverError as err:
            print(f"{label}: failed: {err.one_line()} after {time.perf_counter() - t0:.1f} s")
            return
        timing[label] = time.perf_counter() - t0
        print(f"{label:<26} {timing[label]:7.1f} s")
    r = region
    v = np.array(r.inner_vertices)
    gaps = [f.extra["inner_value"] - f.offset for f in r.facets]
    print(f"order {r.settings['order']}, {len(r.facets)} outer facets, {len(r.inner_facets)} "
          f"inner edges, {r.settings['grid_states_final']} grid states")
    print(f"inner extents: g3~ [{v[:, 0].min():.5f}, {v[:, 0].max():.5f}], "
          f"g4~ [{v[:, 1].min():.3e}, {v[:, 1].max():.6f}]; "
          f"max inner - outer along a facet normal {max(gaps):.2e}")
    pool, one = timing["process pool, 2 workers"], timing["one process"]
    target("2-D scalar-eft region (64 directions, default order) in < 60 s on 2 cores",
           f"{pool:.1f} s (one process {one:.1f} s)", f"{one / pool:.2f}x the one-process "
           f"build", pool < 60.0, load())


def convergence(orders: list[int], spins: list[int]) -> None:
    print("\n3. convergence of the g3~ interval")
    print(HEADER)
    by_order = []
    for k in orders:
        res = _interval({"order": k, "spins": 40})
        by_order.append((k, res))
        print(_row(f"order {k:2d}, spins 40", res), flush=True)
    for j in spins:
        print(_row(f"order 10, spins {j:3d}", _interval({"order": 10, "spins": j})), flush=True)
    plot_convergence(by_order, ROOT / "docs" / "scalar_eft_convergence.png")


def plot_convergence(by_order: list[tuple[int, dict[str, Any]]], path: Path) -> None:
    """The lower end of the g3~ interval against the order (outer and inner)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    ok = [(k, r) for k, r in by_order if r["status"] == "optimal"]
    fig = Figure(figsize=(5.5, 3.6))
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ks = [k for k, _ in ok]
    ax.plot(ks, [r["lo_out"] for _, r in ok], "o-", color="#0072B2",
            label="outer (verified dual, rigorous)")
    ax.plot(ks, [r["lo_in"] for _, r in ok], "s--", color="#D55E00", mfc="none",
            label="inner (explicit spectrum, truncated)")
    ax.axhline(PUBLISHED[0], color="0.4", lw=1, ls=":", label="arXiv:2011.02957: -10.346")
    ax.set_xlabel("order of the null constraints")
    ax.set_ylabel("lower end of g3~")
    ax.legend(frameon=False, fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=130)
    print(f"wrote {path}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--skip-2d", action="store_true", help="skip the 64-direction region")
    ap.add_argument("--directions", type=int, default=64)
    ap.add_argument("--orders", type=int, nargs="*", default=[4, 5, 6, 7, 8, 9, 10, 11, 12, 14])
    ap.add_argument("--spins", type=int, nargs="*", default=[10, 20, 40, 60, 80])
    args = ap.parse_args()
    default_interval()
    if not args.skip_2d:
        default_region_2d(args.directions)
    convergence(args.orders, args.spins)


if __name__ == "__main__":
    main()
