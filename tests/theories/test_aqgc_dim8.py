"""aqgc-dim8: the 18 quartic gauge couplings on 12 mixed modes (W^a, B, Higgs components).

* every contact amplitude against an independent evaluation: the operators written with
  explicit Pauli matrices and true complex conjugation (real kinematics), the multilinear
  part read off by a sign average instead of the polarisation identity;
* Bose symmetry, crossing, time reversal of the forward tensors;
* the purely S and purely T subsets against higgs-quartic and transverse-w;
* the weak angle drops out of the cone (exact mode rescaling);
* single-coefficient signs with certificates, compared with the published statements;
* conventions: round trips, the M-type sign flips, tied S0/S2, refusals;
* rule-in: tree exchanges of heavy scalars land on the cone.
"""

from __future__ import annotations

import itertools
from types import SimpleNamespace

import numpy as np
import pytest

from eftsieve.bounds.cones import (
    certificate_matrix,
    check_facet_on_cone,
    dense_factors,
    facet_from_dual,
)
from eftsieve.bounds.contact import (
    contact_amplitude,
    exchange_forward_tensor,
    legs,
    random_kinematics,
)
from eftsieve.bounds.elastic import search_states
from eftsieve.bounds.sdp import ExtremalSDP
from eftsieve.bounds.sectors import dead_pairs
from eftsieve.errors import InputError
from eftsieve.theories import get_theory
from eftsieve.theories.aqgc_dim8 import conventions as conv
from eftsieve.theories.aqgc_dim8 import operators as ops
from eftsieve.theories.aqgc_dim8.theory import (
    SINGLE_COEFFICIENT_SIGNS,
    aqgc_problem,
    parse_coordinates,
)
from tests.theories.cone_helpers import coefficients_of

THEORY = get_theory("aqgc-dim8")
G = np.diag([1.0, -1.0, -1.0, -1.0])
SIN2 = 0.23
PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])


# ---- an independent evaluation of the operators ------------------------------------------
def reference_densities(gp: float) -> dict[str, object]:
    """The operators of hep-ph/0606118 and arXiv:1604.03555 (from memory) written with
    explicit 2x2 matrices W = (i/2) sigma^a W^a (g = 1), B = (i g'/2) B, numeric complex
    conjugation of the doublet (valid for real field values) and h.c. as np.conj."""
    def low(x):                       # lower both Lorentz indices of (..., 4, 4)
        return G @ x @ G

    def parts(fw, fb, dphi):
        w = 0.5j * np.einsum("aij,amn->ijmn", PAULI, fw)
        b = 0.5j * gp * fb[0]
        dp = np.array([dphi[0] + 1j * dphi[1], dphi[2] + 1j * dphi[3]]) / np.sqrt(2)
        return w, b, dp, np.conj(dp)

    def tr_ww(w, x, y):               # Tr[W_x W^y] for index strings like "mn", "mn"
        return np.einsum(f"ij{x},ji{y}->", w, w)

    def wl(w):
        return np.einsum("ijmn,mk,nl->ijkl", w, G, G)

    def dens(name, fw, fb, dphi):
        w, b, dp, dc = parts(fw, fb, dphi)
        wlo, blo = wl(w), low(b)
        dcl = dc @ G                                  # (D_mu Phi)^+ (lower index)
        hh = np.einsum("im,im->", dcl, dp)             # (D_b Phi)^+ D^b Phi
        x = np.einsum("im,in->mn", dc, dp)            # (D^m Phi)^+ D^n Phi
        if name == "fS0":
            return np.sum(low(x) * x)
        if name == "fS1":
            return hh**2
        if name == "fS2":
            return np.sum(low(x) * x.T)
        trww = np.einsum("ijmn,jimn->", wlo, w)
        bb = np.sum(blo * b)
        if name == "fM0":
            return trww * hh
        if name == "fM1":   # Tr[W_{m n} W^{n b}] (D_b Phi)^+ D^m Phi
            return np.einsum("ijmn,jinb,kb,km->", wlo, w, dcl, dp)
        if name == "fM2":
            return bb * hh
        if name == "fM3":
            return np.einsum("mn,nb,kb,km->", blo, b, dcl, dp)
        if name == "fM4":
            return np.einsum("im,ijbn,jm,bn->", dcl, wlo, dp, b)
        if name == "fM5":
            term = np.einsum("im,ijbn,jn,bm->", dcl, wlo, dp, b)
            return term + np.conj(term)
        if name == "fM6":
            return np.einsum("im,ijbn,jkbn,km->", dcl, wlo, w, dp)
        if name == "fM7":
            return np.einsum("im,ijbn,jkbm,kn->", dcl, wlo, w, dp)
        if name == "fT0":
            return trww**2
        p4 = np.einsum("ijan,jimb->anmb", wlo, w)        # Tr[W_{a n} W^{m b}]
        q = np.einsum("ijam,jimb->ab", wlo, w)           # Tr[W_{a m} W^{m b}]
        bq = np.einsum("am,mb->ab", blo, b)              # B_{a m} B^{m b}
        if name == "fT1":
            return np.einsum("anmb,mban->", np.einsum("ijan,jimb->anmb", wlo, w),
                             np.einsum("ijmb,jian->mban", wlo, w))
        if name == "fT2":
            return np.trace(q @ q)
        if name == "fT5":
            return trww * bb
        if name == "fT6":
            return np.einsum("anmb,mb,an->", p4, blo, b)
        if name == "fT7":
            return np.trace(q @ bq)
        if name == "fT8":
            return bb**2
        if name == "fT9":
            return np.trace(bq @ bq)
        raise KeyError(name)
    return {name: (lambda fw, fb, dphi, name=name: dens(name, fw, fb, dphi))
            for name in ops.PARAMETERS}


