"""The one-loop SU(3) amplitudes: loop functions, vertices, the pi pi amplitude, unitarity.

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

from eftsieve.theories.chpt_su3 import amplitude as amp3
from eftsieve.theories.chpt_su3.channels import (
    CHANNELS,
    ChannelFunctionals,
)
from eftsieve.theories.chpt_su3.loops import PairMoments, jbar_unequal
from tests.theories.chpt_su3.su3_common import ES, ET, MU, PIPI, lagrangian_vertex, me, mk, momenta


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


_KINDS_MASS = {"pi": 1.0, "K": mk, "eta": me}


@pytest.mark.parametrize("name", ["pi+ pi0", "pi+ K+", "pi- K+", "pi0 eta", "K+ K-", "K+ eta"])
def test_module_vertices_match_the_lagrangian(name):
    """Tree and L1..L3 vertices of the module vs the direct expansion of the Lagrangian."""
    _, kinds, (a, b) = CHANNELS[name]
    ma, mb = (_KINDS_MASS[k] for k in kinds)
    amp = amp3.channel_amplitude((a, b), kinds, mk, me, MU)
    for s, t in ((30.0, 1.3), (45.0, -2.0), (70.0, 0.4)):
        q = momenta(s, t, ma, mb)
        lo, lecs = lagrangian_vertex((a, b, a.conj(), b.conj()), q, mk)
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
    vals = [lagrangian_vertex(vecs, momenta(40.0 + k * h, t, ma, mb), mk) for k in range(3)]
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


def _bkm_channel(s, t, x, lecs):
    u = 4 - s - t
    return (x[0] * _bkm_pipi(s, t, u, lecs, mk, me, MU) + _bkm_pipi(t, s, u, lecs, mk, me, MU)
            + x[1] * _bkm_pipi(u, t, s, lecs, mk, me, MU))


@pytest.mark.parametrize("name", list(PIPI))
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
            return _bkm_channel(ss, tt, PIPI[name], lecs)
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
