"""The ``lp`` geometry of the cone build (no vertex enumeration, no hull in many
dimensions): the facets it finds against published cones, the validity of its facets and
inner set against exact solves, and the compact certificates it writes."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_build import ConeSettings, _large_simplex, build_cone
from eftsieve.bounds.cone_region import cone_region, prune, shell_membership
from eftsieve.bounds.cones import INSIDE, OUTSIDE, verify_certificate
from eftsieve.theories import get_theory
from eftsieve.theories.aqgc_dim8.theory import aqgc_problem

#: the extremal cones of two theories with polyhedral cones, as rows of integer normals:
#: higgs-quartic in (fS0, fS1, fS2): fS0 >= 0, fS0 + fS2 >= 0, fS0 + fS1 + fS2 >= 0
#: (Remmen & Rodd, arXiv:1908.09845, in the notation map of docs/physics_cones.md; from
#: memory); transverse-w in (fT0, fT1, fT2): fT2 >= 0, 4 fT1 + fT2 >= 0,
#: 8 fT0 + 4 fT1 + 3 fT2 >= 0 (the elastic facets, Zhang & Zhou arXiv:1808.00010 and
#: Bi, Zhang & Zhou arXiv:1902.08977, from memory) and 12 fT0 + 4 fT1 + 5 fT2 >= 0 (the
#: extremal facet, docs/physics_cones.md, proven there with a certificate)
PUBLISHED = {
    "higgs-quartic": [[1, 0, 0], [1, 0, 1], [1, 1, 1]],
    "transverse-w": [[0, 0, 1], [0, 4, 1], [8, 4, 3], [12, 4, 5]],
}


def _unit_rows(a: np.ndarray) -> np.ndarray:
    a = np.asarray(a, dtype=float)
    return a / np.linalg.norm(a, axis=1, keepdims=True)


@pytest.mark.parametrize("theory", sorted(PUBLISHED))
def test_lp_geometry_finds_the_published_facets(theory):
    problem = get_theory(theory).problem()
    build = build_cone(problem, ConeSettings(geometry="lp", max_rounds=8))
    assert build.stats["geometry"] == "lp"
    got = _unit_rows([c.normal for c in prune(build.outer)])
    want = _unit_rows(PUBLISHED[theory])
    # every published facet is found, and every facet found is a published one
    match = np.abs(got @ want.T - 1.0) < 1e-6
    assert match.any(axis=0).all(), got
    assert match.any(axis=1).all(), got


def test_large_simplex_recovers_a_known_simplex():
    # points inside a simplex: the simplex of largest volume among them is that simplex
    # itself (any simplex inside a simplex has no larger volume; common practice)
    rng = np.random.default_rng(4)
    dim = 6
    verts = rng.normal(size=(dim + 1, dim))
    w = rng.dirichlet(np.ones(dim + 1), size=300)
    pts = np.vstack([w @ verts, verts])
    order = rng.permutation(len(pts))
    chosen = _large_simplex(pts[order])
    assert sorted(order[chosen].tolist()) == list(range(300, 300 + dim + 1))


@pytest.fixture(scope="module")
def m_type():
    """The seven M-type coefficients alone (a 6-dimensional slice: the lp geometry)."""
    problem = aqgc_problem(("fM0", "fM1", "fM2", "fM3", "fM4", "fM5", "fM7"))
    build = build_cone(problem, ConeSettings(max_rounds=3))
    return problem, build


def test_m_type_cone_builds_in_the_lp_geometry(m_type):
    problem, build = m_type
    assert build.stats["geometry"] == "lp"
    assert len(build.outer) >= 2 * (problem.k - 1)
    # every outer facet carries a certificate that reproduces it from what is stored
    region = cone_region("aqgc-dim8", build, {"name": "hat-i"})
    for f in region.facets:
        assert verify_certificate(problem, f.extra["certificate"], np.array(f.normal))
        assert "Z_sparse" in f.extra["certificate"]
    # the inner set: the hull of the verified rays when it has few facets, else a
    # simplicial cone of k facets (decided by exact solves below)
    if build.stats["inner_set"] == "simplex":
        assert len(region.inner_facets) == problem.k
        assert "simplicial" in region.inner_facets[0].channel
    else:
        assert "hull" in region.inner_facets[0].channel


def test_m_type_facets_and_inner_set_agree_with_exact_solves(m_type):
    problem, build = m_type
    rng = np.random.default_rng(7)
    a_out = build.outer_normals()
    a_in = build.inner_normals
    # 1. conic combinations of the verified inner rays are members: no outer facet
    #    excludes them (validity of the facets, independently of how they were found)
    w = rng.dirichlet(np.ones(len(build.inner_rays)) * 0.3, size=400)
    members = w @ build.inner_rays
    assert (members @ a_out.T >= -1e-9 * np.linalg.norm(members, axis=1)[:, None]).all()
    # 2. points the facet test calls outside are outside by an exact solve, and points
    #    inside the simplicial inner cone are inside by an exact solve
    x = rng.normal(size=(20000, problem.k))
    outside = np.flatnonzero((x @ a_out.T).min(axis=1) < -1e-6 * np.linalg.norm(x, axis=1))
    codes, why = shell_membership(problem, x[outside[:12]], family="extremal")
    assert (codes == OUTSIDE).all(), why
    # points strictly inside the inner set (conic combinations of the verified rays,
    # which a hull contains, or for a simplicial cone the solutions of N c = lam > 0)
    if build.stats["inner_set"] == "simplex":
        cand = np.linalg.solve(a_in, rng.uniform(0.1, 1.0, size=(problem.k, 5))).T
    else:
        cand = rng.dirichlet(np.ones(len(build.inner_rays)), size=5) @ build.inner_rays
    assert (cand @ a_in.T > 1e-9 * np.linalg.norm(cand, axis=1)[:, None]).all()
    codes, why = shell_membership(problem, cand, family="extremal")
    assert (codes == INSIDE).all(), why