def mixed_legs(rng):
    """Random real kinematics; each leg a random mix of W^a, B and Higgs components."""
    moms, pols = random_kinematics(rng)
    legs_real, jets = [], []
    for a in range(4):
        eps = pols[a].T @ rng.normal(size=2)
        w, b, h = rng.normal(size=3), rng.normal(size=1), rng.normal(size=4)
        wedge = np.outer(moms[a], eps) - np.outer(eps, moms[a])
        legs_real.append((w[:, None, None] * wedge, b[:, None, None] * wedge,
                          h[:, None] * moms[a]))
        jets.append((legs("vector", w, moms[a], eps), legs("vector", b, moms[a], eps),
                     legs("scalar", h, moms[a], np.zeros(4))))
    return legs_real, jets


def sign_average(density, legs_real):
    """Coefficient of t1 t2 t3 t4 in f(sum_a t_a X_a): (1/16) sum over t in {+-1}^4."""
    total = 0.0
    for t in itertools.product((1.0, -1.0), repeat=4):
        fields = [sum(ti * leg[k] for ti, leg in zip(t, legs_real, strict=True))
                  for k in range(3)]
        total += np.prod(t) * density(*fields)
    return total / 16


def test_contact_amplitudes_against_pauli_matrix_forms(rng):
    g, gp = ops.couplings(SIN2)
    engine, ref = ops.make_operators(SIN2), reference_densities(gp)
    for _ in range(3):
        legs_real, jets = mixed_legs(rng)
        for name in ops.COEFFICIENTS:
            # each field carries one derivative: the four factors -i of the legs give 1
            got = complex(contact_amplitude(engine[name], jets))
            want = complex(sign_average(ref[name], legs_real))
            assert abs(want.imag) < 1e-10 * max(1.0, abs(want))
            assert got == pytest.approx(want.real, rel=1e-9, abs=1e-12), name
        # O_M6 = O_M0 / 2 (operators.py), checked on the reference forms
        assert sign_average(ref["fM6"], legs_real) == pytest.approx(
            0.5 * sign_average(ref["fM0"], legs_real), rel=1e-10)


