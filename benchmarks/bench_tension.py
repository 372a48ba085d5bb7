"""Benchmark of the tension of a 2-D scalar-EFT region (not a test; run by hand).

    .venv/bin/python benchmarks/bench_tension.py

Many outer facets of a (g3~, g4~) region meet at the same vertices (support functions
along nearby directions share their extremal spectrum), so a vertex's tangent cone has
more rows than dimensions.  The chi-bar-squared weights of such a plane cone follow in
closed form from its two bounding rows; the alternative is the Monte-Carlo active-set
estimate over all rows.  Both are timed side by side on the same region and fits, and
their p-values are printed (they agree to the Monte-Carlo error, ~1e-3).
"""

from __future__ import annotations

import numpy as np
from common import best_time, table

from eftsieve.stats import tension as stats
from eftsieve.theories.scalar_eft.theory import THEORY


def main() -> None:
    region = THEORY.build_region({"coordinates": ["g3t", "g4t"], "order": 6,
                                  "directions": 32})
    cov = np.diag([0.5, 0.01])
    means = {"outside, near the spin-0 vertex": np.array([3.4, 0.45]),
             "outside, near the lower kink": np.array([-10.8, 0.9]),
             "inside": np.array([0.0, 0.2])}
    wedge = stats._plane_wedge
    rows = []
    for label, mean in means.items():
        t_closed = best_time(lambda m=mean: stats.tension(m, cov, region,
                                                          np.random.default_rng(0)), 3)
        p_closed = stats.tension(mean, cov, region, np.random.default_rng(0)).p_value
        stats._plane_wedge = lambda g: g  # every vertex cone by Monte Carlo
        try:
            t_mc = best_time(lambda m=mean: stats.tension(m, cov, region,
                                                          np.random.default_rng(0)), 1)
            p_mc = stats.tension(mean, cov, region, np.random.default_rng(0)).p_value
        finally:
            stats._plane_wedge = wedge
        rows.append([label, f"{t_closed:.3f} s", f"{t_mc:.2f} s", f"{t_mc / t_closed:.0f}x",
                     f"{p_closed:.4f} / {p_mc:.4f}"])
    table(f"tension against a (g3~, g4~) region, order 6, {len(region.facets)} facets",
          ["fit mean", "closed-form plane cones", "Monte-Carlo cones", "ratio",
           "p-value (closed / MC)"], rows)


if __name__ == "__main__":
    main()
