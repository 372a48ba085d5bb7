"""Tests of the positivity-cone engine: contact amplitudes, SDPs, certificates, verdicts.

Outside references: hand-written tensor forms of the amplitudes at random kinematics,
the Gasser-Leutwyler chiral-limit pi pi amplitude, the Lovasz theta of the 5-cycle
(a textbook SDP with a known optimum), and Choi's positive bi-quadratic form that is not
a sum of squares.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from eftsieve.bounds.cone_build import ConeSettings, build_cone
from eftsieve.bounds.cone_region import classify_cone, cone_region, shell_membership
from eftsieve.bounds.cones import (
    INSIDE,
    MARGINAL,
    OUTSIDE,
    ConeProblem,
    FacetCertificate,
    check_facet_on_cone,
    cross,
    dense_factors,
    facet_from_dual,
    verify_certificate,
    verify_rho,
)
from eftsieve.bounds.contact import (
    METRIC,
    contact_amplitude,
    exchange_forward_tensor,
    forward_tensor,
    legs,
    random_kinematics,
)
from eftsieve.bounds.elastic import prove_elastic, search_states
from eftsieve.bounds.sdp import ExtremalSDP, orbit_representatives
from eftsieve.region.model import Region
from eftsieve.theories.ew_chiral import operators as chiral
from eftsieve.theories.higgs_quartic import operators as higgs
from eftsieve.theories.photon_quartic import operators as photon
from eftsieve.theories.transverse_w import operators as tw
from tests.check_values import CHOI_FORM_TERMS, LOVASZ_THETA_C5

G = np.diag(METRIC)


def _problem(mod, ops=None) -> ConeProblem:
    ops = ops or mod.OPERATORS
    return ConeProblem(tuple(ops), mod.MODES.labels,
                       np.stack([forward_tensor(f, mod.MODES) for f in ops.values()]))


@pytest.fixture(scope="module")
def photon_problem():
    return _problem(photon)


@pytest.fixture(scope="module")
def photon_region(photon_problem):
    return cone_region("photon-quartic", build_cone(photon_problem), {"name": "none"})


# ---- contact amplitudes against tensor forms written by hand ------------------------------
def _vector_legs(rng, n_fields):
    moms, pols = random_kinematics(rng)
    iso = rng.normal(size=(4, n_fields)) if n_fields > 1 else np.ones((4, 1))
    mix = rng.normal(size=(4, 2))
    eps = np.einsum("ap,apm->am", mix, pols)
    jets = [legs("vector", iso[a], moms[a], eps[a]) for a in range(4)]
    fs = [np.outer(moms[a], eps[a]) - np.outer(eps[a], moms[a]) for a in range(4)]
    return jets, fs, iso, moms


def _ff(f1, f2):
    return np.trace(f1 @ G @ f2.T @ G)  # F1_{mu nu} F2^{mu nu}


def test_photon_ff2_against_pairings(rng):
    # (F.F)^2: A = 8 [(F1.F2)(F3.F4) + (F1.F3)(F2.F4) + (F1.F4)(F2.F3)], F_a = p_a ^ eps_a
    # (the four factors -i of the legs multiply to 1)
    for _ in range(5):
        jets, fs, _, _ = _vector_legs(rng, 1)
        want = 8 * sum(_ff(fs[a], fs[b]) * _ff(fs[c], fs[d])
                       for (a, b), (c, d) in (((0, 1), (2, 3)), ((0, 2), (1, 3)), ((0, 3), (1, 2))))
        got = contact_amplitude(photon.density_ff2, jets)
        assert got == pytest.approx(want, rel=1e-10)


def test_photon_f4_against_permutation_sum(rng):
    # F_{mu nu}F^{nu rho}F_{rho lambda}F^{lambda mu} = tr(F1 g F2 g F3 g F4 g) with mixed
    # indices; the amplitude is the sum over the 4! orderings of the legs
    for _ in range(5):
        jets, fs, _, _ = _vector_legs(rng, 1)
        want = sum(np.trace(fs[a] @ G @ fs[b] @ G @ fs[c] @ G @ fs[d] @ G)
                   for a, b, c, d in itertools.permutations(range(4)))
        assert contact_amplitude(photon.density_f4, jets) == pytest.approx(want, rel=1e-10)


def test_w_t0_against_isospin_pairings(rng):
    # Tr[W W] = (i/2)^2 Tr(s^a s^b) W^a.W^b = -(1/2) W^a.W^b, so O_T0 = (1/4)(W^a.W^a)^2 and
    # A = 2 sum_pairings (e_a.e_b)(F_a.F_b)(e_c.e_d)(F_c.F_d)
    for _ in range(5):
        jets, fs, iso, _ = _vector_legs(rng, 3)
        want = 2 * sum(iso[a] @ iso[b] * _ff(fs[a], fs[b]) * (iso[c] @ iso[d]) * _ff(fs[c], fs[d])
                       for (a, b), (c, d) in (((0, 1), (2, 3)), ((0, 2), (1, 3)), ((0, 3), (1, 2))))
        assert contact_amplitude(tw.density_t0, jets) == pytest.approx(want, rel=1e-10)


def test_chiral_pion_amplitude_matches_gasser_leutwyler(rng):
    # Gasser & Leutwyler, Ann. Phys. 158 (1984) 142 (from memory): at O(p^4), chiral limit,
    # F = 1, the polynomial part is A(s,t,u) = 2 l1 s^2 + l2 (t^2 + u^2), and
    # T_abcd = d_ab d_cd A(s,t,u) + d_ac d_bd A(t,s,u) + d_ad d_bc A(u,t,s) (all incoming)
    l1, l2 = 0.7, -0.3
    for _ in range(5):
        moms, _ = random_kinematics(rng)
        iso = rng.normal(size=(4, 3))
        jets = [legs("scalar", iso[a], moms[a], np.zeros(4)) for a in range(4)]
        got = (l1 * contact_amplitude(chiral.density_l1, jets)
               + l2 * contact_amplitude(chiral.density_l2, jets))
        s = (moms[0] + moms[1]) @ G @ (moms[0] + moms[1])
        t = (moms[0] + moms[2]) @ G @ (moms[0] + moms[2])
        u = -s - t

        def amp(x, y, z):
            return 2 * l1 * x**2 + l2 * (y**2 + z**2)
        want = ((iso[0] @ iso[1]) * (iso[2] @ iso[3]) * amp(s, t, u)
                + (iso[0] @ iso[2]) * (iso[1] @ iso[3]) * amp(t, s, u)
                + (iso[0] @ iso[3]) * (iso[1] @ iso[2]) * amp(u, t, s))
        assert got == pytest.approx(want, rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("mod", [photon, higgs, chiral, tw])
def test_forward_tensors_have_bose_crossing_and_time_reversal_symmetry(mod):
    p = _problem(mod)
    assert max(p.symmetry_defects().values()) < 1e-12
    assert p.rank() == p.k


def test_photon_basis_identity():
    # F^4 = (1/2)(F.F)^2 + (1/4)(F.Ftilde)^2 (common practice), on the forward tensors
    m = {k: forward_tensor(f, photon.MODES) for k, f in
         {**photon.OPERATORS, **photon.ALT_OPERATORS}.items()}
    np.testing.assert_allclose(m["zeta2"], 0.5 * m["a_FF2"] + 0.25 * m["b_FFdual2"], atol=1e-12)
    # by hand (docs/physics_cones.md): (F.F)^2 gives M^{xxxx} = 16, M^{xxyy} = M^{xyyx} = 8,
    # M^{xyxy} = 0
    a = m["a_FF2"]
    assert (a[0, 0, 0, 0], a[0, 0, 1, 1], a[0, 1, 1, 0], a[0, 1, 0, 1]) == pytest.approx(
        (16, 8, 8, 0), abs=1e-12)


def test_crossing_index_placement_by_hand():
    # A heavy scalar coupled to J = F.F: integrating it out gives
    # M^{ijkl} = (4/m^2)(m^{ij} m^{kl} + m^{il} m^{kj}) with m^{ij} = F_i(p1).F_j(p2) at s = 1
    # (the t-channel vanishes at t = 0): docs/physics_cones.md, "hand check".
    mass = 3.0
    got = exchange_forward_tensor(lambda a, f: (lambda g: np.einsum(
        "...mn,...mn->...", g * METRIC[:, None] * METRIC[None, :], g))(f[..., 0, :, :]),
        photon.MODES, mass, 0)
    p1 = np.array([0.5, 0, 0, 0.5])
    p2 = np.array([0.5, 0, 0, -0.5])
    pols = [np.array([0, 1.0, 0, 0]), np.array([0, 0, 1.0, 0])]
    m = np.array([[_ff(np.outer(p1, ei) - np.outer(ei, p1), np.outer(p2, ej) - np.outer(ej, p2))
                   for ej in pols] for ei in pols])
    want = 4 / mass**2 * (np.einsum("ij,kl->ijkl", m, m) + np.einsum("il,kj->ijkl", m, m))
    np.testing.assert_allclose(got, want, atol=1e-10)


def test_contact_rejects_non_contact_density():
    with pytest.raises(ValueError, match="pure s\\^2"):
        forward_tensor(lambda a, f: photon.density_ff2(a, f) + photon.density_ff2(a, f) ** 2,
                       photon.MODES)


# ---- SDP reference problems ---------------------------------------------------------------
def test_lovasz_theta_of_the_five_cycle():
    # Lovasz, IEEE Trans. Inf. Theory 25 (1979) 1: theta(C5) = sqrt(5).  Primal: max <J, X>,
    # tr X = 1, X_ij = 0 on edges, X PSD.  Dual: min t, t I - J + sum_e y_e E_e PSD.
    import cvxpy as cp

    edges = [(i, (i + 1) % 5) for i in range(5)]
    x = cp.Variable((5, 5), symmetric=True)
    cons = [x >> 0, cp.trace(x) == 1] + [x[i, j] == 0 for i, j in edges]
    prob = cp.Problem(cp.Maximize(cp.sum(x)), cons)
    prob.solve(solver="CLARABEL")
    assert prob.status == "optimal"
    assert prob.value == pytest.approx(LOVASZ_THETA_C5, abs=1e-7)
    assert np.linalg.eigvalsh(x.value)[0] > -1e-8                  # primal feasible
    t = cons[1].dual_value
    z = cons[0].dual_value
    assert np.linalg.eigvalsh(z)[0] > -1e-8                        # dual feasible
    assert t == pytest.approx(LOVASZ_THETA_C5, abs=1e-7)           # strong duality


def test_sdp_infeasible_and_unbounded_are_reported():
    import cvxpy as cp

    x = cp.Variable((2, 2), symmetric=True)
    infeasible = cp.Problem(cp.Minimize(cp.trace(x)), [x >> 0, x[0, 0] == -1])
    infeasible.solve(solver="CLARABEL")
    assert infeasible.status == "infeasible"
    unbounded = cp.Problem(cp.Minimize(-x[1, 1]), [x >> 0, x[0, 0] == 1])
    unbounded.solve(solver="CLARABEL")
    assert unbounded.status == "unbounded"


def test_orbit_representatives_against_brute_force():
    # orbits of the entries ((i,j),(k,l)) under transpose and crossing j <-> l, by a
    # closure over index tuples written independently of the label propagation
    for n in (1, 2, 3):
        seen, orbits = set(), 0
        for start in itertools.product(range(n), repeat=4):
            if start in seen:
                continue
            orbits += 1
            todo = [start]
            while todo:
                i, j, k, l_ = todo.pop()
                if (i, j, k, l_) in seen:
                    continue
                seen.add((i, j, k, l_))
                todo += [(k, l_, i, j), (i, l_, k, j)]
        assert len(orbit_representatives(n)) == orbits


def test_shooting_finds_the_photon_boundary_and_a_tight_facet(photon_problem):
    # the photon cone is a = zeta1 + zeta2/2 >= 0, b = zeta2/4 >= 0 (test_photon_quartic);
    # from c0 = (-1, 4)/32 along d = (1, -1), zeta2 hits 0 at lambda = 1/8
    sdp = ExtremalSDP(photon_problem)
    c0 = np.array([-1.0, 4.0]) / 32
    res = sdp.shoot(c0, np.array([1.0, -1.0]))
    assert res.status == "optimal"
    assert res.value == pytest.approx(0.125, abs=1e-7)
    cert = facet_from_dual(photon_problem, res.z)
    np.testing.assert_allclose(cert.normal, [0.0, 1.0], atol=1e-6)
    assert check_facet_on_cone(photon_problem, cert, np.random.default_rng(1)) >= 0


# ---- certificates -------------------------------------------------------------------------
def test_certificates_verify_and_wrong_ones_fail(photon_region, photon_problem, rng):
    for f in photon_region.facets:
        assert verify_certificate(photon_problem, f.extra["certificate"], np.array(f.normal))
        stored = f.extra["certificate"]
        assert "Z_sparse" in stored                    # the compact form is what is written
        cert = FacetCertificate(np.array(f.normal), "dual-psd", 0.0, stored["repair"],
                                {"Z_sparse": stored["Z_sparse"], "scale": stored["scale"]})
        assert check_facet_on_cone(photon_problem, cert, rng) >= 0
        # the same certificate written dense verifies too; a tampered one does not
        dense = dense_factors(stored)
        assert verify_certificate(photon_problem, {"kind": "dual-psd", "Z_factors": dense},
                                  np.array(f.normal))
        bad = {"kind": "dual-psd", "Z_factors": [[-1.0] + r[1:] for r in dense]}
        assert not verify_certificate(photon_problem, bad, np.array(f.normal))
        sp = stored["Z_sparse"]
        bad_sparse = {"kind": "dual-psd", "Z_sparse": {"size": sp["size"], "factors": [
            [lam, idx, [2 * v for v in val[:1]] + val[1:]] for lam, idx, val in sp["factors"]]}}
        assert not verify_certificate(photon_problem, bad_sparse, np.array(f.normal))
    # a non-PSD matrix is no certificate
    assert facet_from_dual(photon_problem, -np.eye(4)) is None


def test_verify_rho_proves_only_true_members(photon_problem):
    rho = np.eye(4)
    m = rho + cross(rho)
    c, *_ = np.linalg.lstsq(photon_problem.matrices().reshape(2, -1).T, m.ravel(), rcond=None)
    ok, lam, rp = verify_rho(photon_problem, c, rho)
    assert ok and lam > 0
    np.testing.assert_allclose(rp + cross(rp), photon_problem.tensor(c).reshape(4, 4),
                               atol=1e-12)
    ok_bad, _, _ = verify_rho(photon_problem, np.array([-1.0, 1.0]), rho)  # 2a = -1 < 0
    assert not ok_bad


# ---- verdicts -----------------------------------------------------------------------------
def test_shell_membership_verdicts(photon_problem):
    pts = np.array([[-1.0, 4.0], [1.0, -0.1], [-1.0, 1.9], [0.0, 0.0], [1.0, 0.0],
                    [np.nan, 1.0]])
    codes, why = shell_membership(photon_problem, pts, family="extremal")
    assert codes.tolist() == [INSIDE, OUTSIDE, OUTSIDE, MARGINAL, MARGINAL, MARGINAL]
    assert "verified rho" in why[0] and "verified dual" in why[1]
    assert "apex" in why[3] and "non-finite" in why[5]
    codes_e, _ = shell_membership(photon_problem, pts[:3], family="elastic")
    assert codes_e.tolist() == [INSIDE, OUTSIDE, OUTSIDE]


def test_classify_cone_agrees_with_the_closed_form(photon_region, rng):
    x = rng.normal(size=(20_000, 2))
    codes, shell, _ = classify_cone(photon_region, x)
    a, b = x[:, 0] + x[:, 1] / 2, x[:, 1] / 4
    truth = np.where((a > 0) & (b > 0), INSIDE, OUTSIDE)
    assert (codes == truth).all()
    assert shell.mean() < 1e-3


def test_region_round_trip_keeps_the_cone(photon_region, tmp_path):
    path = photon_region.save(tmp_path / "photon.json")
    again = Region.load(path)
    assert again.hash == photon_region.hash
    assert all(f.offset == 0.0 for f in again.facets + again.inner_facets)
    codes, _ = shell_membership(again, np.array([[-1.0, 4.0], [1.0, -0.1]]))
    assert codes.tolist() == [INSIDE, OUTSIDE]


# ---- elastic versus extremal on Choi's form -------------------------------------------------
def _choi_problem(eps: float) -> ConeProblem:
    m = np.zeros((3, 3, 3, 3))
    for (i, j, k, l_), coef in CHOI_FORM_TERMS:
        m[i, j, k, l_] += coef
    for i in range(3):
        for j in range(3):
            m[i, j, i, j] += eps
    m = 0.25 * (m + m.transpose(2, 1, 0, 3) + m.transpose(0, 3, 2, 1) + m.transpose(2, 3, 0, 1))
    return ConeProblem(("c",), ("1", "2", "3"), m[None])


def test_choi_form_is_elastic_positive_but_not_extremal():
    # Choi, Linear Algebra Appl. 12 (1975) 95 (from memory): a positive bi-quadratic form
    # that is not a sum of squares; with + eps |x|^2 |y|^2 (eps small) it stays outside the
    # SOS (= extremal) cone while elastic positivity is strict and provable.
    p = _choi_problem(0.01)
    proof = prove_elastic(p.tensors[0], max_cells=400_000)
    assert proof.outcome == "proven"
    _, _, e = search_states(p.tensors[0], np.random.default_rng(0))
    assert e > 0
    codes, why = shell_membership(p, np.array([[1.0]]), family="extremal")
    assert codes[0] == OUTSIDE, why
    neg = _choi_problem(-0.05)   # now a product state violates it
    assert prove_elastic(neg.tensors[0]).outcome == "violated"


def _choi_padded(eps: float, n: int) -> ConeProblem:
    """Choi's form on the first three of n modes, plus eps |u|^2 |v|^2 on all n."""
    m = np.zeros((n, n, n, n))
    m[:3, :3, :3, :3] = _choi_problem(0.0).tensors[0]
    for i in range(n):
        for j in range(n):
            m[i, j, i, j] += eps
    return ConeProblem(("c",), tuple(str(i) for i in range(n)), m[None])