@pytest.fixture(scope="module")
def problem():
    return aqgc_problem(ops.COEFFICIENTS, SIN2)


def test_forward_tensors_are_bose_crossing_and_time_reversal_symmetric(problem):
    assert problem.rank() == 18
    assert max(problem.symmetry_defects().values()) < 1e-12


def _scaled_facets(region):
    a, _ = region.arrays()
    return sorted(map(tuple, np.round(a / np.abs(a).max(axis=1, keepdims=True), 6)))


@pytest.mark.parametrize(("coords", "other"), [(("fS0", "fS1", "fS2"), "higgs-quartic"),
                                               (("fT0", "fT1", "fT2"), "transverse-w")])
def test_pure_s_and_pure_t_subsets_agree_with_their_theories(coords, other):
    # the S (T) operators involve only the Higgs (W) modes: the subset problem is the other
    # theory's problem on the same modes, with the same forward tensors (g = 1), and the
    # extremal regions have the same facets
    sub = aqgc_problem(coords, SIN2)
    ref = get_theory(other).problem()
    assert sub.modes == ref.modes
    np.testing.assert_allclose(sub.tensors, ref.tensors, atol=1e-12)
    mine = THEORY.build_region({"families": ["extremal"], "coordinates": ",".join(coords)})
    theirs = get_theory(other).build_region({"families": ["extremal"]})
    assert _scaled_facets(mine) == _scaled_facets(theirs)
    assert mine.convention["fixed_to_zero"] == [c for c in ops.COEFFICIENTS if c not in coords]


def test_weak_angle_drops_out_of_the_cone():
    # g' enters only through B-hat: M(sin2 = 0.3) = D M(sin2 = 0.2) D D D with the B modes
    # scaled by tan(theta_W') / tan(theta_W) per B leg, a congruence that maps the cone onto
    # itself (operators.py)
    some = ("fM2", "fM4", "fM5", "fT6", "fT9")
    a, b = aqgc_problem(some, 0.2), aqgc_problem(some, 0.3)
    r = ops.couplings(0.3)[1] / ops.couplings(0.2)[1]
    d = np.array([r if lab.startswith("B") else 1.0 for lab in a.modes])
    want = np.einsum("aijkl,i,j,k,l->aijkl", a.tensors, d, d, d, d)
    np.testing.assert_allclose(b.tensors, want, atol=1e-13)
    assert not np.allclose(a.tensors, b.tensors)


# ---- single-coefficient signs -------------------------------------------------------------
#: the table of theory.py, re-derived here: the coefficients that may be non-zero alone,
#: with the sign they must have; every other sign is excluded by a certificate below
ALONE_ALLOWED = SINGLE_COEFFICIENT_SIGNS


def _excluded(problem, sign, rng):
    """A verified certificate that sign * M_a is outside the extremal cone, or None."""
    m = problem.tensor(np.array([sign]))
    u, v, e = search_states(m, rng)
    if e < -1e-6 * np.abs(m).max():
        return "product state"
    res = ExtremalSDP(problem).membership(np.array([sign]))
    if res.z is None or not res.value < -1e-4:
        return None
    cert = facet_from_dual(problem, res.z)
    if cert is None or not cert.normal[0] * sign < 0:
        return None
    # Z is PSD on the live pairs (rho of every member vanishes on the dead ones)
    live = ~dead_pairs(problem.tensors)
    z = certificate_matrix(dense_factors(cert.data), ~live)[np.ix_(live, live)]
    assert np.linalg.eigvalsh(z)[0] >= -1e-6 * np.abs(z).max()
    assert check_facet_on_cone(problem, cert, rng) >= -1e-12
    return "dual PSD matrix"


