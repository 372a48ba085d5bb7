"""Independent sectors of a cone: the product of two theories' cones, decided sector by
sector, against the classic statements of each factor.

* photon-quartic: a >= 0, b >= 0 for L = a (F.F)^2 + b (F.Ftilde)^2 (Adams,
  Arkani-Hamed, Dubovsky, Nicolis & Rattazzi, hep-th/0602178, Sec. 3; from memory).
* ew-chiral: alpha4 >= 0, alpha4 + alpha5 >= 0, the tree-level forward cone l2 >= 0,
  l1 + l2 >= 0 of chiral perturbation theory with alpha4 = l2/4, alpha5 = l1/4
  (docs/physics_cones.md; Gasser & Leutwyler, Ann. Phys. 158 (1984) 142).
"""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_region import ConeShell, decide_point
from eftsieve.bounds.cone_sectors import product_region, sectors, union_problem
from eftsieve.bounds.cones import INSIDE, OUTSIDE
from eftsieve.theories import get_theory
from eftsieve.theories.photon_quartic import operators as photon


@pytest.fixture(scope="module")
def product():
    regions = [get_theory(t).build_region({}) for t in ("photon-quartic", "ew-chiral")]
    return product_region("photon x ew", regions)


def classic(points: np.ndarray) -> np.ndarray:
    """The product of the two classic cones: +1 strictly inside, -1 outside, 0 near."""
    ab = points[:, :2] @ photon.ALT_FROM_ZETA.T
    forms = np.column_stack([ab, points[:, 2], points[:, 2] + points[:, 3]])
    scale = np.linalg.norm(points, axis=1)
    out = np.where((forms > 0).all(axis=1), 1, -1)
    out[np.abs(forms).min(axis=1) < 1e-6 * scale] = 0
    return out


def test_sectors_split_the_union_and_nothing_else():
    ph = get_theory("photon-quartic").problem()
    ew = get_theory("ew-chiral").problem()
    secs = sectors(union_problem([ph, ew]))
    assert [(s.coefficients, s.modes) for s in secs] == [((0, 1), (0, 1)),
                                                         ((2, 3), (2, 3, 4))]
    np.testing.assert_array_equal(secs[1].problem.tensors, ew.tensors)
    assert len(sectors(get_theory("transverse-w").problem())) == 1


def test_product_region_verdicts_match_the_classic_statements(product):
    shell = ConeShell.from_region(product)
    rng = np.random.default_rng(4)
    pts = rng.normal(size=(40, 4))
    codes, why, _ = shell.decide(pts, np.arange(len(pts)))
    truth = classic(pts)
    assert (truth != 0).all()
    assert ((codes == INSIDE) == (truth == 1)).all(), why
    assert ((codes == OUTSIDE) == (truth == -1)).all(), why
    # the facets of the product are each factor's, embedded
    a, _ = product.arrays()
    assert a.shape == (4, 4) and (np.count_nonzero(a, axis=1) <= 2).all()


def test_the_undecomposed_program_agrees_with_the_sectors_on_a_product_point(product):
    # mixed pairs (one mode of each factor) have no elastic channel, so rho vanishes on
    # them; with those dead pairs removed (bounds/cones.py) the whole program is strictly
    # feasible again and proves a point inside both factors, as the sectors do
    problem = union_problem([get_theory(t).problem() for t in ("photon-quartic", "ew-chiral")])
    inside = np.array([1.0, 1.0, 1.0, 0.5])
    assert classic(inside[None, :])[0] == 1
    code, why, _ = decide_point(problem, "extremal", inside, np.random.default_rng(0))
    assert code == INSIDE, why
    codes, _, _ = ConeShell(problem, "extremal").decide(inside[None, :], np.arange(1))
    assert codes[0] == INSIDE