def test_general_branch_and_bound_stops_at_many_modes():
    # Choi's elastic-positive, non-extremal form padded with decoupled modes: on 5 modes
    # the branch and bound still proves it; on 6 it is not run, the answer is undecided
    # with the reason, and the point stays marginal, never inside
    from eftsieve.bounds.elastic import MAX_GENERAL_MODES

    assert MAX_GENERAL_MODES == 5
    assert prove_elastic(_choi_padded(1.0, 5).tensors[0]).outcome == "proven"
    assert prove_elastic(_choi_padded(0.01, 3).tensors[0]).outcome == "proven"
    proof = prove_elastic(_choi_padded(0.01, 6).tensors[0])
    assert (proof.outcome, proof.cells) == ("undecided", 0)
    assert "6 modes" in proof.note and proof.to_dict()["note"] == proof.note
    codes, why = shell_membership(_choi_padded(0.01, 6), np.array([[1.0]]), family="elastic")
    assert codes[0] == MARGINAL and "branch and bound not run on 6 modes" in why[0], why
    # a violated form is still found outside by the product-state search
    codes, _ = shell_membership(_choi_padded(-0.05, 6), np.array([[1.0]]), family="elastic")
    assert codes[0] == OUTSIDE


def test_cone_build_rejects_bad_settings(photon_problem):
    with pytest.raises(ValueError, match="family"):
        build_cone(photon_problem, ConeSettings(family="bogus"))
    assert ConeSettings().to_dict()["family"] == "extremal"