def test_single_coefficient_signs_elastic(rng):
    # the product-state half of the test below (fast): each excluded sign that a product
    # state excludes, with E(u, v) < 0 found by the search
    for name in ("fS0", "fM0", "fM2", "fT5", "fT7", "fT8"):
        problem = aqgc_problem((name,), SIN2)
        for s in (1, -1):
            m = problem.tensor(np.array([s]))
            e = search_states(m, rng)[2]
            if name in ALONE_ALLOWED and s == ALONE_ALLOWED[name]:
                assert e > -1e-9 * np.abs(m).max(), (name, s)
            else:
                assert e < -1e-3 * np.abs(m).max(), (name, s)


@pytest.mark.slow
def test_single_coefficient_signs(rng):
    # Zhang & Zhou, arXiv:1808.00010 (abstract and text): several coefficients cannot be
    # non-zero by themselves.  Which ones, and the allowed signs, are derived here and
    # compared in docs/physics_aqgc.md with the statements of arXiv:1808.00010 and
    # arXiv:1902.08977 as far as we could read them (from memory where marked there):
    # fT0, fT1, fT2, fT8, fT9 >= 0 alone and the S-type >= 0 alone (the higgs-quartic
    # cone of Remmen & Rodd, arXiv:1908.09845).
    verdicts = {}
    for name in ops.COEFFICIENTS:
        problem = aqgc_problem((name,), SIN2)
        verdicts[name] = {s: _excluded(problem, s, rng) for s in (1, -1)}
    for name, v in verdicts.items():
        if name in ALONE_ALLOWED:
            assert v[-ALONE_ALLOWED[name]] is not None, (name, v)
            assert v[ALONE_ALLOWED[name]] is None, (name, v)
        else:
            assert v[1] is not None and v[-1] is not None, (name, v)
    # fM7 > 0 survives every product state (elastic) but not the extremal cone
    assert verdicts["fM7"][1] == "dual PSD matrix"


@pytest.mark.slow
@pytest.mark.parametrize(("coords", "other"), [("fS0,fS1,fS2", "higgs-quartic"),
                                               ("fT0,fT1,fT2", "transverse-w")])
def test_elastic_subsets_agree_with_their_theories(coords, other):
    mine = THEORY.build_region({"families": ["elastic"], "coordinates": coords})
    theirs = get_theory(other).build_region({"families": ["elastic"]})
    assert _scaled_facets(mine) == _scaled_facets(theirs)


# ---- conventions ---------------------------------------------------------------------------
def test_conventions_round_trip_and_m_type_signs(rng):
    names = ops.COEFFICIENTS
    x = rng.normal(size=(5, len(names)))
    there = conv.convert(x, names, "hat-i", "hat-real")
    np.testing.assert_array_equal(conv.convert(there, names, "hat-real", "hat-i"), x)
    flipped = np.array([n.startswith("fM") for n in names])
    np.testing.assert_array_equal(there[:, flipped], -x[:, flipped])
    np.testing.assert_array_equal(there[:, ~flipped], x[:, ~flipped])


def test_tied_s0_s2_and_redundant_m6():
    amap = conv.to_canonical("hat-real-s02-tied", ("fS0", "fM6", "fT1"))
    col = dict(zip(amap.names_in, amap.jacobian.T, strict=True))
    i = ops.COEFFICIENTS.index
    assert col["fS0"][i("fS0")] == 1 and col["fS0"][i("fS2")] == 1
    assert col["fM6"][i("fM0")] == -0.5          # O_M6 = O_M0/2, and hat-real flips M
    assert col["fT1"][i("fT1")] == 1 and np.count_nonzero(amap.jacobian) == 4
    with pytest.raises(InputError, match="fS2"):
        conv.to_canonical("hat-i-s02-tied", ("fS0", "fS2"))
    with pytest.raises(InputError, match="not invertible"):
        conv.convert(np.zeros((1, 1)), ("fS0",), "hat-i", "hat-i-s02-tied")
    with pytest.raises(InputError, match="unknown convention"):
        conv.to_canonical("eboli", ("fS0",))


