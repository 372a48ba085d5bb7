"""Projections of positivity cones with free coefficients (eftsieve.bounds.projection).

The independent construction: the Higgs-sector cone is polyhedral, with the published
inequalities of Remmen & Rodd, "Consistency of the Standard Model Effective Field Theory",
arXiv:1908.09845 (from memory; the same form as tests/theories/higgs_quartic): C2 >= 0,
C1 + C2 >= 0, C1 + C2 + C3 >= 0 with C1 = fS2, C2 = fS0, C3 = fS1.  Its projection with
some coefficients free is decided point by point by a linear feasibility problem (scipy's
HiGHS): is there c_F with A (c_K, c_F) >= 0?  No SDP is involved.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import linprog

from eftsieve.bounds.cones import verify_certificate
from eftsieve.bounds.projection import (
    MAX_RESIDUAL,
    ProjectedCone,
    project_cone,
    projection_region,
)
from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, classify
from eftsieve.theories import get_theory

#: fS0 >= 0, fS0 + fS2 >= 0, fS0 + fS1 + fS2 >= 0 (arXiv:1908.09845, from memory)
REMMEN_RODD = np.array([[1.0, 0.0, 0.0], [1.0, 0.0, 1.0], [1.0, 1.0, 1.0]])
NAMES = ("fS0", "fS1", "fS2")


def lp_member(x_keep: np.ndarray, keep: list[int], margin: float) -> bool:
    """Whether some c_F gives A c >= margin |x| (a strict version of membership)."""
    free = [i for i in range(3) if i not in keep]
    a_k, a_f = REMMEN_RODD[:, keep], REMMEN_RODD[:, free]
    rhs = a_k @ x_keep - margin * np.linalg.norm(x_keep)
    res = linprog(np.zeros(len(free)), A_ub=-a_f, b_ub=rhs, bounds=[(None, None)] * len(free),
                  method="highs")
    return res.status == 0


@pytest.fixture(scope="module")
def problem():
    return get_theory("higgs-quartic").problem()


@pytest.fixture(scope="module")
def projections(problem):
    return {keep: project_cone(problem, list(keep))
            for keep in [("fS0",), ("fS1",), ("fS2",), ("fS0", "fS1"), ("fS0", "fS2"),
                         ("fS1", "fS2")]}


@pytest.mark.parametrize("keep", [("fS0",), ("fS1",), ("fS2",), ("fS0", "fS1"),
                                  ("fS0", "fS2"), ("fS1", "fS2")])
def test_projection_agrees_with_the_lp_projection_of_the_published_cone(projections, keep):
    pc = projections[keep]
    idx = [NAMES.index(c) for c in keep]
    rng = np.random.default_rng(len(keep))
    pts = rng.normal(size=(300, len(keep)))
    region = projection_region("higgs-quartic", pc, {"name": "none"}) if len(pc.normals) \
        else None
    for x in pts:
        inside = lp_member(x, idx, 1e-6)
        outside = not lp_member(x, idx, -1e-6)
        if region is None:                     # the whole line or plane
            assert inside and not pc.inner_normals().size
            continue
        v = classify(x[None, :], region, 0.0).verdict[0]
        if inside:
            assert v in (INSIDE, MARGINAL), (keep, x)
            # the inner set (proven points) holds it unless it sits within the thin wedge
            # between the inner and outer sets
            assert v == INSIDE or np.min(np.array(pc.normals) @ x) < 1e-4 * np.linalg.norm(x)
        if outside:
            assert v == OUTSIDE, (keep, x)


def test_expected_shapes(projections):
    # fS0 >= 0 survives any freedom of fS1 and fS2; fS1 and fS2 are free in sign; the
    # (fS0, fS2) projection keeps fS0 >= 0 and fS0 + fS2 >= 0 (Fourier-Motzkin by hand on
    # the inequalities above)
    assert np.allclose(projections[("fS0",)].normals, [[1.0]])
    assert not len(projections[("fS1",)].normals) and not len(projections[("fS2",)].normals)
    # (to the solver's accuracy: a facet found numerically is exact only up to ~1e-8)
    got = np.array(sorted(map(tuple, projections[("fS0", "fS2")].normals)))
    s = 1 / np.sqrt(2)
    assert np.allclose(got, sorted([(1.0, 0.0), (s, s)]), atol=1e-7)
    assert np.allclose(projections[("fS0", "fS1")].normals, [[1.0, 0.0]])
    assert not len(projections[("fS1", "fS2")].normals)


def test_elastic_projections_equal_the_extremal_ones_here(problem, projections):
    # the Higgs-sector cone is the same for both families (the three published facets,
    # Remmen & Rodd, arXiv:1908.09845, from memory), so its elastic projections are the
    # LP projections too; each facet is a conic combination of product states whose
    # free part vanishes, re-verified from what it stores
    from eftsieve.bounds.projection import project_elastic

    for keep, pc in projections.items():
        pe = project_elastic(problem, list(keep))
        np.testing.assert_allclose(pe.normals, pc.normals, atol=1e-7)
        for r, cert in zip(pe.residuals, pe.certificates, strict=True):
            assert cert.kind == "product-states" and min(cert.data["weights"]) > 0
            assert verify_certificate(problem, cert.to_dict(), cert.normal)
            assert r <= 1e-9
        np.testing.assert_allclose(pe.points, pc.points)   # the extremal proven points


def test_facets_carry_certificates_and_residuals(problem, projections):
    for pc in projections.values():
        fi = [NAMES.index(c) for c in pc.free]
        ki = [NAMES.index(c) for c in pc.keep]
        for n, r, cert in zip(pc.normals, pc.residuals, pc.certificates, strict=True):
            assert verify_certificate(problem, cert.to_dict(), cert.normal)
            full = cert.normal
            assert r == pytest.approx(np.abs(full[fi]).sum() / np.linalg.norm(full[ki]))
            assert r <= MAX_RESIDUAL
            np.testing.assert_allclose(n, full[ki] / np.linalg.norm(full[ki]))


def test_inner_points_are_projections_of_proven_points(problem, projections):
    pc: ProjectedCone = projections[("fS0", "fS2")]
    ki = [NAMES.index(c) for c in pc.keep]
    for p, lift in zip(pc.points, pc.lifts, strict=True):
        np.testing.assert_allclose(p, lift[ki] / np.linalg.norm(lift[ki]))
        # proven in the full cone by the published inequalities too
        assert (REMMEN_RODD @ lift >= -1e-9 * np.linalg.norm(lift)).all()


def test_refuses_bad_requests(problem):
    with pytest.raises(ValueError, match="one or two"):
        project_cone(problem, ["fS0", "fS1", "fS2"])
    with pytest.raises(ValueError, match="one or two"):
        project_cone(problem, ["fS0", "fS0"])


def test_lifts_are_inside_by_the_exact_membership_test(problem, projections):
    # a lifted point is a point of the full cone (proven by its rho when it was found):
    # the exact membership test never puts one outside.  A shot along the face fS0 = 0
    # may lift with free coefficients 1e5 times the kept one, so that the point lies
    # within 1e-9 of the boundary relative to its size: the test may then say marginal,
    # with t* within the solver's accuracy of 0
    from eftsieve.bounds.cone_region import shell_membership
    from eftsieve.bounds.sdp import ExtremalSDP

    lifts = projections[("fS0",)].lifts
    codes, _ = shell_membership(problem, lifts, family="extremal")
    assert not (codes == OUTSIDE).any()
    assert (codes == INSIDE).any()
    plain = ExtremalSDP(problem, reduce=False)
    for x in lifts[codes != INSIDE]:
        assert plain.membership(x).value > -1e-8


def test_sign_with_others_free_in_the_limits_table():
    # fS0 >= 0 and fS1, fS2 unconstrained with the other two free (the LP projection
    # above); the limits table states it next to the signs alone
    from eftsieve.limits.intervals import sign_rules, with_free_signs

    region = get_theory("higgs-quartic").build_region({})
    rules = with_free_signs(sign_rules(region), region, ["fS0", "fS1"])
    got = {r.coefficient: r.free_rule for r in rules}
    assert got == {"fS0": "nonnegative", "fS1": "free", "fS2": None}
    fs0 = next(r for r in rules if r.coefficient == "fS0")
    assert fs0.free_residual is not None and fs0.free_residual <= MAX_RESIDUAL
    assert fs0.to_dict()["with_others_free"] == "nonnegative"


@pytest.mark.parametrize(("theory", "keep", "free", "normals"), [
    # transverse-W extremal facets fT2 >= 0, 4 fT1 + fT2 >= 0, 8 fT0 + 4 fT1 + 3 fT2 >= 0,
    # 12 fT0 + 4 fT1 + 5 fT2 >= 0 (arXiv:1808.00010, from memory; docs/physics_cones.md):
    # with fT0 and fT1 free, Fourier-Motzkin leaves fT2 >= 0
    ("transverse-w", "fT2", "fT0,fT1", [(1.0,)]),
    # light-by-light c1 = zeta1 + zeta2/2 >= 0, c2 = zeta2/4 >= 0 (hep-th/0602178, from
    # memory): zeta1 free leaves zeta2 >= 0
    ("photon-quartic", "zeta2", "all", [(1.0,)]),
])
def test_cone_theories_build_projections(theory, keep, free, normals):
    region = get_theory(theory).build_region({"coordinates": keep, "free": free})
    assert [tuple(np.round(f.normal, 9)) for f in region.facets] == normals
    assert region.settings["projection"]["keep"] == [keep]


@pytest.mark.parametrize(("settings", "match"), [
    ({"coordinates": "zeta1", "free": "all"}, "unconstrained"),   # zeta1 free in sign
    ({"coordinates": "zeta1"}, "only with --free"),
    ({"free": "zeta2"}, "only with --free"),
    ({"coordinates": "zeta3", "free": "all"}, "not a coefficient"),
    ({"coordinates": "zeta1", "free": "zeta1"}, "also in --coordinates"),
    ({"coordinates": "zeta1,zeta2", "free": "all"}, "'all' leaves no coefficient"),
])
def test_cone_theory_projection_requests_are_checked(settings, match):
    from eftsieve.errors import InputError

    with pytest.raises(InputError, match=match):
        get_theory("photon-quartic").build_region(settings)


def test_the_description_of_a_projection_says_what_is_free():
    from eftsieve.region.build import describe_region

    region = get_theory("transverse-w").build_region({"coordinates": "fT2",
                                                      "free": "fT0,fT1"})
    text = describe_region(region)
    assert "projection: 2 coefficients free (any value, not zero): fT0, fT1" in text
    assert "inner set: 1 facet (" in text and "residual <=" in text
