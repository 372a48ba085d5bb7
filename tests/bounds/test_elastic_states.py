"""Real product states suffice for ``elastic`` when M is real and crossing-symmetric.

For complex unit u = a + i b, v = c + i d the elastic value
E(u, v) = sum M^{ijkl} u_i v_j conj(u_k) conj(v_l) equals
E(a, c) + E(a, d) + E(b, c) + E(b, d) (unnormalised real product states): the
antisymmetric parts of u conj(u)^T and v conj(v)^T meet only through
sum M^{ijkl} A_ik B_jl, which crossing (M^{ijkl} = M^{ilkj}) turns into its own negative
(derivation in docs/physics_cones.md, section 3).  The check below evaluates the complex
form directly with numpy and compares.
"""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cones import elastic_values
from eftsieve.theories import get_theory


def complex_elastic(m: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """E(u, v) for complex states, straight from the definition (batched)."""
    return np.einsum("ijkl,bi,bj,bk,bl->b", m, u, v, u.conj(), v.conj())


def real_sum(problem, c: np.ndarray, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    vals = [elastic_values(problem, x, y) @ c for x in (u.real, u.imag)
            for y in (v.real, v.imag)]
    return np.sum(vals, axis=0)


@pytest.mark.parametrize("theory", ["photon-quartic", "higgs-quartic", "ew-chiral",
                                    "transverse-w"])
def test_complex_states_add_nothing_to_real_ones(theory):
    problem = get_theory(theory).problem()
    assert problem.symmetry_defects()["crossing"] < 1e-12
    rng = np.random.default_rng(8)
    c = rng.normal(size=problem.k)
    m = problem.tensor(c)
    u = rng.normal(size=(64, problem.n)) + 1j * rng.normal(size=(64, problem.n))
    v = rng.normal(size=(64, problem.n)) + 1j * rng.normal(size=(64, problem.n))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    direct = complex_elastic(m, u, v)
    assert np.abs(direct.imag).max() < 1e-12 * np.abs(m).max()
    np.testing.assert_allclose(direct.real, real_sum(problem, c, u, v), rtol=1e-10,
                               atol=1e-12 * np.abs(m).max())


def test_without_crossing_symmetry_complex_states_do_differ():
    # the identity needs crossing: break it, and the direct value moves away from the sum
    from eftsieve.bounds.cones import ConeProblem

    rng = np.random.default_rng(9)
    t = rng.normal(size=(1, 2, 2, 2, 2))
    t = 0.5 * (t + t.transpose(0, 3, 4, 1, 2))          # time reversal only
    problem = ConeProblem(("c",), ("1", "2"), t)
    assert problem.symmetry_defects()["crossing"] > 1e-3
    u = np.array([[1.0, 1j]]) / np.sqrt(2)
    v = np.array([[1.0, 1j]]) / np.sqrt(2)
    direct = complex_elastic(problem.tensor(np.ones(1)), u, v).real
    assert abs(direct[0] - real_sum(problem, np.ones(1), u, v)[0]) > 1e-3