def test_a_card_must_declare_its_convention(tmp_path):
    from eftsieve.api import load_fit

    body = ("format_version: 1\nname: t\ntheory: aqgc-dim8\nparameters:\n"
            "  - {name: fT0%s}\n  - {name: fM1%s}\nmean: [0.1, -0.2]\n"
            "covariance: [[1, 0], [0, 1]]\n")
    path = tmp_path / "card.yaml"
    path.write_text(body % ("", ""))
    with pytest.raises(InputError, match="missing convention") as err:
        load_fit(path)
    assert "parameters[0].convention" in str(err.value)
    path.write_text(body % (", convention: hat-real", ", convention: hat-real"))
    fit = load_fit(path)
    # an M-type coefficient: the region is all 18 (flat M subsets; docs/physics_aqgc.md)
    assert THEORY.region_settings_for_fit(fit)["coordinates"] == "all"
    region = SimpleNamespace(coordinates=("fS0", "fM1", "fT0"), convention={"name": "hat-i"})
    cmap = THEORY.coordinate_map(fit, region)        # fS0 = 0 (not in the fit); fM1 flips
    np.testing.assert_allclose(cmap(np.array([[0.1, -0.2]])), [[0.0, 0.2, 0.1]])
    with pytest.raises(InputError, match="fixes it to zero"):
        THEORY.coordinate_map(fit, SimpleNamespace(coordinates=("fT0",),
                                                   convention={"name": "hat-i"}))


# ---- rule-in ------------------------------------------------------------------------------
def _currents(alpha, beta, gamma, delta, eps):
    """Heavy real scalars: a singlet coupled to alpha W^a.W^a + beta B.B + gamma
    (d Phi)^+ . d Phi, and an isotriplet coupled to delta W^a.B + eps (d Phi)^+ sigma^a d Phi."""
    def lo(f):
        return np.einsum("...mn,m,n->...mn", f, np.diag(G), np.diag(G))

    def singlet(w, b, h):
        dp, dpc = ops.doublet_gradients(h)
        return (alpha * np.einsum("...amn,...amn->...", lo(w[1]), w[1])
                + beta * np.einsum("...mn,...mn->...", lo(b[1][..., 0, :, :]), b[1][..., 0, :, :])
                + gamma * np.einsum("...am,m,...am->...", dpc, np.diag(G), dp))

    def triplet(a):
        def current(w, b, h):
            dp, dpc = ops.doublet_gradients(h)
            return (delta * np.einsum("...mn,...mn->...", lo(w[1][..., a, :, :]),
                                      b[1][..., 0, :, :])
                    + eps * np.einsum("...im,ij,m,...jm->...", dpc, PAULI[a], np.diag(G), dp))
        return current
    return [singlet], [triplet(a) for a in range(3)]


def test_rule_in_heavy_singlet_exchange(problem):
    # the fast half of the test below: a heavy singlet scalar coupled to W.W, B.B and the
    # Higgs current is in the span of the 18 operators, with no violating product state
    singlet, _ = _currents(0.8, 0.5, 1.0, 0.7, 0.6)
    total = exchange_forward_tensor(singlet[0], ops.MODES, 3.0, 0)
    c, resid = coefficients_of(problem, total)
    assert resid < 1e-9
    assert search_states(problem.tensor(c), np.random.default_rng(1))[2] > -1e-9 * np.abs(
        total).max()
    assert c[ops.COEFFICIENTS.index("fT0")] > 0 and c[ops.COEFFICIENTS.index("fT8")] > 0


