"""Acceptance of the scalar-eft g3t interval (issue 15, item 7), against constructions made
here: the closed-form two-state solution at order 4, null constraints derived from
crossing symmetry of the dispersive amplitude, and positive rule-in spectra.

Conventions of the library (docs/physics_scalar_eft.md): a heavy state of mass m, even
spin J and weight a puts the residue a P_J(1 + 2t/m^2) at s = m^2 (and its u-channel
image); y = M^2/m^2 in units of the gap M = 1; g3t = g3 M^2/g2.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import comb, eval_legendre

from eftsieve.region.model import Region
from eftsieve.theories import get_theory
from eftsieve.theories.scalar_eft.theory import couplings_from_spectrum, derive_sum_rules

THEORY = get_theory("scalar-eft")
#: Caron-Huot & Van Duong, arXiv:2011.02957: g3 M^2/g2 >= -10.346 (quoted, from memory)
G3T_PUBLISHED_MIN = -10.346


@pytest.fixture(scope="module")
def regions() -> dict[int, Region]:
    out = {k: THEORY.build_region({"order": k}) for k in (4, 6)}
    out[10] = THEORY.build_region({})      # the default order
    return out


def _ends(region: Region) -> tuple[float, float, float, float]:
    """(outer lower, inner lower, inner upper, outer upper)."""
    lo, hi = region.facets
    return lo.offset, region.inner_vertices[0][0], region.inner_vertices[1][0], -hi.offset


def two_state_minimum() -> tuple[float, float]:
    """Closed-form order-4 minimum of g3t (derived here).

    With weights w = p y^3 normalised to g2 = sum w = 1 (g2 = <1/m^6>), a state (y, J)
    adds w (3 - 2 j) y to g3t and w j (j - 8) y^2 to the first null constraint
    (j = J(J+1); arXiv:2011.02957, Sec. 2, from memory).  One equality constraint: the
    minimum is at a two-state measure, one state with a negative null term (only J = 2:
    j (j - 8) = -12) and one with a positive one.  g3t of the pair is homogeneous of
    degree 1 in (y_A, y_B), so y_A = 1; with J_B = 4 (j = 20),
        g3t(y) = (-9 * 240 y^2 - 12 * 37 y) / (12 + 240 y^2) = -(180 y^2 + 37 y)/(1 + 20 y^2),
    stationary where 740 y^2 - 360 y - 37 = 0, y = (180 + sqrt(180^2 + 740 * 37)) / 740.
    Returns (g3t_min, y_B).
    """
    y = (180 + math.sqrt(180**2 + 740 * 37)) / 740
    return -(180 * y**2 + 37 * y) / (1 + 20 * y**2), y


def test_two_state_solution_is_the_minimum_over_pairs():
    """Brute force over pairs (J = 2 at y_A, even J_B <= 40 at y_B), y on a fine grid."""
    g_min, y_star = two_state_minimum()
    y = np.linspace(0.01, 1.0, 991)
    ya, yb = np.meshgrid(y, y, indexing="ij")
    best = np.inf
    for jb in range(4, 41, 2):
        j = jb * (jb + 1)
        fa, na = -9 * ya, -12 * ya**2
        fb, nb = (3 - 2 * j) * yb, j * (j - 8) * yb**2
        best = min(best, float(((fa * nb - fb * na) / (nb - na)).min()))
    assert g_min <= best <= g_min + 1e-5
    assert y_star == pytest.approx(0.57365, abs=1e-5)


def test_order4_lower_end_brackets_the_two_state_solution(regions):
    g_min, y_star = two_state_minimum()
    lo_out, lo_in, _, _ = _ends(regions[4])
    assert lo_out <= g_min <= lo_in
    assert lo_in - lo_out < 2e-5
    spec = regions[4].inner_facets[0].extra["spectra"][0]
    assert sorted(spec["J"]) == [2, 4]
    assert max(spec["y"]) == pytest.approx(1.0) and min(spec["y"]) == pytest.approx(y_star,
                                                                                    rel=1e-3)


def test_ends_are_non_decreasing_in_the_order(regions):
    """More null constraints remove spectra: the minimum of g3t can only rise."""
    outer = [_ends(regions[k])[0] for k in (4, 6, 10)]
    inner = [_ends(regions[k])[1] for k in (4, 6, 10)]
    assert np.all(np.diff(outer) >= 0) and np.all(np.diff(inner) >= 0)
    for k in (4, 6, 10):
        assert _ends(regions[k])[0] <= _ends(regions[k])[1]


def test_default_order_outer_end_is_below_the_published_value(regions):
    lo_out, _, hi_in, hi_out = _ends(regions[10])
    assert regions[10].settings["order"] == 10
    assert lo_out <= G3T_PUBLISHED_MIN
    assert G3T_PUBLISHED_MIN - lo_out < 2e-3
    # upper end: the spin-0 exchange at m = M, g3t = 3 (arXiv:2011.02957, from memory)
    assert hi_in == pytest.approx(3.0, abs=1e-12) and hi_out >= 3.0


def _shifted_legendre_taylor(spin: int, n: int) -> np.ndarray:
    """Coefficients of tau^k, k <= n, of P_J(1 + 2 tau) = sum_k C(J,k) C(J+k,k) tau^k
    (from memory; checked against scipy in the test below)."""
    k = np.arange(n + 1)
    return comb(spin, k, exact=False) * comb(spin + k, k, exact=False)


def test_shifted_legendre_series_against_scipy():
    tau = 0.37
    for spin in (0, 2, 7, 20):
        c = _shifted_legendre_taylor(spin, spin)
        assert np.polyval(c[::-1], tau) == pytest.approx(eval_legendre(spin, 1 + 2 * tau),
                                                         rel=1e-12)


def _crossing_defects(y, spins, weights, order):
    """|D_ab - D_ba| / scale for a, b >= 1, a + b <= order, where D_ab is the coefficient
    of s^a t^b in D(s,t) = sum_i a_i P_J(1 + 2t/m^2) [1/(m^2 - s) + 1/(m^2 - u)], u = -s-t.

    The full amplitude is D + c(t) (the s<->u symmetric subtraction of degree < 2 in s),
    so s<->t crossing symmetry holds iff D_ab = D_ba for a, b >= 1: these are the null
    constraints, derived here without the library's sum rules."""
    n = order
    d = np.zeros((n + 1, n + 1))
    scale = np.zeros((n + 1, n + 1))
    for yi, spin, w in zip(y, spins, weights, strict=True):
        m2 = 1.0 / yi
        pt = _shifted_legendre_taylor(int(spin), n) / m2 ** np.arange(n + 1)  # t^b
        s_pole = np.zeros((n + 1, n + 1))    # 1/(m2 - s) = sum s^a / m2^(a+1)
        s_pole[:, 0] = 1.0 / m2 ** (np.arange(n + 1) + 1)
        u_pole = np.zeros((n + 1, n + 1))    # 1/(m2 + s + t) = sum (-1)^k (s+t)^k / m2^(k+1)
        for k in range(n + 1):
            for a in range(k + 1):
                u_pole[a, k - a] += (-1) ** k * math.comb(k, a) / m2 ** (k + 1)
        term = np.zeros((n + 1, n + 1))
        for b in range(n + 1):               # multiply by the t-series of P_J
            term[:, b:] += np.outer(np.ones(1), pt[b]) * (s_pole + u_pole)[:, : n + 1 - b]
        d += w * term
        scale += np.abs(w * term)
    out = {}
    for a in range(1, n):
        for b in range(a + 1, n + 1 - a):
            out[(a, b)] = abs(d[a, b] - d[b, a]) / max(scale[a, b] + scale[b, a], 1e-300)
    return out


