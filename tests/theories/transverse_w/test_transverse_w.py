"""transverse-w: the showcase where the elastic and extremal cones differ.

The facet 12 fT0 + 4 fT1 + 5 fT2 >= 0 is found by the extremal family only: a point that
violates it is proven inside the elastic cone (every real product state gives E >= 0),
so no product-state inequality can ever produce it.  Its certificate is a PSD,
crossing-symmetric matrix Z on the 36-dimensional pair space, checked here.
"""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_region import sdp_for, shell_membership
from eftsieve.bounds.cones import (
    OUTSIDE,
    certificate_matrix,
    check_facet_on_cone,
    cross,
    dense_factors,
    facet_from_dual,
    verify_certificate,
)
from eftsieve.bounds.elastic import prove_elastic, search_states
from eftsieve.theories import get_theory
from eftsieve.theories.transverse_w import operators as ops
from tests.theories.cone_helpers import exchange

THEORY = get_theory("transverse-w")
#: a point between the cones (found by shooting rays from the extremal centre; the elastic
#: boundary lies up to 1.6x farther out than the extremal one around this direction)
C_STAR = np.array([-0.0269002, 0.04210103, 0.02082517])
#: the elastic facets (product states) found by the build, normalised by hand to integers
ELASTIC = np.array([[8.0, 4.0, 3.0], [0.0, 4.0, 1.0], [0.0, 0.0, 1.0]])


@pytest.fixture(scope="module")
def problem():
    return THEORY.problem()


def test_reduction_is_a_symmetry(problem):
    assert THEORY.reduction().defect(problem.tensors) < 1e-12


def test_facet_only_extremal_finds(problem):
    sdp = sdp_for(problem)
    centre = sdp.centre()
    d = C_STAR / (problem.tau() @ C_STAR) - centre.c
    res = sdp.shoot(centre.c, d)
    assert res.status == "optimal" and 0 < res.value < 1
    cert = facet_from_dual(problem, res.z)
    assert cert is not None
    n = cert.normal / cert.normal[0] * 12
    np.testing.assert_allclose(n, [12.0, 4.0, 5.0], atol=1e-5)
    # the certificate: Z is PSD and crossing-symmetric, and reproduces the facet
    z = certificate_matrix(dense_factors(cert.data))
    assert np.abs(z - cross(z)).max() < 1e-12
    assert np.linalg.eigvalsh(z)[0] >= -1e-6 * np.abs(z).max()
    assert verify_certificate(problem, cert.to_dict(), cert.normal)
    assert check_facet_on_cone(problem, cert, np.random.default_rng(3)) >= 0
    # C_STAR violates it, satisfies every elastic facet, and is proven elastic-positive
    assert cert.normal @ C_STAR < 0
    assert (ELASTIC @ C_STAR > 0).all()
    proof = prove_elastic(problem.tensor(C_STAR), reduction=THEORY.reduction())
    assert proof.outcome == "proven"
    _, _, e = search_states(problem.tensor(C_STAR), np.random.default_rng(0), starts=256)
    assert e > 0
    codes, why = shell_membership(problem, C_STAR[None, :], family="extremal")
    assert codes[0] == OUTSIDE, why


def test_rule_in_heavy_scalars_coupled_to_two_w(problem):
    # isosinglet and isospin-2 scalars coupled to W^a.W^b, integrated out at tree level, lie
    # in the span of O_T0..O_T2 and land on the cone (on its fT2 = 0 face: both are
    # extremal rays).  A pseudoscalar coupled to W.Wtilde generates a structure outside
    # the span of O_T0..O_T2 (residual 0.72), so it is no rule-in model for this basis.
    singlet, r1 = exchange(problem, ops.MODES, [ops.current_scalar("singlet")], 2.0, 0)
    quintet, r5 = exchange(problem, ops.MODES,
                           [ops.current_scalar("quintet", k) for k in range(5)], 2.0, 0)
    _, rp = exchange(problem, ops.MODES, [ops.current_scalar("pseudo")], 2.0, 0)
    assert r1 < 1e-9 and r5 < 1e-9 and rp > 0.1
    np.testing.assert_allclose(singlet, [0.5, 0.0, 0.0], atol=1e-10)   # g^2/(2 m^2) x 4
    pts = np.array([singlet, quintet, singlet + quintet])
    assert (ELASTIC @ pts.T >= -1e-12).all()
    # elastic: the product-state facets above (elastic contains extremal); extremal: exact
    codes, why = shell_membership(problem, pts, family="extremal")
    assert OUTSIDE not in codes.tolist(), why


@pytest.mark.slow
def test_full_regions_differ_by_exactly_one_facet():
    ext = THEORY.build_region({"families": ["extremal"]})
    ela = THEORY.build_region({"families": ["elastic"]})
    for region in (ext, ela):
        assert region.settings["shell_fraction"][0] < 1e-3

    def scaled(region):
        a, _ = region.arrays()
        return sorted(map(tuple, np.round(a / a[:, -1:], 6)))
    assert scaled(ela) == sorted(map(tuple, np.round(ELASTIC / ELASTIC[:, -1:], 6)))
    assert scaled(ext) == sorted(scaled(ela) + [tuple(np.round([12 / 5, 4 / 5, 1.0], 6))])