@pytest.mark.slow
def test_rule_in_heavy_scalar_exchanges(problem):
    # tree exchanges (spin 0 in every channel) integrated out: their forward tensors lie in
    # the span of the 18 operators and land on the cone (rank-few: on its boundary, so the
    # exact solve may be marginal, never outside)
    from eftsieve.bounds.cone_region import shell_membership
    from eftsieve.bounds.cones import OUTSIDE

    singlet, triplet = _currents(0.8, 0.5, 1.0, 0.7, 0.6)
    pts = []
    for group in (singlet, triplet):
        total = sum(exchange_forward_tensor(j, ops.MODES, 3.0, 0) for j in group)
        c, resid = coefficients_of(problem, total)
        assert resid < 1e-9
        e = search_states(problem.tensor(c), np.random.default_rng(1))[2]
        assert e > -1e-9 * np.abs(total).max()
        pts.append(c)
    pts.append(pts[0] + pts[1])
    codes, why = shell_membership(problem, np.array(pts), family="extremal")
    assert OUTSIDE not in codes.tolist(), why
    # the singlet couples W.W, B.B and the Higgs current: fT0, fT5, fT8, fM0, fM2, fS1
    nonzero = {n for n, v in zip(ops.COEFFICIENTS, pts[0], strict=True) if abs(v) > 1e-9}
    assert nonzero == {"fT0", "fT5", "fT8", "fM0", "fM2", "fS1"}


def test_s_plus_t_region_is_the_product_of_the_two_cones():
    # without M-type operators the Higgs and the W modes do not talk: the W-H pairs are dead
    # (rho vanishes there, eftsieve.bounds.sectors.dead_pairs) and the cone is the product
    # of the higgs-quartic and transverse-w cones, so its facets are theirs, side by side
    # (the region is now built sector by sector, and must still equal the theories' cones)
    both = THEORY.build_region({"families": ["extremal"],
                                "coordinates": "fS0,fS1,fS2,fT0,fT1,fT2"})
    assert [s["coordinates"] for s in both.settings["sectors"]] == [
        ["fS0", "fS1", "fS2"], ["fT0", "fT1", "fT2"]] or [
        s["coordinates"] for s in both.settings["sectors"]] == [
        ["fT0", "fT1", "fT2"], ["fS0", "fS1", "fS2"]]
    assert both.coordinates == ("fS0", "fS1", "fS2", "fT0", "fT1", "fT2")
    s_part = get_theory("higgs-quartic").build_region({"families": ["extremal"]})
    t_part = get_theory("transverse-w").build_region({"families": ["extremal"]})
    a_s, _ = s_part.arrays()
    a_t, _ = t_part.arrays()
    want = np.vstack([np.hstack([a_s, np.zeros((len(a_s), 3))]),
                      np.hstack([np.zeros((len(a_t), 3)), a_t])])
    a, _ = both.arrays()
    norm = lambda x: sorted(map(tuple, np.round(x / np.abs(x).max(axis=1, keepdims=True), 6)))  # noqa: E731
    assert norm(a) == norm(want)


# ---- many coordinates: the LP geometry of the cone build ----------------------------------
def test_regions_cover_the_coefficients_of_a_card_or_fit():
    # the default region for S and T0..T2 rows, S + T widened for T5..T9, and all 18 as
    # soon as an M-type coefficient appears (M subsets are often flat cones)
    assert THEORY.region_settings_for_coefficients(["fT0", "fS1"]) == {}
    got = THEORY.region_settings_for_coefficients(["fT8", "fT0"])["coordinates"]
    assert got == ["fS0", "fS1", "fS2", "fT0", "fT1", "fT2", "fT8"]
    # a mixed W-B T-type: every T-type (S + fT0..fT2 + fT7 alone is a flat cone)
    got = THEORY.region_settings_for_coefficients(["fT7"])["coordinates"]
    assert sorted(got) == sorted(["fS0", "fS1", "fS2", *(c for c in ops.COEFFICIENTS
                                                         if c.startswith("fT"))])
    THEORY.build_region({"coordinates": got})          # builds: not flat (about 7 s)
    assert THEORY.region_settings_for_coefficients(["fM6"]) == {"coordinates": "all"}
    assert parse_coordinates("all") == ops.COEFFICIENTS == parse_coordinates(["all"])


