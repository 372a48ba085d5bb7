"""Positivity cones (issue 20): classification speed and region build time, side by side.

- ours: what the check kernel does (:func:`eftsieve.check.engine.process_block`): the facet
  test against the inner and outer cones (:func:`eftsieve.check.verdicts.classify`, band
  0, in the kernel's blocks of 65536 points), then the shell between them decided in
  row order with learned facets (:meth:`eftsieve.bounds.cone_region.ConeShell.
  decide_in_order`: a point excluded by the verified certificate of an earlier
  ``outside`` solve needs no solve; the others get one; no budget);
- beside it, the same shell points with one solve each (what the kernel did before
  learned facets), so that the shell's ratio shows, with the solves made and the points
  decided by learned facets;
- the simple alternative: one exact membership solve per point (the same solver, cvxpy +
  Clarabel, compiled once and re-solved), timed on a few hundred points and extrapolated;
- ``eftsieve check`` end to end on a Gaussian card (draws, kernel, statistics), for one
  cone;
- the build time of the ``transverse-w`` region, both families, from scratch.

Cones: ``higgs-quartic`` and ``transverse-w`` (3 coefficients each), the 18-coefficient
``aqgc-dim8`` cone (LP geometry; only its first AQGC_SHELL_CAP shell points are decided,
both ways, and the time of the rest extrapolated linearly: for the learned mode this
overstates the cost, since later points meet more learned facets), and a 10-coefficient
cone that is the product of the four independent cone theories side by side
(photon-quartic 2 + higgs-quartic 3 + ew-chiral 2 + transverse-w 3 coefficients, 15 modes;
:func:`eftsieve.bounds.cone_sectors.product_region`): a block-diagonal problem, solved
sector by sector, not a 10-coefficient cone with couplings between all its modes.

The points are a fictional Gaussian "fit" (demo scenario, invented numbers) whose mean
sits past one facet of the cone, so that a sizeable share of it is excluded.

Usage: ``python benchmarks/bench_cones.py [N] [BASELINE_SOLVES]``.
"""

from __future__ import annotations

import sys
import time

import numpy as np
from common import load, table, target

N = 10_000_000
BASELINE_SOLVES = 300
#: shell points of the 18-coefficient cone decided (both ways; the rest extrapolated)
AQGC_SHELL_CAP = 1000
#: points per block: the check kernel's canonical block (eftsieve.stats.accumulate.BLOCK)
BLOCK = 1 << 16
THEORIES = ("photon-quartic", "higgs-quartic", "ew-chiral", "transverse-w")


def centre_of(region) -> np.ndarray:
    """The mean of the inner cone's rays (of each factor for a product region)."""
    rays = np.array(region.inner_vertices)
    return rays.mean(axis=0)


def demo_gaussian(region, centre: np.ndarray) -> tuple[np.ndarray, float]:
    """Fictional fit: mean = the centre pushed 30% of the way past the first facet, spread
    half the centre's norm (invented numbers, demo only)."""
    a, _ = region.arrays()
    mean = centre - 0.3 * (a[0] @ centre) * a[0] / (a[0] @ a[0])
    return mean, 0.5 * float(np.linalg.norm(centre))


