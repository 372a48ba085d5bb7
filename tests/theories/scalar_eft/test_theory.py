"""Tests of the scalar EFT: programmatic sum rules, null constraints, regions, fit mapping.

External references:

* arXiv:2011.02957 (Caron-Huot & Van Duong, "Extremal Effective Field Theories"): the
  two-sided bound -10.346 <= g3~ <= 3 and 0 <= g4~ <= 1/2 (stated in the introduction and
  in Sec. 3; section and values from memory); the lowest null
  constraint <J(J+1)(J(J+1)-8)/m^8> = 0 in their measure (Sec. 2, from memory).
* arXiv:2105.02862 (Chiang, Huang, Li, Rodina, Weng), abstract: the polynomial
  150 - 43 J^2 + 2 J^4 (J^2 = l(l+1)) in a spectrum bound derived from the null
  constraints; our second null constraint is J^2 (2 J^4 - 43 J^2 + 150).
* scipy (eval_legendre, quad) and mpmath (Legendre functions of the second kind, Taylor
  series) for everything the sum-rule code derives.
* Closed-form low-energy expansions of tree amplitudes, derived in the comments.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import eval_legendre

from eftsieve.bounds.sum_rules import VerifySettings, verify_functional
from eftsieve.errors import InputError
from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.region.model import Region
from eftsieve.theories import get_theory
from eftsieve.theories.scalar_eft.theory import (
    OUTSIDE,
    THEORY,
    couplings_from_spectrum,
    derive_sum_rules,
    heavy_coefficient,
    legendre_forward_coefficient,
    low_energy_amplitude,
    low_energy_basis,
    null_residuals,
)

G3_LOW, G3_HIGH = -10.346, 3.0  # arXiv:2011.02957 (see module docstring)


# ---- exact algebra against scipy / mpmath -----------------------------------------------------
@pytest.mark.parametrize("spin", [0, 2, 5, 10])
def test_legendre_forward_coefficients_match_scipy(spin):
    j = spin * (spin + 1)
    for t in (Fraction(-7, 10), Fraction(-1, 5), Fraction(3, 10)):  # summed exactly
        series = sum(sum(c * j**p for p, c in enumerate(legendre_forward_coefficient(k)))
                     * t**k for k in range(spin + 1))
        assert float(series) == pytest.approx(eval_legendre(spin, float(1 + 2 * t)),
                                              rel=1e-12, abs=1e-14)


@pytest.mark.parametrize(("n", "spin"), [(1, 4), (2, 6), (3, 2)])
def test_heavy_kernel_matches_mpmath_taylor(n, spin):
    # [t^q] P_J(1+2t) (2+t)/(1+t)^(n+1), the heavy-state kernel at m = 1
    with mpmath.workdps(30):
        ser = mpmath.taylor(lambda t: mpmath.legendre(spin, 1 + 2 * t) * (2 + t)
                            / (1 + t) ** (n + 1), 0, 6)
    j = spin * (spin + 1)
    for q in range(7):
        h = heavy_coefficient(n, q)
        assert float(sum(c * j**p for p, c in enumerate(h))) == pytest.approx(
            float(ser[q]), rel=1e-12, abs=1e-12)


def test_first_null_constraints_match_published_forms():
    rules = derive_sum_rules(5)
    n4, n5 = rules.nulls
    # arXiv:2011.02957 Sec. 2 (from memory): J(J+1) (J(J+1) - 8)
    assert n4.polynomial == (0, -8, 1)
    # arXiv:2105.02862 abstract: the factor 150 - 43 J^2 + 2 J^4 (times J^2)
    assert n5.polynomial == (0, 150, -43, 2)
    assert (n4.degree, n5.degree) == (4, 5)


def test_counting_of_null_constraints():
    # floor(D/2) sum-rule rows against the number of S2^a S3^b with 2a + 3b = D
    rules = derive_sum_rules(12)
    for d in range(4, 13):
        n = sum(1 for r in rules.nulls if r.degree == d)
        assert n == d // 2 - len(low_energy_basis(d))
    assert all(r.polynomial[0] == 0 for r in rules.nulls)  # J = 0 exchange is consistent


def test_lowest_couplings_in_closed_form():
    rules = derive_sum_rules(4)
    # g2 = <1/m^6>, g3 = <(3 - 2 J(J+1))/m^8>, g4 = <1/(2 m^10)> (x = -su expansion,
    # worked out in the module docstring of scalar_eft; cf. arXiv:2011.02957 Sec. 2)
    assert rules.coupling("g2").polynomial == (1,)
    assert rules.coupling("g3").polynomial == (3, -2)
    assert rules.coupling("g4").polynomial == (Fraction(1, 2),)


# ---- crossing-symmetric test amplitudes ---------------------------------------------------
def _q(spin: int, x: float) -> float:
    with mpmath.workdps(40):
        return float(mpmath.re(mpmath.legenq(spin, 0, x, type=3)))


def _pole_sum_coefficients(poles: list[tuple[float, float]], spins: np.ndarray) -> np.ndarray:
    """Legendre coefficients of sum_i r_i / (t - t_i) at mass^2 m2 = 1 in z = 1 + 2t.

    1/(x - z) = sum_J (2J+1) P_J(z) Q_J(x) for x > 1 (Heine's expansion, from memory;
    checked below against a direct numerical Legendre projection with scipy).
    """
    out = np.zeros(spins.size)
    for r, t_i in poles:
        z_i = 1 + 2 * t_i
        for k, spin in enumerate(spins):
            if z_i > 1:   # r/(t - t_i) = -2r/(z_i - z)
                out[k] += -2 * r * (2 * spin + 1) * _q(int(spin), z_i)
            else:         # r/(t - t_i) = 2r/(z + |z_i|), P_J(-z) = (-1)^J P_J(z)
                out[k] += 2 * r * (2 * spin + 1) * (-1) ** spin * _q(int(spin), -z_i)
    return out


def test_heine_expansion_against_numerical_projection():
    assert _q(0, 3.0) == pytest.approx(math.atanh(1 / 3), rel=1e-14)  # Q_0 = artanh(1/x)
    spins = np.array([0, 2, 4, 6])
    coeff = _stu_pole_spectrum(spins)
    for spin, c in zip(spins, coeff, strict=True):  # (2J+1)/2 int P_J(z) 4/(9 - z^2) dz
        proj = (2 * spin + 1) / 2 * quad(lambda z, n=spin: eval_legendre(n, z) * 4 / (9 - z * z),
                                         -1, 1, epsabs=1e-13, epsrel=1e-11)[0]
        assert c == pytest.approx(proj, rel=1e-9)


def _stu_pole_spectrum(spins: np.ndarray) -> np.ndarray:
    # M = 1/((1-s)(1-t)(1-u)); residue at s = 1: 1/((1-t)(2+t)) = (1/3)[1/(1-t) + 1/(2+t)]
    return _pole_sum_coefficients([(-1 / 3, 1.0), (1 / 3, -2.0)], spins)


def test_stu_pole_couplings_and_nulls():
    spins = np.arange(0, 81, 2)
    a = _stu_pole_spectrum(spins)
    rules = derive_sum_rules(10)
    g = couplings_from_spectrum(rules, np.ones(spins.size), spins, a)
    # 1/(1 - S2/2 - S3) = sum_n (S2/2 + S3)^n: coefficient of S2^a S3^b is C(a+b, a)/2^a
    for c in rules.couplings:
        deg = int(c.name[1:].rstrip("p"))
        ea, eb = low_energy_basis(deg)[len(c.name) - len(c.name.rstrip("p"))]
        assert g[c.name] == pytest.approx(math.comb(ea + eb, ea) / 2**ea, rel=1e-10)
    _assert_nulls_vanish(rules, np.ones(spins.size), spins, a)


def _assert_nulls_vanish(rules, masses, spins, weights):
    """Every null constraint averages to zero, relative to the sum of |terms|."""
    res = null_residuals(rules, masses, spins, weights)
    for n in rules.nulls:
        scale = np.sum(np.abs(weights * n.value(spins)) / masses ** (2 * n.degree + 2))
        assert abs(res[n.name]) <= 1e-11 * scale, (n.name, res[n.name], scale)


def test_two_mass_crossing_symmetric_amplitude_satisfies_all_nulls():
    # F = 1/((a-s)(b-t)(b-u)) + 1/((a-t)(b-s)(b-u)) + 1/((a-u)(b-s)(b-t)), a = 1.3, b = 2:
    # fully crossing symmetric, F ~ 1/s at large s.  Residues (m^2 - s) F at fixed t:
    #   s = a: 1/((b-t)(a+b+t));  s = b: 1/((a-t)(2b+t)) + 1/((a+b+t)(b-t)).
    # Rescaled to m^2 = 1 (t -> m^2 t), each is a sum of simple poles in t.
    a_, b_ = 1.3, 2.0
    spins = np.arange(0, 91, 2)

    def simple(c1: float, c2: float, m2: float) -> list[tuple[float, float]]:
        # 1/((c1 - t)(c2 + t)) = [1/(c1 - t) + 1/(c2 + t)]/(c1 + c2), t = m2 * tau
        k = 1 / ((c1 + c2) * m2)
        return [(-k, c1 / m2), (k, -c2 / m2)]

    wa = _pole_sum_coefficients(simple(b_, a_ + b_, a_), spins)
    wb = _pole_sum_coefficients(simple(a_, 2 * b_, b_) + simple(b_, a_ + b_, b_), spins)
    masses = np.r_[np.full(spins.size, math.sqrt(a_)), np.full(spins.size, math.sqrt(b_))]
    _assert_nulls_vanish(derive_sum_rules(11), masses, np.r_[spins, spins], np.r_[wa, wb])


def _power_sum_couplings(order: int) -> dict[str, float]:
    """Couplings of sum_k (s^k + t^k + u^k), from Newton's identities with e1 = 0:
    p_k = (S2/2) p_{k-2} + S3 p_{k-3}, p_0 = 3, p_1 = 0, p_2 = S2."""
    polys: dict[int, dict[tuple[int, int], float]] = {0: {(0, 0): 3.0}, 1: {}, 2: {(1, 0): 1.0}}
    for k in range(3, order + 1):
        out: dict[tuple[int, int], float] = {}
        for (ea, eb), v in polys[k - 2].items():
            out[(ea + 1, eb)] = out.get((ea + 1, eb), 0.0) + v / 2
        for (ea, eb), v in polys[k - 3].items():
            out[(ea, eb + 1)] = out.get((ea, eb + 1), 0.0) + v
        polys[k] = out
    names = {}
    for k in range(2, order + 1):
        for i, ab in enumerate(low_energy_basis(k)):
            names[f"g{k}" + "p" * i] = polys[k].get(ab, 0.0)
    return names


def test_scalar_exchange_couplings():
    # 1/(m^2-s) + 1/(m^2-t) + 1/(m^2-u) = sum_k p_k / m^(2k+2): one J = 0 state
    rules = derive_sum_rules(10)
    for m in (1.0, 1.7):
        g = couplings_from_spectrum(rules, np.array([m]), np.array([0]), np.array([1.0]))
        for name, value in _power_sum_couplings(10).items():
            deg = int(name[1:].rstrip("p"))
            assert g[name] == pytest.approx(value / m ** (2 * deg + 2), rel=1e-13, abs=1e-300)
    s, t = np.array([0.011, -0.02]), np.array([-0.004, 0.013])
    g = couplings_from_spectrum(rules, np.array([1.0]), np.array([0]), np.array([1.0]))
    u = -s - t
    exact = 1 / (1 - s) + 1 / (1 - t) + 1 / (1 - u) - 3  # minus p_0; p_1 = 0
    np.testing.assert_allclose(low_energy_amplitude(g, s, t), exact, rtol=1e-10, atol=1e-15)


# ---- the region --------------------------------------------------------------------------
@pytest.fixture(scope="module")
def region_1d() -> Region:
    return THEORY.build_region({})


# the interval's ends: tests/theories/test_scalar_eft_acceptance.py


def test_region_certificates_and_round_trip(region_1d, tmp_path):
    for f in region_1d.facets:
        assert f.family == "null-constraints" and f.status == "optimal"
        ver = f.extra["verification"]
        assert ver["passed"] and ver["spins_exact"] == [0, 2000] and ver["impact_parameter_limit"]
        assert f.extra["lp_value"] - f.offset >= 0  # verified value is below the LP value
        assert set(f.extra["certificate"]["null_multipliers"]) == {
            n.name for n in derive_sum_rules(10).nulls}
    assert region_1d.settings["order"] == 10 and region_1d.settings["spins"] == 40
    # the stored certificate is checkable on its own: rebuild B = o - sum c_i n_i and verify
    rules = derive_sum_rules(10)
    for f, sign in zip(region_1d.facets, (1.0, -1.0), strict=True):
        mult = f.extra["certificate"]["null_multipliers"]
        size = rules.projective("g3t").degree + 1
        size = max(size, *(n.state_polynomial().degree + 1 for n in rules.nulls))
        func = sign * rules.projective("g3t").coeffs(size)
        for n in rules.nulls:
            func = func - mult[n.name] * n.state_polynomial().coeffs(size)
        ver = verify_functional(func, f.offset - 1e-12, VerifySettings(spin_exact_max=600))
        assert ver.passed and ver.lower >= f.offset - 1e-12
    back = Region.load(region_1d.save(tmp_path / "r.json"))
    assert back.hash == region_1d.hash and back.inner_vertices == region_1d.inner_vertices


def test_inner_spectrum_is_exactly_consistent(region_1d):
    f = region_1d.inner_facets[0]
    spec = f.extra["spectra"][0]
    y, spins, p = (np.array(spec[k]) for k in ("y", "J", "weight"))
    rules = derive_sum_rules(10)
    masses = 1 / np.sqrt(y)
    a = p * masses**6  # p is the measure normalised by g2 = <1/m^6> (M = 1)
    g = couplings_from_spectrum(rules, masses, spins, a)
    assert g["g2"] == pytest.approx(1.0, rel=1e-12)
    assert g["g3"] == pytest.approx(region_1d.inner_vertices[0][0], rel=1e-10)
    _assert_nulls_vanish(rules, masses, spins, a)


def test_positive_spectra_are_inside(region_1d):
    rng = np.random.default_rng(20110257)
    a_in, b_in = region_1d.arrays(inner=True)
    spins = np.arange(0, 61, 2)
    stu = _stu_pole_spectrum(spins)
    rules = derive_sum_rules(4)
    for _ in range(20):
        # positive mixtures of spin-0 exchanges and stu-poles with masses above the gap
        m_s, m_p = rng.uniform(1, 3, 3), rng.uniform(1, 3, 2)
        c_s, c_p = rng.exponential(size=3), rng.exponential(size=2)
        masses = np.r_[m_s, np.repeat(m_p, spins.size)]
        spin = np.r_[np.zeros(3, dtype=int), np.tile(spins, 2)]
        # a stu-pole of mass m: 1/((m^2-s)(m^2-t)(m^2-u)) = m^-6 x (unit-mass one at s/m^2)
        w = np.r_[c_s, np.concatenate([c * stu / m**4 for c, m in zip(c_p, m_p, strict=True)])]
        g = couplings_from_spectrum(rules, masses, spin, w)
        x = np.array([[g["g3"] / g["g2"]]])
        assert (region_1d.margins(x) >= 0).all()
        if x[0, 0] < G3_HIGH - 1e-9:
            assert (x @ a_in.T - b_in >= 0).all()


@pytest.fixture(scope="module")
def region_2d() -> Region:
    return THEORY.build_region({"coordinates": ["g3t", "g4t"], "order": 6, "directions": 16})


def test_two_dimensional_region(region_2d):
    verts = np.array(region_2d.inner_vertices)
    assert (region_2d.margins(verts) >= -1e-9).all()  # inner polygon inside the outer one
    assert verts[:, 1].max() == pytest.approx(0.5, abs=1e-9)  # g4~ <= 1/2, attained
    assert verts[:, 1].min() == pytest.approx(0.0, abs=1e-6)  # g4~ >= 0
    for y in (1.0, 0.6, 0.2):  # spin-0 exchange at m^2 = M^2/y: (3y, y^2/2), never excluded
        assert (region_2d.margins(np.array([[3 * y, y**2 / 2]])) >= -1e-9).all()
    outer_top = max(-f.offset for f in region_2d.facets if f.normal == (0.0, -1.0))
    assert 0.5 <= outer_top <= 0.5 + 2e-6  # verify_tol = 1e-6 below the LP value


@pytest.mark.slow
def test_default_two_dimensional_region():
    r = THEORY.build_region({"coordinates": ["g3t", "g4t"]})
    assert len(r.facets) == 68 and r.settings["order"] == 8
    verts = np.array(r.inner_vertices)
    assert (r.margins(verts) >= -1e-9).all()
    assert verts[:, 0].min() == pytest.approx(G3_LOW, rel=5e-3)


# ---- fits ----------------------------------------------------------------------------------
def _fit(names, conv, kin=None, mean=None):
    params = tuple(Parameter(n, Convention(conv, gap_mev=(kin or {}).get("gap_mev")))
                   for n in names)
    mean = np.zeros(len(names)) if mean is None else np.asarray(mean, dtype=float)
    return Fit("t", "scalar-eft", params, dict(kin or {}), mean, np.eye(len(names)))


def test_registered_and_settings_for_fit():
    assert get_theory("scalar-eft") is THEORY
    s = THEORY.region_settings_for_fit(_fit(["g3t", "g4t"], "projective"))
    assert s["coordinates"] == ["g3t", "g4t"] and s["order"] == 8
    s = THEORY.region_settings_for_fit(_fit(["g2", "g3"], "dimensionful", {"gap_mev": 1e3}))
    assert s["coordinates"] == ["g3t"] and s["order"] == 10


def test_validate_fit_errors():
    with pytest.raises(InputError, match="need g2"):
        THEORY.validate_fit(_fit(["g3", "g4"], "dimensionful", {"gap_mev": 500.0}))
    with pytest.raises(InputError, match="mass gap"):
        THEORY.validate_fit(_fit(["g2", "g3"], "dimensionful"))
    with pytest.raises(InputError, match="not a projective"):
        THEORY.validate_fit(_fit(["g3"], "projective"))
    THEORY.validate_fit(_fit(["g2", "g3", "g4"], "dimensionful", {"gap_mev": 500.0}))


def test_coordinate_maps(region_1d):
    cm = THEORY.coordinate_map(_fit(["g4t", "g3t"], "projective"), region_1d)
    assert cm.is_affine
    np.testing.assert_array_equal(cm(np.array([[0.2, 1.5]])), [[1.5]])  # picks g3t
    fit = _fit(["g2", "g3"], "dimensionful", {"gap_mev": 2.0})
    cm = THEORY.coordinate_map(fit, region_1d)
    assert not cm.is_affine
    x = np.array([[0.5, 0.25], [-1.0, 0.1], [0.0, 0.1]])
    y = cm(x)
    assert y[0, 0] == pytest.approx(0.25 * 2.0**2 / 0.5)  # g3 M^2 / g2
    assert (y[1:] == OUTSIDE).all()  # g2 <= 0 violates the g2 sum rule: far outside
    assert (region_1d.margins(y[1:]) < 0).any(axis=1).all()


def test_region_settings_are_validated():
    with pytest.raises(InputError, match="unknown region settings"):
        THEORY.build_region({"oder": 10})
    with pytest.raises(InputError, match="not a region coordinate"):
        THEORY.build_region({"coordinates": ["g5t"]})  # not supported yet (documented)
    with pytest.raises(InputError, match="not a number"):
        THEORY.build_region({"order": "ten"})
    with pytest.raises(InputError, match="order >= 4"):
        THEORY.build_region({"order": 3})