def test_same_build_gives_the_same_region_hash(photon_problem, photon_region):
    # regression: the build's wall time was stored in the region and changed its hash
    again = cone_region("photon-quartic", build_cone(photon_problem), {"name": "none"})
    assert again.hash == photon_region.hash


def test_elastic_build_on_many_modes_says_how_inner_points_are_proven():
    # fT0..fT2, fT8, fT9 couple the W and B modes (8 of them, no state reduction): the
    # elastic build finishes, its outer facets are product states, its inner points are
    # extremal certificates (the extremal cone lies inside the elastic one), and the
    # region says so; a 4-mode build (higgs-quartic) needs no such note
    from eftsieve.theories.aqgc_dim8.theory import aqgc_problem

    problem = aqgc_problem(("fT0", "fT1", "fT2", "fT8", "fT9"))
    assert problem.n == 8
    build = build_cone(problem, ConeSettings(family="elastic", max_rounds=1))
    assert build.outer and all(c.kind == "product-state" for c in build.outer)
    region = cone_region("aqgc-dim8", build, {"name": "hat-i"})
    assert any("extremal certificates only" in n and "8 modes" in n for n in region.notes)
    small = build_cone(_problem(higgs), ConeSettings(family="elastic", max_rounds=1))
    assert "elastic_inner" not in small.stats


def test_derived_values_are_computed_once_and_not_pickled():
    import pickle

    prob = ConeProblem(("a",), ("x",), np.ones((1, 1, 1, 1, 1)))
    calls = []
    assert prob.derived("v", lambda: calls.append(1) or 5) == 5
    assert prob.derived("v", lambda: calls.append(1) or 6) == 5
    assert calls == [1]
    back = pickle.loads(pickle.dumps(prob))
    assert back.derived("v", lambda: 7) == 7          # recomputed after unpickling
    assert np.array_equal(back.tensors, prob.tensors)
