"""Continuous symmetries of the forward tensors and the reduced extremal programs.

Checks against outside facts and against the unreduced program:

* the Lie algebra found numerically for the 18 aqgc-dim8 coefficients on the 12 modes is
  that of SU(2)_L x U(1)_Y (the operators are gauge invariant: Eboli, Gonzalez-Garcia &
  Mizukoshi, hep-ph/0606118) times the rotations about the beam axis (the forward limit
  with both momenta on the z axis), dimension 3 + 1 + 1 = 5; the beam rotation and the
  hypercharge phase of Phi = (phi1 + i phi2, phi3 + i phi4)/sqrt 2 are written out by hand
  and must lie in it (common practice);
* the reduced membership program gives the optimal value of the unreduced one
  (an exact reduction: Gatermann & Parrilo, arXiv:math/0211450, Sec. 5), for every cone
  theory and for subsets of the aqgc-dim8 coefficients;
* the group average keeps every M_a (they are invariant), is a projection, commutes with
  crossing, and turns the reduced program's dual into a verified facet.
"""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.bounds.cones import cross, facet_from_dual, verify_certificate
from eftsieve.bounds.sdp import ExtremalSDP
from eftsieve.bounds.sectors import pair_sectors
from eftsieve.bounds.symmetry import Commutant, lie_generators
from eftsieve.theories import get_theory
from eftsieve.theories.aqgc_dim8.theory import aqgc_problem


@pytest.fixture(scope="module")
def aqgc():
    return aqgc_problem()


def _rotation(n: int, labels: tuple[str, ...], pairs: list[tuple[str, str]],
              signs: list[float] | None = None) -> np.ndarray:
    gen = np.zeros((n, n))
    for (a, b), s in zip(pairs, signs or [1.0] * len(pairs), strict=True):
        i, j = labels.index(a), labels.index(b)
        gen[i, j] += s
        gen[j, i] -= s
    return gen


def _in_span(gen: np.ndarray, basis: list[np.ndarray]) -> float:
    """Relative residual of gen after least squares on the basis."""
    a = np.array([b.ravel() for b in basis]).T
    coef, *_ = np.linalg.lstsq(a, gen.ravel(), rcond=None)
    return float(np.linalg.norm(a @ coef - gen.ravel()) / np.linalg.norm(gen))


def test_aqgc_symmetries_are_gauge_and_beam_rotations(aqgc):
    gens = lie_generators(aqgc.tensors)
    assert len(gens) == 5                       # su(2) + u(1)_Y + so(2) about the beam
    labels = aqgc.modes
    beam = _rotation(aqgc.n, labels, [(f"{v} x", f"{v} y") for v in ("W1", "W2", "W3", "B")])
    hyper = _rotation(aqgc.n, labels, [("phi1", "phi2"), ("phi3", "phi4")])
    assert _in_span(beam, gens) < 1e-10
    assert _in_span(hyper, gens) < 1e-10
    # T3: W1-W2 rotated (both polarisations) with the doublet's components in opposite
    # senses; the relative sign depends on the generator convention, so one of the two
    w12 = _rotation(aqgc.n, labels, [("W1 x", "W2 x"), ("W1 y", "W2 y")])
    t3h = 0.5 * _rotation(aqgc.n, labels, [("phi1", "phi2"), ("phi3", "phi4")], [1.0, -1.0])
    assert min(_in_span(w12 + t3h, gens), _in_span(w12 - t3h, gens)) < 1e-10
    # a rotation that is no symmetry (W1 with B) is not in the algebra
    assert _in_span(_rotation(aqgc.n, labels, [("W1 x", "B x")]), gens) > 0.1
    # each generator leaves every M_a unchanged
    t = aqgc.tensors
    for g in gens:
        d = (np.einsum("xi,aijkl->axjkl", g, t) + np.einsum("xj,aijkl->aixkl", g, t)
             + np.einsum("xk,aijkl->aijxl", g, t) + np.einsum("xl,aijkl->aijkx", g, t))
        assert np.abs(d).max() < 1e-9 * np.abs(t).max()


def test_commutant_average(aqgc):
    secs = pair_sectors(aqgc.tensors)
    com = Commutant(aqgc.tensors, secs)
    assert 0 < com.dim < sum(len(s) ** 2 for s in secs)
    mats = aqgc.matrices().reshape(aqgc.k, aqgc.n ** 2, aqgc.n ** 2)
    for m in mats:
        assert np.abs(com.project(m) - m).max() < 1e-12 * np.abs(m).max()
    rng = np.random.default_rng(3)
    z = rng.normal(size=mats[0].shape)
    z = z + z.T
    once = com.project(z)
    assert np.abs(com.project(once) - once).max() < 1e-10 * np.abs(once).max()
    assert np.abs(cross(once) - com.project(cross(z))).max() < 1e-10 * np.abs(once).max()