@pytest.mark.slow
def test_all_18_region_reproduces_the_single_coefficient_signs():
    # the 18-coefficient region (LP geometry, built once) against the sign table derived
    # coefficient by coefficient with certificates (SINGLE_COEFFICIENT_SIGNS, checked by
    # test_single_coefficient_signs): the line cuts of the region (its facets, then exact
    # bisection) give the same rule for every coefficient, and the rule-in heavy singlet
    # exchange is not excluded by any facet
    from eftsieve.limits.intervals import sign_rules

    region = THEORY.build_region({"families": ["extremal"], "coordinates": "all"})
    assert region.settings["build"]["geometry"] == "lp"
    want = {c: {1: "nonnegative", -1: "nonpositive"}[s]
            for c, s in SINGLE_COEFFICIENT_SIGNS.items()}
    got = {r.coefficient: r.rule for r in sign_rules(region, exact=True)}
    assert got == {c: want.get(c, "zero") for c in ops.COEFFICIENTS}
    problem = aqgc_problem()
    singlet, _ = _currents(0.8, 0.5, 1.0, 0.7, 0.6)
    c, _ = coefficients_of(problem, exchange_forward_tensor(singlet[0], ops.MODES, 3.0, 0))
    a, _ = region.arrays()
    assert (a @ c >= -1e-9 * np.linalg.norm(c)).all()


# ---- projections: other coefficients free (eftsieve.bounds.projection) ---------------------
@pytest.fixture(scope="module")
def theory():
    return get_theory("aqgc-dim8")


@pytest.mark.parametrize(("coef", "normals"), [("fS0", [(1.0,)]), ("fT9", [(1.0,)])])
def test_projections_with_every_other_coefficient_free(theory, coef, normals):
    # fS0 >= 0 whatever the other 17 do: the hh -> hh forward amplitude involves the
    # S-type operators only (an M-type operator needs external gauge bosons), and with
    # fS1, fS2 free the Remmen & Rodd inequalities (arXiv:1908.09845, from memory) leave
    # fS0 >= 0 (tests/bounds/test_projection.py).  fT9 >= 0: the pure-B operators are the
    # light-by-light pair, O_T8 = (B.B)^2 and O_T9 = B^4 = (B.B)^2/2 + (B.B~)^2/4 (a
    # four-dimensional identity, from memory), and positivity of the two light-by-light
    # coefficients (arXiv:1808.00010 among others, common practice) gives fT9 >= 0 with
    # fT8 free.
    region = theory.build_region({"coordinates": [coef], "free": "all"})
    assert [tuple(np.round(f.normal, 12)) for f in region.facets] == normals
    assert all(f.extra["free_residual"] <= 1e-6 for f in region.facets)
    assert region.convention["free"] == [c for c in ops.COEFFICIENTS if c != coef]
    assert "free" in region.notes[0]


@pytest.mark.parametrize(("coef", "normals"), [("fT7", [(1.0,)]), ("fM3", [(-1.0,)])])
def test_elastic_projections_with_every_other_coefficient_free(theory, coef, normals):
    # the elastic cone contains the extremal one, so its projections are at least as
    # large; for fT7 and fM3 the sign survives, as for the extremal family.  No published
    # value is known to us for these signs with every other coefficient free: the check
    # is that each facet is a conic combination of product states (each an exact facet
    # of the elastic cone) with no free part, re-verified from what it stores
    from eftsieve.bounds.cones import verify_certificate
    from eftsieve.theories.aqgc_dim8.theory import aqgc_problem

    region = theory.build_region({"coordinates": [coef], "free": "all",
                                  "families": ["elastic"]})
    assert region.settings["family"] == "elastic"
    assert [tuple(np.round(f.normal, 12)) for f in region.facets] == normals
    problem = aqgc_problem()
    for f in region.facets:
        cert = f.extra["certificate"]
        assert cert["kind"] == "product-states" and min(cert["weights"]) > 0
        assert verify_certificate(problem, cert, np.array(f.extra["full_normal"]))
        assert f.extra["free_residual"] <= 1e-9