@pytest.mark.parametrize("order", [4, 6, 10])
def test_inner_spectra_satisfy_independent_null_constraints(regions, order):
    region = regions[order]
    for f in region.inner_facets:
        for spec in f.extra["spectra"]:
            y, spins = np.asarray(spec["y"]), np.asarray(spec["J"])
            a = np.asarray(spec["weight"]) / y**3     # a = p m^6 (library convention)
            defects = _crossing_defects(y, spins, a, order + 2)
            within = [v for (p, q), v in defects.items() if p + q <= order]
            beyond = [v for (p, q), v in defects.items() if p + q > order]
            assert max(within, default=0.0) < 1e-9
            if len(spins) > 1:   # not imposed beyond the order: the check can fail
                assert max(beyond) > 1e-6


def _rule_in_spectra(rng, n: int):
    """Positive mixtures of spin-0 exchanges (J = 0 satisfies every null constraint) and
    crossing-symmetric stu-poles 1/((m^2-s)(m^2-t)(m^2-u)) above the gap.  The stu-pole's
    residue at s = m^2 is 1/((m^2-t)(2m^2+t)); its Legendre weights are computed here by
    Gauss-Legendre projection in z = 1 + 2t/m^2 (scipy), not by the library."""
    spins = np.arange(0, 41, 2)
    z, wz = np.polynomial.legendre.leggauss(200)
    tau = (z - 1) / 2                          # t/m^2 on the physical segment [-1, 0]
    res = 1.0 / ((1 - tau) * (2 + tau))        # unit-mass residue
    coef = np.array([(2 * j + 1) / 2 * np.sum(wz * res * eval_legendre(j, z)) for j in spins])
    for _ in range(n):
        m_s, m_p = rng.uniform(1, 3, 2), rng.uniform(1, 3, 2)
        c_s, c_p = rng.exponential(size=2), rng.exponential(size=2)
        masses = np.r_[m_s, np.repeat(m_p, spins.size)]
        spin = np.r_[np.zeros(2, dtype=int), np.tile(spins, 2)]
        weights = np.r_[c_s, np.concatenate([c * coef / m**4 for c, m in
                                             zip(c_p, m_p, strict=True)])]
        yield masses, spin, weights


def test_rule_in_amplitudes_are_inside_at_every_order(regions):
    rules = derive_sum_rules(4)
    rng = np.random.default_rng(2011)
    for masses, spin, w in _rule_in_spectra(rng, 12):
        g = couplings_from_spectrum(rules, masses, spin, w)
        x = np.array([[g["g3"] / g["g2"]]])
        for region in regions.values():
            assert (region.margins(x) >= 0).all()