CASES = [("photon-quartic", None), ("higgs-quartic", None), ("ew-chiral", None),
         ("transverse-w", None), ("aqgc-dim8", ("fS0", "fS1", "fS2", "fT0", "fT1", "fT2")),
         ("aqgc-dim8", ("fM0", "fM1", "fM2", "fM3", "fM4", "fM5", "fM7")),
         ("aqgc-dim8", "all")]


def _problem(theory, coords, aqgc):
    if theory != "aqgc-dim8":
        return get_theory(theory).problem()
    return aqgc if coords == "all" else aqgc_problem(coords)


@pytest.mark.parametrize(("theory", "coords"), CASES)
def test_reduced_program_gives_the_unreduced_optimum(theory, coords, aqgc):
    problem = _problem(theory, coords, aqgc)
    fast, plain = ExtremalSDP(problem), ExtremalSDP(problem, reduce=False)
    assert plain.symmetry_blocks is None
    rng = np.random.default_rng(11)
    for _ in range(6):
        c = rng.normal(size=problem.k)
        a, b = fast.membership(c), plain.membership(c)
        assert b.status in ("optimal", "optimal_inaccurate"), b.status
        assert a.status in ("optimal", "optimal_inaccurate"), a.status
        assert a.value == pytest.approx(b.value, abs=2e-6)
    if fast.symmetry_blocks is not None:
        largest = max(basis.shape[1] for _, basis in fast.symmetry_blocks)
        assert largest < max(len(s) for s in plain.sectors)


def test_reduced_dual_gives_a_verified_separating_facet(aqgc):
    fast = ExtremalSDP(aqgc)
    rng = np.random.default_rng(5)
    seen = 0
    for _ in range(8):
        c = rng.normal(size=aqgc.k)
        unit = c / np.linalg.norm(c)
        res = fast.membership(c)
        if res.value >= 0:
            continue
        seen += 1
        cert = res.cert if res.cert is not None else facet_from_dual(aqgc, res.z)
        assert cert is not None and cert.normal @ unit < -1e-7
        assert verify_certificate(aqgc, cert.to_dict(), cert.normal)
    assert seen >= 4                             # random directions are mostly outside
    assert fast.reduced_fallbacks == 0


def test_a_failing_direct_solve_falls_back_to_the_sector_program():
    # an exception inside the direct Clarabel call is not decisive: the same point is
    # solved on the sign sectors, with the optimum of the unreduced program
    from types import SimpleNamespace

    problem = get_theory("transverse-w").problem()
    fast, plain = ExtremalSDP(problem), ExtremalSDP(problem, reduce=False)
    assert fast.symmetry_blocks is not None
    c = np.array([1.0, 0.5, 2.0])
    fast.membership(c)                           # builds the direct program
    used = fast.reduced_used

    def broken(*args, **kwargs):
        raise ValueError("injected")

    direct = fast._fast._direct
    direct.clarabel = SimpleNamespace(DefaultSolver=broken)
    got = fast.membership(c)
    assert fast.reduced_fallbacks == 1 and fast.reduced_used == used
    assert got.value == pytest.approx(plain.membership(c).value, abs=2e-6)


@pytest.mark.parametrize("theory", ["transverse-w", "higgs-quartic"])
def test_commutant_is_the_dense_null_space_of_the_commutators(theory):
    """The commutant's sparse construction against a dense one: the matrices X on the
    sectors' diagonal blocks with [X, g x 1 + 1 x g] = 0 for every generator g, found as
    the null space of the commutator map written out with np.kron (common practice)."""
    prob = get_theory(theory).problem()
    secs = pair_sectors(prob.tensors)
    gens = lie_generators(prob.tensors)
    assert gens                            # both theories have continuous symmetries
    com = Commutant(prob.tensors, secs, gens)
    n2 = prob.n ** 2
    ps = np.concatenate([np.repeat(s, len(s)) for s in secs])
    qs = np.concatenate([np.tile(s, len(s)) for s in secs])
    cols = []
    for p_, q_ in zip(ps, qs, strict=True):
        x = np.zeros((n2, n2))
        x[p_, q_] = 1.0
        cols.append(np.concatenate([(x @ big - big @ x).ravel() for big in
                                    (np.kron(g, np.eye(prob.n)) + np.kron(np.eye(prob.n), g)
                                     for g in gens)]))
    sing = np.linalg.svd(np.array(cols).T, compute_uv=False)
    dense_dim = int(np.count_nonzero(sing <= 1e-10 * sing.max())) + len(ps) - len(sing)
    assert com.dim == dense_dim
    for j in range(com.dim):
        x = np.zeros((n2, n2))
        x[ps, qs] = com.basis[:, j]
        for g in gens:
            big = np.kron(g, np.eye(prob.n)) + np.kron(np.eye(prob.n), g)
            assert np.abs(x @ big - big @ x).max() < 1e-10
