"""photon-quartic: Euler-Heisenberg, the classic (F.F)^2, (F.Ftilde)^2 statement, rule-in."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cone_region import shell_membership
from eftsieve.bounds.cones import INSIDE
from eftsieve.bounds.lorentz import dual, ff
from eftsieve.theories import get_theory
from eftsieve.theories.photon_quartic import operators as ops
from tests.theories.cone_helpers import exchange, min_margin

THEORY = get_theory("photon-quartic")


@pytest.fixture(scope="module", params=["extremal", "elastic"])
def region(request):
    return THEORY.build_region({"families": [request.param]})


def test_classic_statement_both_coefficients_non_negative(region):
    # Adams, Arkani-Hamed, Dubovsky, Nicolis & Rattazzi, "Causality, analyticity and an IR
    # obstruction to UV completion", hep-th/0602178, Sec. 3 (from memory): for
    # L = c1 (F.F)^2 + c2 (F.Ftilde)^2 forward positivity gives c1 >= 0 and c2 >= 0, and no
    # more.  In (a, b) = ALT_FROM_ZETA @ zeta the facets must be a >= 0 and b >= 0.
    a, _ = region.arrays()
    in_ab = a @ np.linalg.inv(ops.ALT_FROM_ZETA)
    in_ab /= np.linalg.norm(in_ab, axis=1, keepdims=True)
    got = sorted(map(tuple, np.round(in_ab, 6)))
    assert got == [(0.0, 1.0), (1.0, 0.0)]
    assert all(f.offset == 0.0 for f in region.facets)


def test_euler_heisenberg_is_inside(region):
    # L_EH of an electron loop, closed form (from memory): a = alpha^2/(90 m^4),
    # b = 7 alpha^2/(360 m^4) in units of m = 1; zeta1 = -alpha^2/(36 m^4) < 0 is allowed.
    zeta = ops.euler_heisenberg(1 / 137.035999, 1.0)
    assert zeta[0] < 0 < zeta[1]
    margin = min_margin(region, zeta)
    # zeta is proportional to (-10, 28); the nearest facet is 2 zeta1 + zeta2 >= 0 (a >= 0),
    # so the margin n.c/|c| is 8/sqrt(5 * 884) = 0.1203 (quoted in docs/physics_cones.md)
    assert margin == pytest.approx(8 / np.sqrt(5 * 884), rel=1e-6)
    codes, why = shell_membership(region, zeta[None, :])
    assert codes[0] == INSIDE, why


def test_rule_in_scalar_and_pseudoscalar_exchange(region):
    # heavy scalar phi F.F and pseudoscalar a F.Ftilde, integrated out at tree level:
    # L_eff = g^2 J^2/(2 m^2), a ray a >= 0 (b >= 0) each; together strictly inside
    def j_s(a, f):
        return ff(f[..., 0, :, :], f[..., 0, :, :])

    def j_p(a, f):
        return ff(f[..., 0, :, :], dual(f[..., 0, :, :]))

    problem = THEORY.problem()
    cs, rs = exchange(problem, ops.MODES, [j_s], 2.0, 0)
    cp, rp = exchange(problem, ops.MODES, [j_p], 2.0, 0)
    assert rs < 1e-9 and rp < 1e-9
    for c in (cs, cp):
        assert min_margin(region, c) > -1e-7
    codes, why = shell_membership(region, (cs + cp)[None, :])
    assert codes[0] == INSIDE, why
    # the scalar alone is (F.F)^2 with coefficient g^2/(2 m^2) (g = 1): 1/8 at m = 2
    np.testing.assert_allclose(ops.ALT_FROM_ZETA @ cs, [1 / 8, 0.0], atol=1e-10)


def test_fit_in_the_other_basis_maps_onto_the_region():
    from eftsieve.fit.conventions import Convention
    from eftsieve.fit.model import Fit, Parameter

    fit = Fit("demo", "photon-quartic", tuple(Parameter(n, Convention("none"))
                                              for n in ops.ALT_COEFFICIENTS), {},
              np.array([1.0, 2.0]), np.eye(2))
    region = THEORY.build_region({})
    cmap = THEORY.coordinate_map(fit, region)
    zeta = cmap(np.array([[1.0, 2.0]]))[0]
    np.testing.assert_allclose(ops.ALT_FROM_ZETA @ zeta, [1.0, 2.0])
    assert "modes" in THEORY.describe() and THEORY.describe()["modes"] == ["A x", "A y"]
