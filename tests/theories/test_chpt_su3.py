"""The chpt-su3 theory against quadrature, published formulas, limits and itself.

Sources of the check values (each test names its own):
* Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465 (GL85): the O(p^4) Lagrangian, the
  unequal-mass Jbar (App. A), Gamma_i (Table 1), the SU(2) matching (Eq. (11.6)).
* Bernard, Kaiser & Meissner, Nucl. Phys. B357 (1991) 129 (BKM91): the one-loop pi pi
  amplitude of SU(3) ChPT, re-typed in :func:`_bkm_pipi` (from memory).
* Weinberg, Phys. Rev. Lett. 17 (1966) 616: the O(p^2) pi pi and pi K amplitudes.
Equation numbers are from memory and were not re-checked against the papers.
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from eftsieve.conventions import Convention
from eftsieve.theories import get_theory
from eftsieve.theories import su3_amplitude as amp3
from eftsieve.theories.chpt_su3 import (
    THEORY,
    run_lr,
    su2_from_su3,
    su2_matching_map,
)
from eftsieve.theories.su3_bounds import (
    CHANNELS,
    ETA,
    K_PLUS,
    K_ZERO,
    PI_PLUS,
    PI_ZERO,
    ChannelFunctionals,
    t_derivative_combination,
)
from eftsieve.theories.su3_loops import PairMoments, jbar_unequal

MPI, MK, META = 139.57, 493.68, 547.86          # MeV, PDG (from memory)
mk, me, MU = MK / MPI, META / MPI, 770.0 / MPI
ES = np.array([1.0, 0.0, -1.0])
ET = np.array([0.0, 1.0, -1.0])


@pytest.fixture(scope="module")
def region():
    return THEORY.build_region({})


@pytest.fixture(scope="module")
def second_region():
    return THEORY.build_region({"families": ["second-derivative"]})


# ---- loop functions against quadrature of the Feynman-parameter integral -----------
def _moment_ref(m_e, m_f, s, n, d):
    """d^d/ds^d int_0^1 x^n ln(m_e^2 (1-x) + m_f^2 x - x(1-x) s) dx by mpmath."""
    mp.mp.dps = 40
    s = mp.mpf(s)
    x0 = (s - m_f**2 + m_e**2) / (2 * s) if s != 0 else mp.mpf(2)
    pts = sorted({mp.mpf(0), mp.mpf(1), *([x0] if 0 < x0 < 1 else [])})

    def dd(x):
        return m_e**2 * (1 - x) + m_f**2 * x - x * (1 - x) * s
    if d == 0:
        return float(mp.quad(lambda x: x**n * mp.log(dd(x)), pts, maxdegree=12))
    return float(-mp.factorial(d - 1) * mp.quad(
        lambda x: x**n * (x * (1 - x)) ** d / dd(x) ** d, pts, maxdegree=12))


@pytest.mark.parametrize("pair", [(1.0, mk), (mk, 1.0), (mk, me), (1.0, me), (1.0, 1.0)])
@pytest.mark.parametrize("frac", [-2.0, -0.3, 0.0, 0.2, 0.45, 0.55, 0.8, 0.999])
def test_moments_and_derivatives_against_quadrature(pair, frac):
    pm = PairMoments(*pair)
    s = frac * pm.threshold
    jets = pm.jets(np.array([s]), 3)
    for n in range(3):
        for d in range(4):
            ref = _moment_ref(pair[0], pair[1], s, n, d)
            assert jets[n, d, 0] == pytest.approx(ref, rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("pair", [(1.0, mk), (mk, me), (1.0, me)])
@pytest.mark.parametrize("frac", [-1.5, 0.3, 0.7, 0.97, 1.2, 3.0])
def test_unequal_jbar_closed_form(pair, frac):
    """GL85 App. A closed form vs -int ln(D/D0), with s + i0 above threshold."""
    m1, m2 = pair
    thr = (m1 + m2) ** 2
    s = frac * thr
    mp.mp.dps = 30
    sz = mp.mpc(s, 1e-25)
    d = lambda x: m1**2 * (1 - x) + m2**2 * x - x * (1 - x) * sz   # noqa: E731
    d0 = lambda x: m1**2 * (1 - x) + m2**2 * x                      # noqa: E731
    pts = [0, 1]
    if s > thr:
        a, b, c = s, m2**2 - m1**2 - s, m1**2
        r = math.sqrt(b * b - 4 * a * c)
        pts = sorted([0, 1, (-b - r) / (2 * a), (-b + r) / (2 * a)])
    ref = complex(-mp.quad(lambda x: mp.log(d(x) / d0(x)), pts))
    got = complex(jbar_unequal(s, m1, m2)[0])
    assert got.real == pytest.approx(ref.real, rel=1e-9, abs=1e-12)
    assert got.imag == pytest.approx(ref.imag, abs=1e-9)
    if s > thr:   # unitarity of the bubble: Im 16 pi^2 Jbar = pi lambda^(1/2)/s
        lam = (s - thr) * (s - (m1 - m2) ** 2)
        assert got.imag == pytest.approx(math.pi * math.sqrt(lam) / s, rel=1e-12)


def test_equal_masses_reuse_the_su2_jbar():
    from eftsieve.theories.loops import jbar_derivatives

    pm = PairMoments(mk, mk)
    w = np.array([-30.0, -2.0, 1.5, 3.9])
    jets = pm.jets(w * mk**2, 3)
    ref = jbar_derivatives(w, 3)
    for d in range(4):
        np.testing.assert_allclose(jets[0, d], -ref[d] / mk ** (2 * d) + (d == 0) * math.log(
            mk**2), rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(jets[1], jets[0] / 2, rtol=1e-12, atol=1e-14)


# ---- an independent derivation of the four-meson vertices from the Lagrangian -------
_G = (1.0, -1.0, -1.0, -1.0)


def _mmul(a, b):
    """Product of matrix-valued multilinear polynomials in eps_1..eps_4 (eps_j^2 = 0).

    An element is an array (16, 3, 3) indexed by the bit mask of the eps's it carries.
    """
    out = np.zeros((16, 3, 3), dtype=complex)
    for s1 in range(16):
        if not a[s1].any():
            continue
        for s2 in range(16):
            if s1 & s2 == 0 and b[s2].any():
                out[s1 | s2] += a[s1] @ b[s2]
    return out


def _trp(a):
    return np.trace(a, axis1=1, axis2=2)


def _smul(a, b):
    out = np.zeros(16, dtype=complex)
    for s1 in range(16):
        for s2 in range(16):
            if s1 & s2 == 0:
                out[s1 | s2] += a[s1] * b[s2]
    return out


def _fields(vecs, q):
    lam = amp3.gell_mann()
    phi = np.zeros((16, 3, 3), dtype=complex)
    dphi = np.zeros((4, 16, 3, 3), dtype=complex)
    for j in range(4):
        mat = np.einsum("a,aij->ij", vecs[j], lam)
        phi[1 << j] = mat
        for m in range(4):
            dphi[m, 1 << j] = -1j * q[j][m] * mat

    def series(sign):
        u = np.zeros((16, 3, 3), dtype=complex)
        u[0] = np.eye(3)
        power, dpow = u.copy(), np.zeros_like(dphi)
        du = np.zeros_like(dphi)
        for n in range(1, 5):
            dpow = np.array([_mmul(dpow[m], phi) + _mmul(power, dphi[m]) for m in range(4)])
            power = _mmul(power, phi)
            c = (sign * 1j) ** n / math.factorial(n)
            u, du = u + c * power, du + c * dpow
        return u, du
    return series(1), series(-1)


def _lagrangian_vertex(vecs, q, mk_, chi_scale=1.0):
    """All-incoming four-meson vertices straight from the Lagrangian (GL85, Eq. (6.5)).

    phi = sum_j eps_j (v_j . lambda) e^{-i q_j x}, U = exp(i phi) (F = 1), d_mu -> -i q_j;
    the coefficient of eps_1 eps_2 eps_3 eps_4 of each term of the Lagrangian density is
    its vertex.  Returns the L2 vertex and those of L1 .. L8 (array of 8), chi =
    diag(M_pi^2, M_pi^2, 2 M_K^2 - M_pi^2) in units of M_pi^2.
    """
    (u, du), (ud, dud) = _fields(vecs, q)
    chi = np.zeros((16, 3, 3), dtype=complex)
    chi[0] = chi_scale * np.diag([1.0, 1.0, 2 * mk_**2 - 1.0])
    lo = sum(_G[m] * _trp(_mmul(du[m], dud[m])) for m in range(4)) / 4
    lo = lo + _trp(_mmul(chi, u + ud)) / 4
    dd = sum(_G[m] * _mmul(dud[m], du[m]) for m in range(4))          # dU^+ dU
    cu, cud = _mmul(chi, u), _mmul(chi, ud)
    sp, sm = _trp(cu + cud), _trp(cu - cud)
    l2 = sum(_G[m] * _G[n] * _smul(_trp(_mmul(dud[m], du[n])), _trp(_mmul(dud[m], du[n])))
             for m in range(4) for n in range(4))
    lecs = [_smul(_trp(dd), _trp(dd)), l2, _trp(_mmul(dd, dd)), _smul(_trp(dd), sp),
            _trp(_mmul(dd, cu + _mmul(ud, chi))), _smul(sp, sp), _smul(sm, sm),
            _trp(_mmul(cu, cu) + _mmul(cud, cud))]
    return lo[15], np.array([x[15] for x in lecs])


def _momenta(s, t, ma, mb):
    """All-incoming momenta (p_a, p_b, -p_c, -p_d) of a b -> a b at (s, t), complex."""
    rs = np.sqrt(complex(s))
    ea, eb = (s + ma**2 - mb**2) / (2 * rs), (s + mb**2 - ma**2) / (2 * rs)
    p2 = (s - (ma + mb) ** 2) * (s - (ma - mb) ** 2) / (4 * s)
    p = np.sqrt(complex(p2))
    c = 1 + t / (2 * p2) if p2 != 0 else 1.0
    sn = np.sqrt(complex(1 - c * c))
    pa, pb = np.array([ea, 0, 0, p]), np.array([eb, 0, 0, -p])
    pc, pd = np.array([ea, p * sn, 0, p * c]), np.array([eb, -p * sn, 0, -p * c])
    return (pa, pb, -pc, -pd)


_KINDS_MASS = {"pi": 1.0, "K": mk, "eta": me}


@pytest.mark.parametrize("name", ["pi+ pi0", "pi+ K+", "pi- K+", "pi0 eta", "K+ K-", "K+ eta"])
def test_module_vertices_match_the_lagrangian(name):
    """Tree and L1..L3 vertices of the module vs the direct expansion of the Lagrangian."""
    _, kinds, (a, b) = CHANNELS[name]
    ma, mb = (_KINDS_MASS[k] for k in kinds)
    amp = amp3.channel_amplitude((a, b), kinds, mk, me, MU)
    for s, t in ((30.0, 1.3), (45.0, -2.0), (70.0, 0.4)):
        q = _momenta(s, t, ma, mb)
        lo, lecs = _lagrangian_vertex((a, b, a.conj(), b.conj()), q, mk)
        y = np.array([1.0, s, t, 2 * ma**2 + 2 * mb**2 - s - t])
        assert complex(lo) == pytest.approx(complex(amp.tree @ y), rel=1e-10, abs=1e-10)
        for i in range(3):
            assert complex(lecs[i]) == pytest.approx(complex(y @ amp.lec[i] @ y), rel=1e-9)


@pytest.mark.parametrize("name", ["pi+ pi0", "pi0 pi0", "pi+ K+", "pi- K+", "pi0 eta", "K+ K-"])
def test_l4_to_l8_and_the_tree_drop_out_of_the_curvature(name):
    """d^2/ds^2 at fixed t of the L4..L8 and O(p^2) vertices vanishes (they are linear)."""
    _, kinds, (a, b) = CHANNELS[name]
    ma, mb = (_KINDS_MASS[k] for k in kinds)
    vecs = (a, b, a.conj(), b.conj())
    t, h = 1.1, 3.0
    vals = [_lagrangian_vertex(vecs, _momenta(40.0 + k * h, t, ma, mb), mk) for k in range(3)]
    lo = [v[0] for v in vals]
    lecs = np.array([v[1] for v in vals])
    assert abs(lo[0] - 2 * lo[1] + lo[2]) < 1e-9
    curv = lecs[0] - 2 * lecs[1] + lecs[2]
    assert np.abs(curv[3:]).max() < 1e-8                  # L4 .. L8
    assert np.abs(curv[:3]).max() > 1.0                   # ... while L1..L3 do curve


def test_tree_amplitudes_against_weinberg():
    """O(p^2): A(s,t,u) = (s - M^2)/F^2 (pi pi), T^{3/2} = (M_pi^2 + M_K^2 - s)/(2F^2)
    (pi+ K+), T(pi0 eta) = M_pi^2/(3F^2) (Weinberg 1966; the last from memory)."""
    for name, ref in (("pi+ pi+", lambda s, t: 2 - s), ("pi+ K+", lambda s, t: (1 + mk**2 - s) / 2),
                      ("pi0 eta", lambda s, t: 1 / 3 + 0 * s)):
        _, kinds, vecs = CHANNELS[name]
        ma, mb = (_KINDS_MASS[k] for k in kinds)
        amp = amp3.channel_amplitude(vecs, kinds, mk, me, MU)
        for s, t in ((3.0, 0.5), (-2.0, 1.0)):
            y = np.array([1.0, s, t, 2 * ma**2 + 2 * mb**2 - s - t])
            assert amp.tree @ y == pytest.approx(ref(s, t), abs=1e-12)


# ---- the pi pi amplitude against BKM91 ------------------------------------------------
def _bkm_pipi(s, t, u, lecs, mk_, me_, mu_):
    """F^4 A(s,t,u) of SU(3) ChPT at one loop, BKM91 (from memory), units M_pi = 1.

    B = M^4/18 J_ee(s) + (s^2 - M^4)/2 J_pp(s) + s^2/8 J_KK(s) + (t - 2M^2)^2/4 J_pp(t)
        + t (s - u) [M_pp(t) + M_KK(t)/2] + (t <-> u),
    C = 4 [(2 L1 + L3)(s - 2M^2)^2 + L2 ((t - 2M^2)^2 + (u - 2M^2)^2)] + linear,
    J^r = Jbar - 2k, M^r(s) = (s - 4m^2) Jbar(s)/(12 s) + 1/(288 pi^2) - k/6,
    k = (ln(m^2/mu^2) + 1)/(32 pi^2).
    """
    loop = 1 / (16 * math.pi**2)

    def k(m):
        return (math.log(m**2 / mu_**2) + 1) / (32 * math.pi**2)

    def jr(x, m):
        return float(jbar_unequal(x, m, m)[0].real) * loop - 2 * k(m)

    def mr(x, m):
        return (x - 4 * m * m) * float(jbar_unequal(x, m, m)[0].real) * loop / (12 * x) \
            + 1 / (288 * math.pi**2) - k(m) / 6

    def half(t_, u_):
        return (t_ - 2) ** 2 * jr(t_, 1.0) / 4 + t_ * (s - u_) * (mr(t_, 1.0) + mr(t_, mk_) / 2)
    l1, l2, l3 = lecs
    return (jr(s, me_) / 18 + (s * s - 1) / 2 * jr(s, 1.0) + s * s * jr(s, mk_) / 8
            + half(t, u) + half(u, t)
            + 4 * ((2 * l1 + l3) * (s - 2) ** 2 + l2 * ((t - 2) ** 2 + (u - 2) ** 2)))


_PIPI = {"pi+ pi0": (0, 0), "pi+ pi-": (1, 0), "pi+ pi+": (0, 1), "pi0 pi0": (1, 1)}


def _bkm_channel(s, t, x, lecs):
    u = 4 - s - t
    return (x[0] * _bkm_pipi(s, t, u, lecs, mk, me, MU) + _bkm_pipi(t, s, u, lecs, mk, me, MU)
            + x[1] * _bkm_pipi(u, t, s, lecs, mk, me, MU))


@pytest.mark.parametrize("name", list(_PIPI))
def test_pipi_curvature_matches_bkm(name):
    """d^2/ds^2 and d^3/ds^2 dt of the derived amplitude vs the re-typed BKM91 formula."""
    lecs = (0.4e-3, 1.3e-3, -3.1e-3)
    fn = ChannelFunctionals(name, mk, me, MU)
    amp = fn.amp
    h, h3 = 4e-4, 2e-3
    for s, t in ((0.5, 1.0), (1.7, 3.0), (0.1, 0.2), (3.2, 0.6)):
        x = np.array([[s, t, 4 - s - t]])
        jets = amp3.loop_jets(amp, x, 3)
        got = amp3.second(amp, x, ES, jets)[0] + fn.k @ lecs

        def g(ss, tt):
            return _bkm_channel(ss, tt, _PIPI[name], lecs)
        ref = (g(s + h, t) - 2 * g(s, t) + g(s - h, t)) / h**2
        assert got == pytest.approx(ref, rel=1e-6)
        d3 = amp3.third_mixed(amp, x, ES, ET, jets)[0]
        ref3 = (g(s + h3, t + h3) - 2 * g(s, t + h3) + g(s - h3, t + h3)
                - g(s + h3, t - h3) + 2 * g(s, t - h3) - g(s - h3, t - h3)) / (2 * h3**3)
        assert d3 == pytest.approx(ref3, rel=2e-4, abs=1e-6)


def test_pipi_differs_from_bkm_only_by_linear_terms():
    """What the module leaves out (tadpoles, renormalisation, L4..L8) is linear in s, t."""
    x = (1, 1)
    amp = ChannelFunctionals("pi0 pi0", mk, me, MU).amp
    pts = np.array([[s, t] for s in (-1.0, 0.3, 1.4, 2.9) for t in (0.1, 1.7, 3.3)])
    pts = pts[pts[:, 0] + pts[:, 1] < 3.9]
    xyz = np.c_[pts, 4 - pts.sum(axis=1)]
    diff = amp3.evaluate(amp, xyz).real - np.array([_bkm_channel(s, t, x, (0, 0, 0))
                                                    for s, t in pts])
    design = np.c_[np.ones(len(pts)), pts]
    coef, *_ = np.linalg.lstsq(design, diff, rcond=None)
    assert np.abs(design @ coef - diff).max() < 1e-12


# ---- unitarity, scale independence ---------------------------------------------------
def test_perturbative_unitarity_pi_plus_k_plus():
    """Im T(pi+ K+) = q |T_2|^2/(8 pi sqrt s) with Weinberg's T_2 = (M_pi^2 + M_K^2 - s)/2
    (I = 3/2 has only pi K below the K eta threshold; two-body phase space)."""
    amp = ChannelFunctionals("pi+ K+", mk, me, MU).amp
    thr = (1 + mk) ** 2
    for s in (1.02 * thr, 1.4 * thr, 2.5 * thr):
        for t in (-0.3, -4.0):
            val = amp3.evaluate(amp, np.array([[s, t, 2 + 2 * mk**2 - s - t]]))[0]
            q = math.sqrt((s - thr) * (s - (mk - 1) ** 2) / (4 * s))
            assert val.imag == pytest.approx(q * (1 + mk**2 - s) ** 2 / 4 / (8 * math.pi
                                                                              * math.sqrt(s)),
                                             rel=1e-10)


def test_perturbative_unitarity_pi_plus_pi_plus():
    """Im T(pi+ pi+) = sigma (2 M^2 - s)^2/(32 pi) below the K Kbar threshold (I = 2)."""
    amp = ChannelFunctionals("pi+ pi+", mk, me, MU).amp
    for s in (4.5, 10.0, 40.0):
        val = amp3.evaluate(amp, np.array([[s, -1.0, 5.0 - s]]))[0]
        assert val.imag == pytest.approx(math.sqrt(1 - 4 / s) * (2 - s) ** 2 / (32 * math.pi),
                                         rel=1e-10)


def test_scale_independence_gives_the_gl_gammas(second_region):
    """Regions at two scales agree after running L_i^r with Gamma = (3/32, 3/16, 0) (GL85)."""
    other = THEORY.build_region({"families": ["second-derivative"], "mu_mev": 1000.0})
    shift = run_lr(np.zeros(3), (1, 2, 3), 770.0, 1000.0)
    assert len(other.facets) == len(second_region.facets)
    for fa, fb in zip(second_region.facets, other.facets, strict=True):
        assert fb.channel == fa.channel
        assert fb.offset == pytest.approx(fa.offset + np.asarray(fa.normal) @ shift,
                                          rel=1e-9, abs=1e-12)
    # and a wrong Gamma_1 would show: the pi0 pi0 normal (2, 2, 1) weighs it
    wrong = shift + np.array([1e-3 / (16 * math.pi**2), 0, 0])
    f = next(f for f in second_region.facets if f.channel == "pi0 pi0")
    g = next(g for g in other.facets if g.channel == "pi0 pi0")
    assert abs(g.offset - f.offset - np.asarray(f.normal) @ wrong) > 1e-7


# ---- matching to SU(2) -----------------------------------------------------------------
def _su2_curvature(name, x, lecs, mk_, mu_):
    """d^2T/ds^2 of chpt-su2 (GL 1984) with l^r from the GL85 matching, units M_pi = 1."""
    from eftsieve.theories import pipi
    from eftsieve.theories.chpt_su2 import CHANNELS as SU2

    l12 = su2_from_su3(np.asarray(lecs), mu_ * MPI, mk_ * MPI)
    gam = (1 / 3, 2 / 3)
    lbar = [32 * math.pi**2 / g * lr - math.log(1 / mu_**2) for g, lr in zip(gam, l12, strict=True)]
    amp = pipi.channel_amplitude((lbar[0], lbar[1], 0.0, 0.0), *SU2[name])
    return pipi.second(amp, x, ES)


@pytest.mark.parametrize("name", list(_PIPI))
def test_heavy_kaon_limit_is_su2_with_the_gl_matching(name):
    """As M_K -> infinity (M_eta from Gell-Mann-Okubo) the SU(3) pi pi curvature tends to
    that of SU(2) ChPT with l1^r = 4L1 + 2L3 - nu_K/24, l2^r = 4L2 - nu_K/12 (GL85), with
    corrections O(M_pi^2/M_K^2); dropping nu_K would leave an O(nu_K) difference."""
    lecs = (0.4e-3, 1.3e-3, -3.1e-3)
    x = np.array([[0.5, 1.0, 2.5], [1.7, 3.0, -0.7], [0.1, 3.9, 0.0], [3.0, 0.2, 0.8]])
    diffs = []
    for mk_ in (20.0, 40.0):
        me_ = math.sqrt((4 * mk_**2 - 1) / 3)
        fn = ChannelFunctionals(name, mk_, me_, MU)
        su3 = amp3.second(fn.amp, x, ES, amp3.loop_jets(fn.amp, x, 2, skip=(2,))) + fn.k @ lecs
        su2 = _su2_curvature(name, x, lecs, mk_, MU)
        diffs.append(np.abs(su3 - su2).max())
        nu = (math.log(mk_**2 / MU**2) + 1) / (32 * math.pi**2)
        assert diffs[-1] < 2e-3 * nu
    assert diffs[1] < diffs[0] / 3          # ~ 1/M_K^2 (up to logarithms)


def test_pipi_facets_agree_with_chpt_su2_through_the_matching(second_region):
    """The pi pi facets of chpt-su3 vs the chpt-su2 region (lr at mu) pulled back through
    the matching; they differ by the O(M_pi^2/M_K^2) K and eta loops only (~0.2%)."""
    su2 = get_theory("chpt-su2").build_region({"convention": "lr", "mu_mev": 770.0,
                                               "families": ["second-derivative"]})
    amap = su2_matching_map(770.0, MK)
    su3 = [f for f in second_region.facets if f.channel.count("pi") == 2]
    matched = 0
    for f in su2.facets:
        n = np.asarray(f.normal) @ amap.jacobian
        b = f.offset - np.asarray(f.normal) @ amap.shift
        for g in su3:
            m = np.asarray(g.normal)
            if np.allclose(m / np.linalg.norm(m), n / np.linalg.norm(n), atol=1e-9):
                matched += 1
                got, ref = g.offset / np.linalg.norm(m), b / np.linalg.norm(n)
                assert got == pytest.approx(ref, rel=5e-3)
    assert matched == len(su2.facets) == 3


# ---- chiral limit at tree level -------------------------------------------------------
def _forward_normal(a, b):
    """c with d^2T/ds^2 (t = 0, massless) = c . (L1, L2, L3), from the Lagrangian."""
    vecs = (a, b, a.conj(), b.conj())
    vals = np.array([_lagrangian_vertex(vecs, _momenta(s, 0.0, 0.0, 0.0), 1.0,
                                        chi_scale=0.0)[1][:3] for s in (1.0, 2.0, 3.0)])
    return (vals[0] - 2 * vals[1] + vals[2]).real


def test_chiral_limit_tree_bounds_from_product_states():
    """L2 >= 0, 2L1 + 2L2 + L3 >= 0, 3L2 + L3 >= 0 are the forward bounds of all product
    flavour states at tree level in the chiral limit (derived here; cf. Mateu,
    arXiv:0801.3627), and the machinery reduces to them with loops off, equal masses."""
    basis = np.array([[0, 1, 0], [2, 2, 1], [0, 3, 1]], dtype=float)
    for (a, b), row in (((PI_PLUS, PI_ZERO), 0), ((PI_ZERO, PI_ZERO), 1), ((PI_ZERO, ETA), 2)):
        c = _forward_normal(a, b)
        assert np.allclose(np.cross(c, basis[row]), 0, atol=1e-9) and c @ basis[row] > 0
    rng = np.random.default_rng(7)
    for _ in range(40):
        a, b = (rng.normal(size=8) + 1j * rng.normal(size=8) for _ in range(2))
        c = _forward_normal(a / np.linalg.norm(a), b / np.linalg.norm(b))
        lam = np.linalg.solve(basis.T, c)              # c = sum lam_i basis_i
        assert lam.min() > -1e-9 * np.abs(c).max()
    reg = THEORY.build_region({"loops": False, "pion_mass_mev": 1.0, "kaon_mass_mev": 1.0,
                               "eta_mass_mev": 1.0, "families": ["second-derivative"]})
    normals = np.array([np.asarray(f.normal) / np.linalg.norm(f.normal) for f in reg.facets])
    ref = basis / np.linalg.norm(basis, axis=1)[:, None]
    assert len(reg.facets) == 3
    assert all(np.abs(normals - r).max(axis=1).min() < 1e-12 for r in ref)
    assert all(abs(f.offset) < 1e-15 for f in reg.facets)


def test_physical_masses_use_pi_pi_and_pi_k_only(region):
    assert {f.channel for f in region.facets} <= {"pi+ pi0", "pi+ pi-", "pi+ pi+", "pi0 pi0",
                                                  "pi+ K+", "pi- K+"}
    skipped = " ".join(n for n in region.notes if n.startswith("skipped"))
    for name in ("pi0 eta", "K+ K+", "K+ K-", "K0 K-", "K+ eta", "eta eta"):
        assert name in skipped
    from eftsieve.errors import InputError

    with pytest.raises(InputError, match="provable"):
        THEORY.build_region({"processes": ["K Kbar", "eta eta"]})


# ---- rule-in: amplitudes UV-complete by construction ----------------------------------
def _resonances(masses2, spins, g, ma, mb):
    """s- and u-channel exchanges g (2J+1) P_J(z) [1/(m^2 - s) + 1/(m^2 - u)] of a b -> a b,
    z = 1 + 2 m^2 t/lambda(m^2, ma^2, mb^2): positive absorptive parts for 0 <= t < 4,
    m^2 > (ma + mb)^2, so they obey every positivity bound exactly."""
    tot = 2 * ma**2 + 2 * mb**2

    def amp(s, t):
        u = tot - s - t
        out = mp.mpf(0)
        for m2, j, c in zip(masses2, spins, g, strict=True):
            lam = (m2 - (ma + mb) ** 2) * (m2 - (ma - mb) ** 2)
            out += c * (2 * j + 1) * mp.legendre(j, 1 + 2 * m2 * t / lam) * (
                1 / (m2 - s) + 1 / (m2 - u))
        return out
    return amp


@pytest.mark.parametrize("seed", [0, 1])
def test_rule_in_resonance_sums_pi_k(seed):
    mp.mp.dps = 40
    rng = np.random.default_rng(seed)
    thr = (1 + mk) ** 2
    amp = _resonances(list(thr + rng.uniform(0.5, 40, 3)), list(rng.integers(0, 5, 3)),
                      list(rng.uniform(0.1, 2.0, 3)), 1.0, mk)
    for t in (0.0, 1.3, 3.99):
        lo = (mk - 1) ** 2 - t
        for frac in (0.02, 0.3, 0.5, 0.8, 0.98):
            s = mp.mpf(lo + frac * (thr - lo))
            sec = float(mp.diff(lambda v, t=t: amp(v, t), s, 2))
            dfs = float(mp.diff(lambda w, s=s: mp.diff(lambda v: amp(v, w), s, 2), t, 1))
            ds3 = float(mp.diff(lambda v, t=t: amp(v, t), s, 3))
            u = 2 + 2 * mk**2 - float(s) - t
            comb, _ = t_derivative_combination(np.array([sec]), np.array([dfs]),
                                               np.array([ds3]), np.array([float(s)]),
                                               np.array([u]), thr, thr)
            assert sec >= 0 and comb[0] >= -1e-12 * abs(sec)


def test_t_derivative_combination_reduces_to_su2():
    from eftsieve.theories.chpt_su2 import t_derivative_combination as su2_comb

    rng = np.random.default_rng(1)
    s, t = rng.uniform(-1, 3.9, 50), rng.uniform(0, 4, 50)
    u = 4 - s - t
    keep = u < 4
    args = [rng.normal(size=50)[keep] for _ in range(3)]
    a = t_derivative_combination(*args, s[keep], u[keep], 4.0, 4.0)
    b = su2_comb(*args, s[keep], u[keep])
    np.testing.assert_allclose(a[0], b[0], rtol=1e-14)


# ---- facets, certificates and channels --------------------------------------------------
def test_certificates_are_attained(region):
    for f in region.facets:
        fn = ChannelFunctionals(f.channel, mk, me, MU)
        dom = fn.domain
        t = f.point["t"]
        lo = dom.total - t - dom.u_th + 1e-3
        cube = np.array([[(f.point["s"] - lo) / (dom.s_th - 1e-3 - lo), t / dom.t_max]])
        ev = fn.second_derivative if f.family == "second-derivative" else fn.t_derivative
        k0, k, _ = ev(cube)
        n = np.asarray(f.normal)
        on = n * f.offset / (n @ n)
        assert k0[0] + k[0] @ on == pytest.approx(0.0, abs=1e-9)
        assert k0[0] + k[0] @ (on - 1e-4 * n) < 0


def test_corner_channels_are_extreme():
    """Any pi pi or pi K superposition is an affine mix of the corner channels."""
    rng = np.random.default_rng(5)
    x = np.array([[0.3, 2.0, 1.7], [1.5, 0.5, 2.0], [2.2, 3.1, -1.3]])
    s_of = {n: None for n in ("pi+ pi0", "pi+ pi-", "pi+ pi+", "pi0 pi0", "pi+ K+", "pi- K+")}
    for n in s_of:
        fn = ChannelFunctionals(n, mk, me, MU)
        xx = x if n.count("pi") == 2 else np.c_[x[:, 0] + 8, x[:, 1], 2 + 2 * mk**2 - 8
                                                 - x[:, 0] - x[:, 1]]
        s_of[n] = amp3.second(fn.amp, xx, ES, amp3.loop_jets(fn.amp, xx, 2, skip=(2,)))
    for _ in range(5):
        a3, b3 = (rng.normal(size=3) + 1j * rng.normal(size=3) for _ in range(2))
        a3, b3 = a3 / np.linalg.norm(a3), b3 / np.linalg.norm(b3)
        x1, x2 = abs(a3 @ b3) ** 2, abs(a3 @ b3.conj()) ** 2
        a8, b8 = np.r_[a3, np.zeros(5)], np.r_[b3, np.zeros(5)]
        amp = amp3.channel_amplitude((a8, b8), ("pi", "pi"), mk, me, MU)
        got = amp3.second(amp, x, ES, amp3.loop_jets(amp, x, 2, skip=(2,)))
        ref = (s_of["pi+ pi0"] + x1 * (s_of["pi+ pi-"] - s_of["pi+ pi0"])
               + x2 * (s_of["pi+ pi+"] - s_of["pi+ pi0"]))
        np.testing.assert_allclose(got, ref, rtol=1e-10)
        c = rng.normal(size=2) + 1j * rng.normal(size=2)
        kb = (c[0] * K_PLUS + c[1] * K_ZERO) / np.linalg.norm(c)
        amp = amp3.channel_amplitude((a8, kb), ("pi", "K"), mk, me, MU)
        xx = np.c_[x[:, 0] + 8, x[:, 1], 2 + 2 * mk**2 - 8 - x[:, 0] - x[:, 1]]
        got = amp3.second(amp, xx, ES, amp3.loop_jets(amp, xx, 2, skip=(2,)))
        w = (got[0] - s_of["pi- K+"][0]) / (s_of["pi+ K+"][0] - s_of["pi- K+"][0])
        assert -1e-9 <= w <= 1 + 1e-9
        np.testing.assert_allclose(got, w * s_of["pi+ K+"] + (1 - w) * s_of["pi- K+"],
                                   rtol=1e-9)


def test_region_values(region, second_region):
    """Shape of the default region; the t-derivative family is stronger (cf. chpt-su2)."""
    assert region.coordinates == ("L1", "L2", "L3")
    assert region.convention["name"] == "Lr" and region.convention["mu_mev"] == 770.0
    normals = {tuple(np.round(np.asarray(f.normal) / min(abs(v) for v in f.normal if v), 9))
               for f in region.facets}
    assert {(0.0, 1.0, 0.0), (0.0, 4.0, 1.0)} <= normals
    for f in second_region.facets:
        g = next((g for g in region.facets if np.allclose(g.normal, f.normal)), None)
        if g is not None:
            assert g.offset >= f.offset


# ---- the Theory API ----------------------------------------------------------------------
def _fit(mu_mev, names=("L1", "L2", "L3"), conv="Lr"):
    from eftsieve.fit import Fit, Parameter

    params = tuple(Parameter(n, Convention(conv, mu_mev=mu_mev)) for n in names)
    return Fit("toy", "chpt-su3", params, {}, np.full(len(names), 1e-3),
               np.eye(len(names)) * 1e-8)


def test_coordinate_map_runs_the_scale(second_region):
    fit = _fit(1000.0)
    cmap = THEORY.coordinate_map(fit, second_region)
    other = THEORY.build_region({"families": ["second-derivative"], "mu_mev": 1000.0})
    pts = np.random.default_rng(2).normal(0, 3e-3, (4000, 3))
    assert np.array_equal(second_region.contains(cmap(pts)), other.contains(pts))
    assert THEORY.region_settings_for_fit(fit)["mu_mev"] == 1000.0


def test_validate_fit_rejects_bad_cards():
    from eftsieve.errors import InputError

    THEORY.validate_fit(_fit(770.0))
    with pytest.raises(InputError, match="twice"):
        THEORY.validate_fit(_fit(770.0, names=("L1", "L1r", "L3")))
    with pytest.raises(InputError, match="not one of chpt-su3"):
        THEORY.validate_fit(_fit(770.0, conv="lbar"))
    with pytest.raises(InputError, match="unknown setting"):
        THEORY.build_region({"order": 4})
    with pytest.raises(InputError, match="one pion mass"):
        THEORY.build_region({"pion_masses_mev": [139.57, 200.0]})


def test_region_file_round_trip(region, tmp_path):
    from eftsieve.region import Region

    back = Region.load(region.save(tmp_path / "su3.json"))
    assert back.hash == region.hash and back.facets == region.facets


def test_slices_and_projections(region):
    from eftsieve.theories.su3_slices import region_projection, region_slice

    names, poly = region_slice(region, {"L1": 5e-4})
    assert names == ("L2", "L3") and len(poly) >= 3
    pts = np.c_[np.full(len(poly), 5e-4), poly]
    margins = region.margins(pts)
    assert margins.min() > -1e-12
    assert (np.abs(margins) < 1e-12).any(axis=0).sum() >= 2      # facets bound the slice
    shadow = region_projection(region, ("L2", "L3"))
    c = poly.mean(axis=0)                      # the slice lies inside the shadow
    edges = np.roll(shadow, -1, axis=0) - shadow
    cross = edges[:, 0] * (c[1] - shadow[:, 1]) - edges[:, 1] * (c[0] - shadow[:, 0])
    assert (cross > 0).all()
