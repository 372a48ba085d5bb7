"""Positivity cones (issue 20): classification speed and region build time, side by side.

- ours: the facet test against the inner and outer cones (numpy, chunks of 10^6), then
  one exact SDP solve for each point in the shell between them;
- the simple alternative: one SDP membership solve per point (cvxpy + Clarabel, the
  problem compiled once and re-solved), timed on ~10^3 points and extrapolated;
- the build time of the ``transverse-w`` region, both families, from scratch.

The points are a fictional Gaussian "fit" (demo scenario, invented numbers) whose mean
sits near the boundary of the cone, so that a sizeable share of it is excluded.
"""

from __future__ import annotations

import sys
import time

import numpy as np
from common import table

N = 10_000_000
BASELINE_SOLVES = 1_000


def demo_points(region, n: int, rng: np.random.Generator) -> np.ndarray:
    """Fictional fit: mean = the inner centre pushed 30% of the way past a facet, unit-ish
    spread (invented numbers, demo only)."""
    rays = np.array(region.inner_vertices)
    centre = rays.mean(axis=0)
    a, _ = region.arrays()
    mean = centre - 0.3 * (a[0] @ centre) * a[0] / (a[0] @ a[0])
    scale = 0.5 * np.linalg.norm(centre)
    return mean + scale * rng.normal(size=(n, region.dim))


def classify_run(theory: str, n: int, baseline: int) -> list[str]:
    from eftsieve.bounds.cone_region import classify_cone, problem_of, sdp_for
    from eftsieve.bounds.cones import INSIDE, OUTSIDE
    from eftsieve.theories import get_theory

    region = get_theory(theory).build_region({})
    rng = np.random.default_rng(20)
    pts = demo_points(region, n, rng)
    t0 = time.perf_counter()
    codes, shell, statuses = classify_cone(region, pts, solve_shell=False)
    t_facets = time.perf_counter() - t0
    n_shell = int(shell.sum())
    t0 = time.perf_counter()
    _, _, statuses = classify_cone(region, pts[shell], solve_shell=True) if n_shell else (
        None, None, {})
    t_shell = time.perf_counter() - t0
    t0 = time.perf_counter()
    for s in range(0, n, 1_000_000):             # bandwidth stand-in: one pass, one sum
        np.add.reduce(pts[s:s + 1_000_000], axis=1)
    t_plain = time.perf_counter() - t0
    problem, _ = problem_of(region)
    sdp = sdp_for(problem)
    sdp.membership(pts[0])                      # compile once, as a user would
    sample = pts[rng.choice(n, size=baseline, replace=False)]
    t0 = time.perf_counter()
    for x in sample:
        sdp.membership(x)
    per_solve = (time.perf_counter() - t0) / baseline
    ours = t_facets + t_shell
    base = per_solve * n
    frac_in = float(np.mean(codes == INSIDE))
    frac_out = float(np.mean(codes == OUTSIDE))
    return [theory, f"{region.dim}", f"{n:.0e}", f"{len(region.facets)}/{len(region.inner_facets)}",
            f"{n_shell} ({n_shell / n:.1e})", f"{t_facets:.2f}", f"{t_plain:.2f}",
            f"{t_shell:.2f}",
            f"{n / ours:.2e}", f"{per_solve * 1e3:.1f} ms x {baseline}", f"{base:.2e}",
            f"{base / ours:.1e}", f"{frac_in:.3f}/{frac_out:.3f}"]


def build_run(theory: str, family: str) -> list[str]:
    from eftsieve.theories import get_theory

    t0 = time.perf_counter()
    region = get_theory(theory).build_region({"families": [family]})
    dt = time.perf_counter() - t0
    shell, err = region.settings["shell_fraction"]
    stats = region.settings["build"]
    return [theory, family, f"{dt:.1f}", f"{len(region.facets)}", f"{len(region.inner_facets)}",
            f"{shell:.1e} +- {err:.0e}", f"{stats['rays']}", f"{stats['solves']}"]


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else N
    baseline = int(sys.argv[2]) if len(sys.argv) > 2 else BASELINE_SOLVES
    rows = [classify_run("higgs-quartic", n, baseline),
            classify_run("transverse-w", n, max(baseline // 20, 10))]
    table("Classifying points against a positivity cone (2 cores, shared machine)",
          ["theory", "k", "points", "facets out/in", "shell points (fraction)",
           "facet test s", "plain numpy pass s", "shell solves s", "ours points/s",
           "one SDP per point",
           "SDP per point, extrapolated s", "ratio", "inside/outside"], rows)
    table("Building the transverse-w region from scratch (shell target 1e-3 of the sphere)",
          ["theory", "family", "seconds", "outer facets", "inner facets",
           "shell fraction", "rays", "solves"],
          [build_run("transverse-w", "extremal"), build_run("transverse-w", "elastic")])


if __name__ == "__main__":
    main()