def classify_run(label: str, region, centre: np.ndarray, n: int, baseline: int,
                 shell_cap: int | None = None) -> list[str]:
    """Facet test + the shell decided with learned facets (ours) and with one solve per
    shell point (beside it); with ``shell_cap``, only the first shell_cap shell points are
    decided and the time of the rest is extrapolated from theirs (said in the table)."""
    from eftsieve.bounds.cone_learn import LearnedFacets
    from eftsieve.bounds.cone_region import ConeShell
    from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, classify

    mean, sd = demo_gaussian(region, centre)
    rng = np.random.default_rng(20)
    solver = ConeShell.from_region(region)
    learned = LearnedFacets(region.dim)
    t_facets = t_plain = t_shell = t_each = 0.0
    counts = np.zeros(3, dtype=np.int64)
    n_shell = n_done = n_unsolved = n_solves = n_learned = 0
    for lo in range(0, n, BLOCK):
        pts = mean + sd * rng.normal(size=(min(BLOCK, n - lo), region.dim))
        t0 = time.perf_counter()
        v = classify(pts, region, 0.0)
        t_facets += time.perf_counter() - t0
        t0 = time.perf_counter()
        np.add.reduce(pts, axis=1)                 # bandwidth stand-in: one pass, one sum
        t_plain += time.perf_counter() - t0
        shell = np.flatnonzero(v.verdict == MARGINAL)
        if shell_cap is not None:
            shell = shell[:max(0, shell_cap - n_done)]
            n_unsolved += int((v.verdict == MARGINAL).sum()) - len(shell)
        n_shell += len(shell)
        n_done += len(shell)
        codes = v.verdict.copy()
        if len(shell):
            t0 = time.perf_counter()
            got = solver.decide_in_order(pts[shell], lo + shell, 0, learned)
            t_shell += time.perf_counter() - t0
            codes[shell] = got.codes
            n_solves += got.n_solves
            n_learned += got.n_learned
            t0 = time.perf_counter()
            solver.decide(pts[shell], lo + shell)      # one solve per shell point
            t_each += time.perf_counter() - t0
        counts += np.bincount(codes, minlength=3)[:3]
    sample = mean + sd * rng.normal(size=(baseline, region.dim))
    solver.decide(sample[:1], np.arange(1))        # compile once, as a user would
    t0 = time.perf_counter()
    solver.decide(sample, np.arange(baseline))
    per_solve = (time.perf_counter() - t0) / baseline
    if n_unsolved:
        t_shell *= (n_done + n_unsolved) / max(n_done, 1)
        t_each *= (n_done + n_unsolved) / max(n_done, 1)
        n_shell += n_unsolved
    ours = t_facets + t_shell
    base = per_solve * n
    shell_note = (f" (extrapolated from {n_done} shell points)" if n_unsolved else "")
    return [label, f"{region.dim}", f"{n:.0e}",
            f"{len(region.facets)}/{len(region.inner_facets)}",
            f"{n_shell} ({n_shell / n:.1e})", f"{t_facets:.2f} s", f"{t_plain:.2f} s",
            f"{t_shell:.2f} s{shell_note}", f"{n / ours:.2e} points/s",
            f"{per_solve * 1e3:.1f} ms x {n:.0e} = {base:.1e} s (from {baseline} solves)",
            f"{base / ours:.1e}x",
            f"{counts[INSIDE] / n:.3f}/{counts[MARGINAL] / n:.1e}/{counts[OUTSIDE] / n:.3f}",
            f"{t_each:.2f} s", f"{n_solves} / {n_learned} of {n_done}",
            f"{t_each / t_shell:.1f}x" if t_shell > 0 else "-"]


def coarse(theory: str):
    """A deliberately coarse build (two rays, shell ~7% of the sphere): a region whose
    shell is large, to show what the solve budget does."""
    from eftsieve.bounds.cone_build import ConeSettings, build_cone
    from eftsieve.bounds.cone_region import cone_region
    from eftsieve.theories import get_theory

    build = build_cone(get_theory(theory).problem(), ConeSettings(
        shell_target=0.3, max_rounds=1, rays_per_round=3, mc_points=20_000))
    return cone_region(theory, build, {"name": "none"})


def end_to_end(region, centre: np.ndarray, n: int, label: str = "") -> list[str]:
    """``eftsieve check`` on a Gaussian card (the API call the command line makes), with
    the default solve budget."""
    from eftsieve.check.run import run_check
    from eftsieve.check.verdicts import CheckSettings
    from eftsieve.fit.conventions import Convention
    from eftsieve.fit.model import Fit, Parameter

    mean, sd = demo_gaussian(region, centre)
    fit = Fit("bench-demo", region.theory, tuple(Parameter(c, Convention("none"))
                                                 for c in region.coordinates), {},
              mean, sd**2 * np.eye(region.dim))
    t0 = time.perf_counter()
    res = run_check(fit, region, CheckSettings(draws=n, plot_points=1000))
    dt = time.perf_counter() - t0
    sh = res.shell
    marg = f"{sh.n_marginal} ({sh.marginal_fraction:.1e})" if sh else "0"
    return [label or region.theory, f"{n:.0e}", f"{dt:.1f} s", f"{n / dt:.2e} points/s",
            f"{sh.n_shell if sh else 0} ({sh.shell_fraction if sh else 0:.1e})",
            f"{sh.n_solves if sh else 0}", f"{sh.n_learned if sh else 0}", marg,
            f"{res.p_inside:.4f} +- {res.p_inside_err:.1e}"]


def build_run(theory: str, family: str) -> list[str]:
    from eftsieve.theories import get_theory

    t0 = time.perf_counter()
    region = get_theory(theory).build_region({"families": [family]})
    dt = time.perf_counter() - t0
    shell, err = region.settings["shell_fraction"]
    stats = region.settings["build"]
    return [theory, family, f"{dt:.1f}", f"{len(region.facets)}", f"{len(region.inner_facets)}",
            f"{shell:.1e} +- {err:.0e}", f"{stats['rays']}", f"{stats['solves']}",
            "yes" if dt < 60 and shell < 1e-3 else "no"]