def test_a_coefficient_free_in_sign_is_refused_with_the_answer(theory):
    # fT8 with fT9 (and the rest) free: fT8 + fT9/2 >= 0 can always be met (the identity
    # above), so the projection is the whole line: said, not written as a region
    with pytest.raises(InputError, match="unconstrained when 17 coefficients are free"):
        theory.build_region({"coordinates": ["fT8"], "free": "all"})


@pytest.mark.parametrize(("settings", "match"), [
    ({"coordinates": ["fT0"], "free": "all", "families": ["elastic"]}, "unconstrained"),
    ({"coordinates": ["fT0", "fT1", "fT2"], "free": "all"}, "one or two"),
    ({"coordinates": ["fT0"], "free": "fT0"}, "also in --coordinates"),
    ({"coordinates": ["fT0"], "free": "fX1"}, "not a coefficient"),
    ({"coordinates": ["fT0"], "free": "fT1,fT1"}, "duplicate"),
])
def test_free_settings_are_checked(theory, settings, match):
    with pytest.raises(InputError, match=match):
        theory.build_region(settings)


def test_a_fit_moving_a_free_coefficient_is_checked_against_the_projection(tmp_path):
    # the fit's fT0 is free in a projection onto fT2 (its value is not used); on a region
    # that fixes fT0 to zero the same fit is refused (test_a_card_must_declare_...)
    from eftsieve.api import load_fit

    path = tmp_path / "card.yaml"
    path.write_text("format_version: 1\nname: t\ntheory: aqgc-dim8\nparameters:\n"
                    "  - {name: fT2, convention: hat-i}\n  - {name: fT0, convention: hat-i}\n"
                    "mean: [0.1, -0.2]\ncovariance: [[1, 0], [0, 1]]\n")
    fit = load_fit(path)
    free = [c for c in ops.COEFFICIENTS if c != "fT2"]
    cmap = THEORY.coordinate_map(fit, SimpleNamespace(
        coordinates=("fT2",), convention={"name": "hat-i", "free": free}))
    np.testing.assert_allclose(cmap(np.array([[0.1, -0.2]])), [[0.1]])
    with pytest.raises(InputError, match="fixes it to zero"):
        THEORY.coordinate_map(fit, SimpleNamespace(coordinates=("fT2",),
                                                   convention={"name": "hat-i"}))


def test_a_flat_subset_is_refused_in_one_line():
    # fT0..fT2 with fT5: every verified inner point lies in a proper subspace (a flat
    # cone); the builder says so instead of failing inside its simplex choice
    with pytest.raises(InputError, match="no point with a certificate of positive margin"):
        THEORY.build_region({"coordinates": ["fT0", "fT1", "fT2", "fT5"]})


@pytest.mark.slow  # about 15 s: 18 one-coefficient projections of the 18-coefficient cone
def test_signs_with_every_other_coefficient_free():
    # the table of docs/physics_aqgc.md ("Other coefficients free"); each sign comes with
    # a certificate that is re-verified from what is stored and tested on random members
    # of the cone built without a solver (check_facet_on_cone), and "unconstrained" means
    # proven points of both signs
    from eftsieve.bounds.cones import check_facet_on_cone, verify_certificate
    from eftsieve.bounds.projection import project_cone, sign_with_others_free

    problem = aqgc_problem(ops.COEFFICIENTS)
    want = {"fS0": "nonnegative", "fM3": "nonpositive", "fT2": "nonnegative",
            "fT7": "nonnegative", "fT9": "nonnegative"}
    rng = np.random.default_rng(3)
    for name in ops.COEFFICIENTS:
        pc = project_cone(problem, [name])
        assert sign_with_others_free(pc) == want.get(name, "free"), name
        for cert in pc.certificates:
            assert verify_certificate(problem, cert.to_dict(), cert.normal)
            assert check_facet_on_cone(problem, cert, rng, 32) >= 0
