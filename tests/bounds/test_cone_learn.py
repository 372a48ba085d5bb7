"""Learned facets (ConeShell.decide_in_order): the separating certificates of earlier
``outside`` solves decide later points without a solve.

References used as oracles (each cone below is polyhedral and simplicial, so a linear
form is a valid facet iff it is >= 0 on the published extreme rays, the columns of A^-1
for the published inequalities A c >= 0):

* higgs-quartic: C2 >= 0, C1 + C2 >= 0, C1 + C2 + C3 >= 0 (Remmen & Rodd, "Consistency
  of the Standard Model Effective Field Theory", arXiv:1908.09845; from memory, as in
  tests/theories/higgs_quartic), for both families (the elastic and extremal cones
  coincide there, tests/theories/higgs_quartic);
* photon-quartic: a >= 0 and b >= 0 for a (F.F)^2 + b (F.Ftilde)^2 (Adams,
  Arkani-Hamed, Dubovsky, Nicolis & Rattazzi, hep-th/0602178, Sec. 3; from memory, as in
  tests/check/test_cone_shell.py);
* a product of independent cones (photon-quartic and higgs-quartic side by side): the
  product of the two published cones (eftsieve.bounds.cone_sectors);
* transverse-w, elastic family: fT2 >= 0, 4 fT1 + fT2 >= 0, 8 fT0 + 4 fT1 + 3 fT2 >= 0
  (Zhang & Zhou, arXiv:1808.00010; Bi, Zhang & Zhou, arXiv:1902.08977; from memory, as
  in tests/bounds/test_cone_build_lp.py).

The points are fictional: Gaussian clouds around each cone's centre, wide enough that
about a third to a half of them are outside.
"""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_learn import LEARNED_REASON, LearnedFacets, facet_forms, unit_rows
from eftsieve.bounds.cone_region import ConeShell, classify_cone, shell_membership
from eftsieve.bounds.cones import INSIDE, MARGINAL, OUTSIDE
from eftsieve.theories import get_theory
from eftsieve.theories.higgs_quartic import operators as higgs
from eftsieve.theories.photon_quartic import operators as photon

#: published inequalities A c >= 0 in each theory's own coordinates (module docstring)
PUBLISHED = {
    "higgs-quartic": np.array([[0.0, 1, 0], [1, 1, 0], [1, 1, 1]]) @ higgs.REMMEN_RODD_FROM_F,
    "photon-quartic": photon.ALT_FROM_ZETA,
    "transverse-w": np.array([[0.0, 0, 1], [0, 4, 1], [8, 4, 3]]),
}
CASES = [("higgs-quartic", "extremal"), ("higgs-quartic", "elastic"),
         ("photon-quartic", "extremal"), ("photon-quartic", "elastic"),
         ("transverse-w", "elastic")]


def _cloud(theory: str, m: int, seed: int) -> np.ndarray:
    """Fictional points: the published cone's centre plus a Gaussian of its size."""
    rays = np.linalg.inv(PUBLISHED[theory])             # columns: the extreme rays
    rays = rays / np.linalg.norm(rays, axis=0)
    centre = rays.sum(axis=1)
    rng = np.random.default_rng(seed)
    return centre + 0.9 * np.linalg.norm(centre) * rng.normal(size=(m, len(centre)))


def _shell(theory: str, family: str) -> ConeShell:
    th = get_theory(theory)
    red = th.reduction() if family == "elastic" and hasattr(th, "reduction") else None
    return ConeShell(th.problem(), family, reduction=red)


def _published_margin(theory: str, pts: np.ndarray) -> np.ndarray:
    """min over the published inequalities of a . c/(|a| |c|): > 0 inside, < 0 outside."""
    a = PUBLISHED[theory] / np.linalg.norm(PUBLISHED[theory], axis=1, keepdims=True)
    return (pts @ a.T).min(axis=1) / np.linalg.norm(pts, axis=1)


@pytest.fixture(scope="module", params=CASES, ids=[f"{t}-{f}" for t, f in CASES])
def learned_run(request):
    theory, family = request.param
    pts = _cloud(theory, 60, 5)
    learned = LearnedFacets(pts.shape[1])
    shell = _shell(theory, family)
    got = shell.decide_in_order(pts, np.arange(len(pts)), 0, learned)
    return theory, family, pts, shell, learned, got


