"""Tests of the generic sum-rule machinery: the LP wrapper, state polynomials, verification.

Reference values are closed forms worked out by hand in the comments (each LP optimum is
also certified inside the test by primal feasibility, dual feasibility and equal
objectives, which is a proof of optimality), or independent scipy computations.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import numpy as np
import pytest
from scipy.optimize import linprog

from eftsieve.bounds.sum_rules import (
    StatePolynomial,
    SumRuleSolver,
    VerifySettings,
    evaluate,
    exact_spectrum,
    solve_lp,
    verify_functional,
)
from eftsieve.errors import SolverError

TOL = 1e-9


def _certify(res, c, a_eq=None, b_eq=None, a_ub=None, b_ub=None):
    """Primal feasibility, dual feasibility (x >= 0 problems) and strong duality."""
    x = res.x
    assert (x >= -TOL).all()
    if a_eq is not None:
        np.testing.assert_allclose(a_eq @ x, b_eq, atol=TOL)
    if a_ub is not None:
        assert (a_ub @ x <= b_ub + TOL).all()
        assert (res.dual_ub <= TOL).all()  # multipliers of <= rows are non-positive
    assert (res.reduced_costs >= -TOL).all()
    dual_obj = (0 if b_eq is None else b_eq @ res.dual_eq) + (0 if b_ub is None
                                                              else b_ub @ res.dual_ub)
    assert res.objective == pytest.approx(dual_obj, abs=TOL)
    assert res.objective == pytest.approx(float(c @ x), abs=TOL)


def test_lp_textbook_maximisation():
    # V. Chvatal, "Linear Programming" (Freeman 1983), Ch. 2 first example (from memory):
    # max 5x1 + 4x2 + 3x3 s.t. 2x1+3x2+x3 <= 5, 4x1+x2+2x3 <= 11, 3x1+4x2+2x3 <= 8.
    # Optimum 13 at x = (2, 0, 1), dual y = (1, 0, 1); by hand: 2*2+1 = 5, 4*2+2 = 10 <= 11,
    # 3*2+2 = 8, and y = (1, 0, 1) gives A^T y = (5, 7, 3) >= (5, 4, 3), b.y = 13.
    c = -np.array([5.0, 4.0, 3.0])
    a_ub = np.array([[2.0, 3, 1], [4, 1, 2], [3, 4, 2]])
    b_ub = np.array([5.0, 11, 8])
    res = solve_lp(c, a_ub=a_ub, b_ub=b_ub)
    _certify(res, c, a_ub=a_ub, b_ub=b_ub)
    np.testing.assert_allclose(res.x, [2, 0, 1], atol=TOL)
    assert res.objective == pytest.approx(-13.0)
    np.testing.assert_allclose(res.dual_ub, [-1, 0, -1], atol=TOL)


def test_lp_equality_simplex():
    # min x1 + 2x2 + 3x3 on the unit simplex: optimum 1 at a vertex (1, 0, 0); dual y = 1,
    # reduced costs (0, 1, 2) (closed form).
    c = np.array([1.0, 2.0, 3.0])
    a_eq, b_eq = np.ones((1, 3)), np.array([1.0])
    res = solve_lp(c, a_eq, b_eq)
    _certify(res, c, a_eq, b_eq)
    np.testing.assert_allclose(res.x, [1, 0, 0], atol=TOL)
    np.testing.assert_allclose(res.dual_eq, [1.0], atol=TOL)
    np.testing.assert_allclose(res.reduced_costs, [0, 1, 2], atol=TOL)


def test_lp_two_active_inequalities():
    # min -x1 - x2 s.t. x1 + 2x2 <= 4, 3x1 + x2 <= 6: both active, x = (8/5, 6/5), value
    # -14/5; duals from A^T z = c: z = (-2/5, -1/5) (solved by hand).
    c = np.array([-1.0, -1.0])
    a_ub, b_ub = np.array([[1.0, 2.0], [3.0, 1.0]]), np.array([4.0, 6.0])
    res = solve_lp(c, a_ub=a_ub, b_ub=b_ub)
    _certify(res, c, a_ub=a_ub, b_ub=b_ub)
    np.testing.assert_allclose(res.x, [1.6, 1.2], atol=TOL)
    np.testing.assert_allclose(res.dual_ub, [-0.4, -0.2], atol=TOL)
    assert res.objective == pytest.approx(-2.8)


def test_lp_free_variable_and_bounds():
    # min x1 - x2 with x1 free, 0 <= x2 <= 2 and x1 + x2 = 1: x = (-1, 2), value -3;
    # y = 1 (x1 free: reduced cost 0), x2 at its upper bound with reduced cost -2.
    c = np.array([1.0, -1.0])
    res = solve_lp(c, np.array([[1.0, 1.0]]), np.array([1.0]), bounds=[(None, None), (0, 2)])
    np.testing.assert_allclose(res.x, [-1, 2], atol=TOL)
    np.testing.assert_allclose(res.dual_eq, [1.0], atol=TOL)
    np.testing.assert_allclose(res.reduced_costs, [0, -2], atol=TOL)
    assert res.objective == pytest.approx(-3.0)


def test_lp_infeasible_raises():
    # x1 + x2 = -1 has no solution with x >= 0
    with pytest.raises(SolverError) as err:
        solve_lp(np.ones(2), np.array([[1.0, 1.0]]), np.array([-1.0]))
    assert err.value.status == "infeasible"


def test_lp_unbounded_raises():
    # min -x1 s.t. x1 - x2 = 0, x >= 0: the ray x1 = x2 -> infinity
    with pytest.raises(SolverError) as err:
        solve_lp(np.array([-1.0, 0.0]), np.array([[1.0, -1.0]]), np.array([0.0]))
    assert err.value.status == "unbounded"


def _poly(rows: dict[tuple[int, int], Fraction], size: int) -> StatePolynomial:
    ex = [[Fraction(0)] * (e + 1) for e in range(size)]
    for (e, q), v in rows.items():
        ex[e][q] = Fraction(v)
    return StatePolynomial(tuple(tuple(r) for r in ex), "p")


def test_state_polynomial_evaluation():
    p = _poly({(1, 0): 3, (1, 1): -2, (3, 2): Fraction(1, 7)}, 4)
    rng = np.random.default_rng(1)
    y, spin = rng.uniform(0, 1, 20), 2 * rng.integers(0, 30, 20)
    j = spin * (spin + 1.0)
    direct = 3 * y - 2 * y * j + y**3 * j**2 / 7  # sum c[e,l] y^e j^l written out
    np.testing.assert_allclose(p(y, spin), direct, rtol=1e-13)
    with mpmath.workdps(30):
        assert float(p.mp_value(y[0], spin[0], mpmath)) == pytest.approx(direct[0], rel=1e-14)


def _coeffs(entries: dict[tuple[int, int], float], n: int = 3) -> np.ndarray:
    c = np.zeros((n, n))
    for k, v in entries.items():
        c[k] = v
    return c


def test_verify_known_minimum():
    # f = y (j - 1) = w - y: J = 0 gives -y (minimum -1 at y = 1), J >= 2 gives >= 0.
    c = _coeffs({(1, 1): 1.0, (1, 0): -1.0})
    s = VerifySettings(spin_exact_max=200)
    ok = verify_functional(c, -1.0 - 1e-9, s)
    assert ok.passed and -1.0 - 1e-9 <= ok.lower <= -1.0
    bad = verify_functional(c, -1.0 + 1e-3, s)
    assert not bad.passed
    assert bad.violations[0][1] == 0 and bad.violations[0][0] == pytest.approx(1.0)


def test_verify_fixed_impact_parameter_limit():
    # f = w^2 - 10 w + 20 + 100 y w.  At fixed J, y = w/j, so f = (w-5)^2 - 5 + 100 w^2/j:
    # the infimum -5 is approached only as J -> infinity at fixed w = 5 (b = 2 sqrt(5)/M).
    c = _coeffs({(2, 2): 1.0, (1, 1): -10.0, (0, 0): 20.0, (2, 1): 100.0})
    s = VerifySettings(spin_exact_max=400)
    ok = verify_functional(c, -5.0 - 1e-9, s)
    assert ok.passed and ok.lower <= -5.0
    bad = verify_functional(c, -5.0 + 0.01, s)  # reached in the continuous tail J > 400
    assert not bad.passed
    y, spin = bad.violations[0][:2]
    assert spin > 400 and y * spin * (spin + 1) == pytest.approx(5.0, rel=0.05)


def test_verify_unbounded_below():
    c = _coeffs({(1, 1): -1.0})  # f = -w -> -infinity as J -> infinity
    ver = verify_functional(c, -1e6, VerifySettings(spin_exact_max=100))
    assert not ver.passed and ver.lower == -np.inf


def _toy_problem() -> tuple[StatePolynomial, StatePolynomial]:
    # objective y (3 - 2j) and the null constraint y^2 j (j - 8) (lowest order of the
    # scalar EFT, written out by hand here)
    obj = _poly({(1, 0): 3, (1, 1): -2}, 3)
    null = _poly({(2, 1): -8, (2, 2): 1}, 3)
    return obj, null


def test_solver_against_direct_linprog():
    obj, null = _toy_problem()
    ys = np.linspace(0.02, 1.0, 50)
    yy, jj = np.meshgrid(ys, np.arange(0, 21, 2), indexing="ij")
    y, spin = yy.ravel(), jj.ravel()
    solver = SumRuleSolver((obj,), (null,), y, spin, VerifySettings(spin_exact_max=300))
    b = solver.extremize(np.array([1.0]))
    # independent: scipy linprog on a much finer grid of the same states
    fy, fj = np.meshgrid(np.linspace(0.001, 1.0, 2000), np.arange(0, 41, 2), indexing="ij")
    fy, fj = fy.ravel(), fj.ravel()
    jv = fj * (fj + 1.0)
    ref = linprog(fy * (3 - 2 * jv), A_eq=np.vstack([np.ones(fy.size), fy**2 * jv * (jv - 8)]),
                  b_eq=[1.0, 0.0], bounds=(0, None), method="highs")
    assert ref.status == 0
    assert b.outer <= ref.fun + 1e-9 <= b.inner + 1e-6  # outer rigorous, inner allowed
    assert b.inner - b.outer < 1e-3 * abs(b.outer)
    # the inner spectrum satisfies the constraints exactly
    p = np.array(b.spectrum["weight"])
    yy_, jj_ = np.array(b.spectrum["y"]), np.array(b.spectrum["J"])
    assert (p > 0).all() and p.sum() == pytest.approx(1.0, abs=1e-14)
    assert abs(np.sum(p * null(yy_, jj_))) < 1e-12 * np.sum(p * np.abs(null(yy_, jj_)))


def test_exact_spectrum_rejects_inconsistent_support():
    _, null = _toy_problem()
    # two J = 2 states cannot make <y^2 j (j-8)> vanish (all terms negative)
    with pytest.raises(SolverError):
        exact_spectrum((null,), np.array([0.5, 1.0]), np.array([2, 2]), np.array([0.5, 0.5]))


def test_evaluate_matches_direct_powers():
    c = np.triu(np.arange(16.0).reshape(4, 4)).T  # lower triangle c[e, l], l <= e
    y, spin = np.array([0.3, 0.9]), np.array([4, 10])
    j = spin * (spin + 1.0)
    direct = sum(c[e, q] * y**e * j**q for e in range(4) for q in range(e + 1))
    np.testing.assert_allclose(evaluate(c, y, spin), direct, rtol=1e-13)