def main() -> None:
    from eftsieve.bounds.cone_sectors import product_region
    from eftsieve.theories import get_theory

    n = int(sys.argv[1]) if len(sys.argv) > 1 else N
    baseline = int(sys.argv[2]) if len(sys.argv) > 2 else BASELINE_SOLVES
    print(f"machine: {load()} (shared with other workers)\n")
    builds = [build_run("transverse-w", "extremal"), build_run("transverse-w", "elastic")]
    regions = {t: get_theory(t).build_region({}) for t in THEORIES}
    product = product_region("product of four cone theories", list(regions.values()))
    centre10 = np.concatenate([centre_of(regions[t]) for t in THEORIES])
    rows = [classify_run("higgs-quartic", regions["higgs-quartic"],
                         centre_of(regions["higgs-quartic"]), n, baseline),
            classify_run("transverse-w", regions["transverse-w"],
                         centre_of(regions["transverse-w"]), n, max(baseline // 10, 10)),
            classify_run("product of 4 theories (block-diagonal)", product, centre10, n,
                         max(baseline // 10, 10))]
    # the full 18-coefficient aqgc-dim8 cone (LP geometry; the shell solves are capped
    # and extrapolated: about 2e4 shell points at tens of ms each)
    t0 = time.perf_counter()
    aqgc = get_theory("aqgc-dim8").build_region({"families": ["extremal"],
                                                 "coordinates": "all"})
    aqgc_build = time.perf_counter() - t0
    row18 = classify_run("aqgc-dim8, all 18 (LP geometry)", aqgc, centre_of(aqgc), n,
                         max(baseline // 10, 10), shell_cap=AQGC_SHELL_CAP)
    rate10 = float(rows[2][8].split()[0])
    rate18 = float(row18[8].split()[0])
    t18 = float(row18[5].split()[0])
    # issue 21's target: every point classified (inside, outside, or in the shell between
    # the inner and outer cones), with the shell fraction reported, as the cones issue's
    # 10-coefficient figure did (its shell was empty, so its exact solves cost nothing)
    target(f"classify {row18[2]} points, aqgc-dim8 all 18 (k = 18): within 3x of the "
           "10-coefficient figure, shell fraction reported",
           f"{n / t18:.2e} points/s; shell {row18[4]}",
           f"{rate10 / (n / t18):.1f}x slower than k = 10", n / t18 >= rate10 / 3,
           f"region built in {aqgc_build:.0f} s, {len(aqgc.facets)} outer facets")
    # the stricter reading, beside it: every shell point also decided by an exact solve
    target(f"the same {row18[2]} points with every shell point decided exactly (learned "
           "facets, one solve for each other shell point): within 3x of the 10-coefficient "
           "figure", f"{row18[8]} incl. shell solves",
           f"{rate10 / rate18:.1f}x slower than k = 10", rate18 >= rate10 / 3,
           "stricter than the issue's text; the shell's truly inside points each need "
           "their own solve (docs/performance.md)")
    rows.append(row18)
    for r in rows[:3]:
        rate, ratio = float(r[8].split()[0]), float(r[10].rstrip("x"))
        target(f"classify {r[2]} points, {r[0]} (k = {r[1]}): >= 1e7 points/s", r[8],
               f"{rate / 1e7:.2f}x the target", rate >= 1e7, "shared 2-core machine")
        target(f"classify {r[0]} vs one solve per point: >= 1e4x", r[10], r[10],
               ratio >= 1e4)
    for b in builds:
        target(f"transverse-w {b[1]} region (shell < 1e-3) in < 60 s on 2 cores",
               f"{b[2]} s, shell {b[5]}", f"{float(b[2]) / 60:.2f}x the budget",
               b[-1] == "yes")
    table(f"Classifying points against a positivity cone ({load()}, shared machine)",
          ["cone", "k", "points", "facets out/in", "shell points (fraction)",
           "facet test", "plain numpy pass", "shell, learned facets (ours)", "ours",
           "one solve per point (extrapolated)", "ratio", "inside/marginal/outside",
           "shell, one solve each", "shell solves / decided by learned facets",
           "shell ratio"], rows)
    rough = coarse("higgs-quartic")
    table("eftsieve check end to end on a Gaussian card (draws + kernel + statistics, "
          "default budget of 1000 solves)",
          ["region", "draws", "wall time", "rate", "shell points (fraction)", "exact solves",
           "decided by learned facets", "left marginal (fraction)", "p_inside"],
          [end_to_end(regions["transverse-w"], centre_of(regions["transverse-w"]), n),
           end_to_end(rough, centre_of(rough), n, "higgs-quartic, coarse build (2 rays)")])
    table("Building the transverse-w region from scratch (shell target 1e-3 of the sphere)",
          ["theory", "family", "seconds", "outer facets", "inner facets",
           "shell fraction", "rays", "solves", "under 60 s, shell < 1e-3"], builds)


if __name__ == "__main__":
    main()
