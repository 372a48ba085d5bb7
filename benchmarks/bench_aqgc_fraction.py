"""Allowed fraction of the 18-coefficient aqgc-dim8 space, beside the ~2% of
Zhang & Zhou, arXiv:1808.00010 (abstract) and 2.1% of Bi, Zhang & Zhou, arXiv:1902.08977.

Directions are uniform on the unit sphere of the 18 coefficients f_i/Lambda^4 in the
convention hat-i (the cone does not depend on the weak angle).  Each direction is
decided without the cutting-plane build (whose hulls do not scale to 17 dimensions):

1. ``elastic`` screen: the product states of a fixed random pool, then the alternating
   search (:func:`eftsieve.bounds.elastic.search_states`); E(u, v) < 0 is an exact
   exclusion.  What survives is an upper estimate of the elastic fraction (the search
   may miss a violating state).
2. ``extremal``: one block-diagonal SDP membership solve per survivor: inside with a
   verified rho, outside with a verified dual certificate, marginal otherwise.

Usage: ``python benchmarks/bench_aqgc_fraction.py [N] [SEED]`` (default 20000, 0).
"""

from __future__ import annotations

import sys
import time

import numpy as np

from eftsieve.bounds.cone_region import shell_membership
from eftsieve.bounds.cones import INSIDE, OUTSIDE, elastic_values
from eftsieve.bounds.elastic import search_states
from eftsieve.theories.aqgc_dim8.theory import aqgc_problem


def main(n_points: int = 20_000, seed: int = 0) -> None:
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    problem = aqgc_problem()
    print(f"forward tensors of the 18 operators on 12 modes: {time.perf_counter() - t0:.1f} s")
    x = rng.normal(size=(n_points, problem.k))
    x /= np.linalg.norm(x, axis=1, keepdims=True)
    # 1a. a pool of random product states, all points at once
    pool = rng.normal(size=(2, 4000, problem.n))
    forms = elastic_values(problem, pool[0], pool[1])              # (4000, 18)
    alive = np.ones(n_points, dtype=bool)
    for chunk in np.array_split(np.arange(n_points), max(1, n_points // 2000)):
        alive[chunk] = ((x[chunk] @ forms.T) >= 0).all(axis=1)
    print(f"random product-state pool: {alive.sum()} of {n_points} survive "
          f"({time.perf_counter() - t0:.1f} s)")
    # 1b. alternating search on the survivors
    idx = np.nonzero(alive)[0]
    for i in idx:
        m = problem.tensor(x[i])
        if search_states(m, rng, starts=64, sweeps=40)[2] < -1e-9 * np.abs(m).max():
            alive[i] = False
    n_el = int(alive.sum())
    print(f"after the search: {n_el} survive ({time.perf_counter() - t0:.1f} s)")
    # 2. extremal SDP on the survivors
    survivors = np.nonzero(alive)[0]
    codes = (shell_membership(problem, x[survivors], family="extremal")[0].tolist()
             if len(survivors) else [])
    n_in, n_out = codes.count(INSIDE), codes.count(OUTSIDE)
    n_marg = len(codes) - n_in - n_out
    seconds = time.perf_counter() - t0

    def pct(k: int) -> str:
        p = k / n_points
        return f"{100 * p:.2f}% +- {100 * np.sqrt(max(p, 1 / n_points) * (1 - p) / n_points):.2f}%"
    print(f"\nallowed fraction of the 18-coefficient sphere ({n_points} directions, seed {seed})")
    print(f"  elastic (upper estimate) : {pct(n_el)}")
    print(f"  extremal, proven inside  : {pct(n_in)}   (marginal {n_marg}, outside {n_out})")
    print("  Zhang & Zhou 1808.00010  : about 2% (their channels and polarisations)")
    print("  Bi, Zhang & Zhou 1902.08977: 2.1%")
    print(f"  total {seconds:.0f} s")


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:3]]
    main(*args)
