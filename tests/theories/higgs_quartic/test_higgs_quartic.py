"""higgs-quartic: the published cone and tree-level rule-in by heavy scalars."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_region import shell_membership
from eftsieve.bounds.cones import INSIDE
from eftsieve.theories import get_theory
from eftsieve.theories.higgs_quartic import operators as ops
from tests.theories.cone_helpers import exchange, min_margin

THEORY = get_theory("higgs-quartic")


@pytest.fixture(scope="module", params=["extremal", "elastic"])
def region(request):
    return THEORY.build_region({"families": [request.param]})


def test_cone_matches_remmen_rodd(region):
    # Remmen & Rodd, "Consistency of the Standard Model Effective Field Theory",
    # arXiv:1908.09845 (from memory): C2 >= 0, C1 + C2 >= 0, C1 + C2 + C3 >= 0 for the
    # Higgs four-derivative operators, i.e. with C1 = fS2, C2 = fS0, C3 = fS1 (basis map in
    # operators.py): fS0 >= 0, fS0 + fS2 >= 0, fS0 + fS1 + fS2 >= 0.
    a, _ = region.arrays()
    in_c = a @ np.linalg.inv(ops.REMMEN_RODD_FROM_F)
    in_c /= np.abs(in_c).max(axis=1, keepdims=True)
    got = sorted(map(tuple, np.round(in_c, 6)))
    assert got == sorted([(0.0, 1.0, 0.0), (1.0, 1.0, 0.0), (1.0, 1.0, 1.0)])
    assert region.settings["shell_fraction"][0] < 1e-3


def test_rule_in_heavy_scalars_and_vectors(region):
    # scalars S (D Phi)^dag D Phi, Xi^a (D Phi)^dag sigma^a D Phi and vectors coupled to
    # i(Phi^dag T D Phi - h.c.), T = 1 or sigma^a, integrated out at tree level (spin <= 1
    # in every channel).  Each single state lands on the cone (here on a boundary ray:
    # they are extremal rays); their sum is strictly inside.
    problem = THEORY.problem()
    found = [exchange(problem, ops.MODES, [ops.current_singlet], 3.0, 0),
             exchange(problem, ops.MODES, [ops.current_triplet(a) for a in range(3)], 3.0, 0),
             exchange(problem, ops.MODES, [ops.current_vector(None)], 3.0, 1),
             exchange(problem, ops.MODES, [ops.current_vector(a) for a in range(3)], 3.0, 1)]
    assert all(resid < 1e-9 for _, resid in found)
    # the scalar singlet gives (g^2/2m^2) O_S1 only: fS1 = 1/18 at m = 3
    np.testing.assert_allclose(found[0][0], [0.0, 1 / 18, 0.0], atol=1e-10)
    for c, _ in found:
        assert min_margin(region, c) > -1e-7
    total = sum(c for c, _ in found)
    codes, why = shell_membership(region, total[None, :])
    assert codes[0] == INSIDE, why