def test_learned_verdicts_agree_with_the_published_cone(learned_run):
    theory, _, pts, _, _, got = learned_run
    assert got.n_learned > 5 and got.n_solves + got.n_learned == len(pts)
    assert got.n_solves < len(pts)
    margin = _published_margin(theory, pts)
    clear = np.abs(margin) > 1e-6
    # every point a learned facet excludes is outside the published cone
    assert (margin[got.learned] < 0).all()
    assert (got.codes[got.learned] == OUTSIDE).all()
    assert all(r == LEARNED_REASON for r, k in zip(got.reasons, got.learned, strict=True)
               if k)
    # and every verdict, learned or solved, is the published one away from the boundary
    assert (got.codes[clear & (margin > 0)] == INSIDE).all()
    assert (got.codes[clear & (margin < 0)] == OUTSIDE).all()


def test_learned_normals_are_valid_facets_of_the_published_cone(learned_run):
    theory, family, _, _, learned, got = learned_run
    assert len(learned) == int(np.count_nonzero((got.codes == OUTSIDE) & got.solved))
    rays = np.linalg.inv(PUBLISHED[theory])
    rays = rays / np.linalg.norm(rays, axis=0)
    assert (learned.normals @ rays >= -1e-9).all()
    # and of the region's own inner cone (rays proven inside by explicit solutions)
    if theory == "higgs-quartic":
        region = get_theory(theory).build_region({"families": [family]})
        inner = np.array(region.inner_vertices)
        assert (inner @ learned.normals.T >= -1e-9 * np.linalg.norm(inner, axis=1)[:, None]
                ).all()
    # the status line names the row whose certificate decided the point, which came first
    for i in np.flatnonzero(got.learned):
        src = int(got.statuses[i].split("learned at row ")[1].split(" ")[0])
        assert src < i and got.solved[src] and got.codes[src] == OUTSIDE


def test_a_learned_verdict_is_what_its_own_solve_says(learned_run):
    theory, _, pts, shell, _, got = learned_run
    idx = np.flatnonzero(got.learned)[:12]
    own, why, _ = shell.decide(pts[idx], idx)
    # a valid facet excludes the point: its own solve can never prove it inside
    assert INSIDE not in own.tolist(), why
    clear = _published_margin(theory, pts[idx]) < -1e-6
    assert (own[clear] == OUTSIDE).all(), why


def test_learned_verdicts_do_not_depend_on_how_the_points_are_split():
    theory, family = "higgs-quartic", "extremal"
    pts = _cloud(theory, 80, 9)
    shell = _shell(theory, family)
    whole = shell.decide_in_order(pts, np.arange(80), 0, LearnedFacets(3))
    learned = LearnedFacets(3)
    parts = [shell.decide_in_order(pts[lo:hi], np.arange(lo, hi), 0, learned)
             for lo, hi in ((0, 7), (7, 8), (8, 41), (41, 80))]
    assert np.concatenate([p.codes for p in parts]).tolist() == whole.codes.tolist()
    assert sum((p.statuses for p in parts), ()) == whole.statuses
    assert sum(p.n_learned for p in parts) == whole.n_learned > 0
    # without learning: one solve per point, the same verdicts where both decide
    plain, _, _ = shell.decide(pts, np.arange(80))
    both = plain != MARGINAL
    assert (plain[both] == whole.codes[both]).all()


def test_the_solve_cap_still_lets_learned_facets_decide():
    pts = _cloud("photon-quartic", 50, 2)
    shell = _shell("photon-quartic", "extremal")
    learned = LearnedFacets(2)
    got = shell.decide_in_order(pts, np.arange(50), 0, learned, max_solves=6)
    assert got.n_solves == 6 and got.solved[:6].all() and not got.solved[6:].any()
    later = got.learned[6:]
    assert later.any()
    # beyond the cap: decided by a learned facet, or left marginal with an empty reason
    rest = np.flatnonzero(~got.solved & ~got.learned)
    assert (got.codes[rest] == MARGINAL).all() and all(got.reasons[i] == "" for i in rest)
    margin = _published_margin("photon-quartic", pts)
    assert (margin[got.learned] < 0).all()


def test_script_api_learns_only_when_asked():
    theory = "higgs-quartic"
    region = get_theory(theory).build_region({"families": ["extremal"]})
    pts = _cloud(theory, 40, 3)
    codes, why = shell_membership(region, pts)
    assert not any("learned" in w for w in why)
    codes_l, why_l = shell_membership(region, pts, learn=True)
    assert sum("learned at row" in w for w in why_l) > 0
    both = (codes != MARGINAL) & (codes_l != MARGINAL)
    assert (codes[both] == codes_l[both]).all()
    c1, shell1, _ = classify_cone(region, pts, learn=True)
    c0, shell0, _ = classify_cone(region, pts)
    assert (shell0 == shell1).all()
    margin = _published_margin(theory, pts)
    clear = np.abs(margin) > 1e-6
    for c in (c0, c1):
        assert ((c[clear] == INSIDE) == (margin[clear] > 0)).all()


