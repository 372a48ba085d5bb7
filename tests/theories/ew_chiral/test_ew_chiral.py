"""ew-chiral: the same engine reproduces the tree-level chpt-su2 cone; rule-in by sigma, rho."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_build import build_cone
from eftsieve.bounds.cone_region import cone_region, shell_membership
from eftsieve.bounds.cones import INSIDE
from eftsieve.theories import get_theory
from eftsieve.theories.cone_theory import problem_from_operators
from eftsieve.theories.ew_chiral import operators as ops
from tests.theories.cone_helpers import coefficients_of, exchange, min_margin

THEORY = get_theory("ew-chiral")


@pytest.fixture(scope="module")
def chpt_region():
    problem = problem_from_operators(ops.CHPT_COEFFICIENTS, ops.MODES, ops.CHPT_OPERATORS, {})
    return cone_region("chiral-limit pi pi", build_cone(problem), {"name": "none"})


def _normals(region):
    a, _ = region.arrays()
    return sorted(map(tuple, np.round(a / np.abs(a).max(axis=1, keepdims=True), 6)))


def test_chiral_limit_pion_contacts_reproduce_chpt_su2_tree_cone(chpt_region):
    # chpt-su2 at tree level in the forward, chiral limit: l2 >= 0 and l1 + l2 >= 0
    # (Pennington & Portoles, Phys. Lett. B 344 (1995) 399, hep-ph/9409426; Manohar &
    # Mateu, arXiv:0801.3222; from memory)
    assert _normals(chpt_region) == [(0.0, 1.0), (1.0, 1.0)]


@pytest.mark.parametrize("family", ["extremal", "elastic"])
def test_alpha4_alpha5_cone(family):
    # Distler, Grinstein, Porto & Rothstein, "Falsifying models of new physics via WW
    # scattering", hep-ph/0604255 (from memory): alpha4 >= 0 and alpha4 + alpha5 >= 0
    region = THEORY.build_region({"families": [family]})
    assert _normals(region) == [(1.0, 0.0), (1.0, 1.0)]


def test_alpha_basis_is_the_chpt_basis_rescaled():
    # with v = F: alpha4 = l2/4, alpha5 = l1/4 (Tr(V V) = -2 d pi.d pi; from the Lagrangians)
    p_a = THEORY.problem()
    p_l = problem_from_operators(ops.CHPT_COEFFICIENTS, ops.MODES, ops.CHPT_OPERATORS, {})
    np.testing.assert_allclose(p_a.tensors[0], 4 * p_l.tensors[1], atol=1e-12)
    np.testing.assert_allclose(p_a.tensors[1], 4 * p_l.tensors[0], atol=1e-12)


def test_rule_in_sigma_and_rho_exchange(chpt_region):
    problem = problem_from_operators(ops.CHPT_COEFFICIENTS, ops.MODES, ops.CHPT_OPERATORS, {})
    c_sigma, r_s = exchange(problem, ops.MODES, [ops.current_sigma], 2.0, 0)
    c_rho, r_v = exchange(problem, ops.MODES, [ops.current_rho(a) for a in range(3)], 2.0, 1)
    assert r_s < 1e-9 and r_v < 1e-9
    # rho exchange saturates l1 + l2 = 0 with l2 > 0 (Ecker, Gasser, Pich & de Rafael,
    # Nucl. Phys. B321 (1989) 311: l1^V = -l2^V; from memory); sigma gives l1 > 0, l2 = 0
    assert c_rho[1] > 0 and c_rho[0] == pytest.approx(-c_rho[1], rel=1e-9)
    assert c_sigma[0] > 0 and abs(c_sigma[1]) < 1e-12
    for c in (c_sigma, c_rho):
        assert min_margin(chpt_region, c) > -1e-7
    codes, why = shell_membership(chpt_region, (c_sigma + c_rho)[None, :])
    assert codes[0] == INSIDE, why
    _, resid = coefficients_of(problem, problem.tensor(np.array([0.3, 0.2])))
    assert resid < 1e-12