def test_a_product_of_independent_cones_learns_facets_of_one_factor():
    # photon-quartic and higgs-quartic side by side: the product cone's verdict is
    # outside iff either factor's published inequalities fail; a learned facet is one
    # factor's facet, zero on the other's coordinates, valid on every published ray
    from eftsieve.bounds.cone_sectors import union_problem

    problem = union_problem([get_theory("photon-quartic").problem(),
                             get_theory("higgs-quartic").problem()])
    a = np.zeros((5, 5))
    a[:2, :2], a[2:, 2:] = PUBLISHED["photon-quartic"], PUBLISHED["higgs-quartic"]
    rays = np.linalg.inv(a)
    rng = np.random.default_rng(8)
    centre = (rays / np.linalg.norm(rays, axis=0)).sum(axis=1)
    pts = centre + 0.7 * np.linalg.norm(centre) * rng.normal(size=(70, 5))
    learned = LearnedFacets(5)
    got = ConeShell(problem, "extremal").decide_in_order(pts, np.arange(70), 0, learned)
    assert got.n_learned > 5 and len(learned) >= 2
    assert (learned.normals @ rays >= -1e-9).all()
    photon_part = np.abs(learned.normals[:, :2]).max(axis=1) > 0
    higgs_part = np.abs(learned.normals[:, 2:]).max(axis=1) > 0
    assert not (photon_part & higgs_part).any()
    an = a / np.linalg.norm(a, axis=1, keepdims=True)
    margin = (pts @ an.T).min(axis=1) / np.linalg.norm(pts, axis=1)
    assert (margin[got.learned] < 0).all()
    clear = np.abs(margin) > 1e-6
    assert ((got.codes[clear] == INSIDE) == (margin[clear] > 0)).all()


def test_facet_forms_have_the_same_bits_in_any_batch():
    rng = np.random.default_rng(4)
    pts = rng.normal(size=(37, 18)) * 10.0 ** rng.integers(-3, 3, size=(37, 1))
    normals = rng.normal(size=(11, 18))
    u = unit_rows(pts)
    whole = facet_forms(u, normals)
    one_by_one = np.array([[facet_forms(unit_rows(pts[i:i + 1]), normals[j:j + 1])[0, 0]
                            for j in range(11)] for i in range(37)])
    assert (whole == one_by_one).all()
    # unit rows are unit to rounding (numpy's norm as the reference), NaN for 0 and inf
    np.testing.assert_allclose(np.linalg.norm(u, axis=1), 1.0, rtol=1e-15)
    bad = unit_rows(np.array([[0.0, 0.0], [np.inf, 1.0]]))
    assert np.isnan(bad).all()


@pytest.mark.slow
def test_eighteen_coefficient_cone_learns_valid_facets():
    # the 18-coefficient aqgc-dim8 cone (about 35 s to build): shell points of a fictional
    # Gaussian (the benchmark's demo scenario: the inner cone's centre pushed past its
    # first facet) decided with learning; every learned normal must hold on the region's
    # verified inner rays, and a learned point's own solve must never prove it inside
    from eftsieve.check.verdicts import classify

    region = get_theory("aqgc-dim8").build_region({"families": ["extremal"],
                                                   "coordinates": "all"})
    rays = np.array(region.inner_vertices)
    centre = rays.mean(axis=0)
    a, _ = region.arrays()
    mean = centre - 0.3 * (a[0] @ centre) * a[0] / (a[0] @ a[0])
    pts = mean + 0.5 * np.linalg.norm(centre) * np.random.default_rng(20).normal(
        size=(300_000, region.dim))
    shell_pts = pts[classify(pts, region, 0.0).verdict == MARGINAL][:120]
    assert len(shell_pts) == 120
    shell = ConeShell.from_region(region)
    learned = LearnedFacets(region.dim)
    got = shell.decide_in_order(shell_pts, np.arange(len(shell_pts)), 0, learned)
    assert got.n_learned > 10 and got.n_solves + got.n_learned == len(shell_pts)
    assert (rays @ learned.normals.T >= -1e-9 * np.linalg.norm(rays, axis=1)[:, None]).all()
    idx = np.flatnonzero(got.learned)[:8]
    own, why, _ = shell.decide(shell_pts[idx], idx)
    assert INSIDE not in own.tolist(), why
