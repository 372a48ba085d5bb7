"""One-loop SU(3) ChPT meson-meson amplitudes, up to terms linear in s, t, u.

Derived here from the Lagrangian of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465
(L2 of their Eq. (6.1)-(6.3) in the exponential parametrisation U = exp(i lambda_a
phi_a / F), and the L1, L2, L3 terms of their O(p^4) Lagrangian, Eq. (6.5); equation
numbers from memory), in the scheme of that paper (dimensional regularisation with
L_i = L_i^r(mu) + Gamma_i lambda, i.e. MS-bar with the extra +1, "MS-bar - 1").
docs/physics_su3.md gives the derivation; in short:

* Every O(p^4) term that is *not* linear in the Mandelstam variables comes from the
  L1, L2, L3 contact terms and from the s-, t- and u-channel bubbles with two O(p^2)
  vertices.  Tadpoles, wave-function, mass and decay-constant renormalisation and the
  L4..L8 terms are at most linear in s, t, u (power counting), and so are the off-shell
  parts of the bubble vertices (they cancel a propagator and leave a tadpole).  They are
  *not* implemented: the amplitudes here are exact for second and higher derivatives
  in the Mandelstam plane (all that the positivity bounds use) but their constant and
  linear parts are incomplete.
* The bubble of a pair (e, f) with on-shell vertices M1 = c1 + v1.k, M2 = c2 + v2.k
  (both linear in the loop momentum k once k^2 = m_e^2, (P - k)^2 = m_f^2) is, with
  Lambda_n of :mod:`eftsieve.theories.chpt_su3.loops`,

    (1/2)(1/16 pi^2) { -[c1 c2 + (c1 w2 + c2 w1)/2 + w1 w2/3] (1 - ln mu^2)
                       -[c1 c2 Lambda_0 + (c1 w2 + c2 w1) Lambda_1 + w1 w2 Lambda_2]
                       + (v1.v2)/2 [ln mu^2 (m_e^2 + (m_f^2 - m_e^2)/2 - P^2/6)
                          - m_e^2 Lambda_0 - (m_f^2 - m_e^2 - P^2) Lambda_1 - P^2 Lambda_2] },

  w_i = v_i . P, summed over ordered pairs of real fields (hence the 1/2).

Units: F = 1 and masses in units of M_pi (the bounds do not depend on F); the amplitude
is F^4 T^(4).  Fields are the eight real Gell-Mann components (pions 1-3, kaons 4-7,
eta 8); the physical masses are used on every line (docs/physics_su3.md discusses this
O(p^6) choice) and chi = diag(M_pi^2, M_pi^2, 2 M_K^2 - M_pi^2) in the O(p^2) vertex.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from eftsieve.theories.chpt_su3.loops import PairMoments

LOOP = 1.0 / (16 * math.pi**2)
MULTIPLETS = {"pi": (0, 1, 2), "K": (3, 4, 5, 6), "eta": (7,)}
_NAMES = ("pi", "K", "eta")
#: channel pairings of the four all-incoming legs: (i, j | k, l), the bubble variable
PAIRINGS = (((0, 1, 2, 3), 1), ((0, 2, 1, 3), 2), ((0, 3, 1, 2), 3))


def gell_mann() -> np.ndarray:
    """The eight Gell-Mann matrices, shape (8, 3, 3), tr(l_a l_b) = 2 delta_ab."""
    lam = np.zeros((8, 3, 3), dtype=complex)
    lam[0][0, 1] = lam[0][1, 0] = 1
    lam[1][0, 1], lam[1][1, 0] = -1j, 1j
    lam[2][0, 0], lam[2][1, 1] = 1, -1
    lam[3][0, 2] = lam[3][2, 0] = 1
    lam[4][0, 2], lam[4][2, 0] = -1j, 1j
    lam[5][1, 2] = lam[5][2, 1] = 1
    lam[6][1, 2], lam[6][2, 1] = -1j, 1j
    lam[7] = np.diag([1, 1, -2]) / math.sqrt(3)
    return lam


@lru_cache(maxsize=1)
def _traces() -> tuple[np.ndarray, np.ndarray]:
    lam = gell_mann()
    t2 = np.einsum("aij,bji->ab", lam, lam)
    t4 = np.einsum("aij,bjk,ckl,dli->abcd", lam, lam, lam, lam)
    return t2, t4


def field_masses(mk: float, meta: float) -> np.ndarray:
    """Mass of each real field (units M_pi)."""
    return np.array([1.0] * 3 + [mk] * 4 + [meta])


def _dot_forms(m: tuple[np.ndarray, ...]) -> np.ndarray:
    """q_i . q_j of four all-incoming on-shell legs as linear forms in y = (1, s, t, u).

    ``m`` holds the leg masses (broadcastable arrays); returns (4, 4, ..., 4).
    s = (q1 + q2)^2, t = (q1 + q3)^2, u = (q1 + q4)^2.
    """
    shape = np.broadcast_shapes(*(np.shape(x) for x in m))
    out = np.zeros((4, 4) + shape + (4,))
    var = {(0, 1): 1, (2, 3): 1, (0, 2): 2, (1, 3): 2, (0, 3): 3, (1, 2): 3}
    for (i, j), v in var.items():
        form = np.zeros(shape + (4,))
        form[..., 0] = -(m[i] ** 2 + m[j] ** 2) / 2
        form[..., v] = 0.5
        out[i, j] = out[j, i] = form
    for i in range(4):
        out[i, i, ..., 0] = np.broadcast_to(m[i] ** 2, shape)
    return out


def _leg_masses(mass: np.ndarray) -> tuple[np.ndarray, ...]:
    return (mass[:, None, None, None], mass[None, :, None, None],
            mass[None, None, :, None], mass[None, None, None, :])


def _perm_trace(t: np.ndarray, sigma: tuple[int, ...]) -> np.ndarray:
    """X[x1..x4] = t[x_sigma(1), .., x_sigma(4)] for a 4-index tensor t."""
    return np.transpose(t, np.argsort(sigma))


@lru_cache(maxsize=16)
def tree_tensor(mk: float, meta: float) -> np.ndarray:
    """O(p^2) on-shell vertex F^2 M_abcd = C . (1, s, t, u), all legs incoming, (8,8,8,8,4).

    From L2 = (F^2/4)<dU dU^+> + (F^2/4)<chi (U + U^+)> with U = exp(i phi/F), phi =
    lambda_a phi_a, whose four-field part is (1/F^2)[-(1/12)<dphi d(phi^3)> +
    (1/16)<d(phi^2) d(phi^2)> + (1/48)<chi phi^4>]; each derivative gives -i q.
    """
    _, t4 = _traces()
    mass = field_masses(mk, meta)
    dots = _dot_forms(_leg_masses(mass))
    chi = np.diag([1.0, 1.0, 2 * mk**2 - 1.0]).astype(complex)
    lam = gell_mann()
    t4chi = np.einsum("ij,ajk,bkl,clm,dmi->abcd", chi, lam, lam, lam, lam)
    out = np.zeros((8,) * 4 + (4,), dtype=complex)
    for sigma in itertools.permutations(range(4)):
        tr = _perm_trace(t4, sigma)[..., None]
        kin = sum(dots[sigma[0], sigma[j]] for j in (1, 2, 3)) / 12.0
        kin = kin - sum(dots[sigma[i], sigma[j]] for i in (0, 1) for j in (2, 3)) / 16.0
        out = out + kin * tr
        out[..., 0] = out[..., 0] + _perm_trace(t4chi, sigma) / 48.0
    return out


@lru_cache(maxsize=16)
def lec_tensor(mk: float, meta: float) -> np.ndarray:
    """F^4 M_abcd from L1, L2, L3 as quadratic forms in y = (1, s, t, u): (3, 8,8,8,8,4,4).

    L1 <dU^+ dU>^2, L2 <d_mu U^+ d_nu U><d^mu U^+ d^nu U>, L3 <dU^+ dU dU^+ dU> at four
    fields: L1 (q1.q2)(q3.q4) <l1 l2><l3 l4>, L2 (q1.q3)(q2.q4) <l1 l2><l3 l4>,
    L3 (q1.q2)(q3.q4) <l1 l2 l3 l4>, summed over the 24 assignments of legs to slots.
    """
    t2, t4 = _traces()
    mass = field_masses(mk, meta)
    dots = _dot_forms(_leg_masses(mass))
    t22 = np.einsum("ab,cd->abcd", t2, t2)
    out = np.zeros((3,) + (8,) * 4 + (4, 4), dtype=complex)
    for sg in itertools.permutations(range(4)):
        d12 = _sym(dots[sg[0], sg[1]], dots[sg[2], sg[3]])
        d13 = _sym(dots[sg[0], sg[2]], dots[sg[1], sg[3]])
        out[0] += d12 * _perm_trace(t22, sg)[..., None, None]
        out[1] += d13 * _perm_trace(t22, sg)[..., None, None]
        out[2] += d12 * _perm_trace(t4, sg)[..., None, None]
    return out


def _sym(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """The symmetric 4x4 form of the product of two linear forms (last axis)."""
    return 0.5 * (a[..., :, None] * b[..., None, :] + b[..., :, None] * a[..., None, :])


@dataclass(frozen=True)
class LoopTerm:
    """quad(y) * LOOP * Lambda_n(y[var]) for the pair (m_e, m_f); quad is 4x4 over y."""

    quad: np.ndarray
    var: int
    pair: tuple[float, float]
    n: int


@dataclass(frozen=True)
class Amplitude:
    """F^4 T^(4) of one channel: polynomial (4x4 over y) + loop terms; L-part separate.

    ``lec`` (3, 4, 4) gives the L1, L2, L3 polynomials (coefficient of each L_i^r).
    """

    poly: np.ndarray
    loops: tuple[LoopTerm, ...]
    lec: np.ndarray
    tree: np.ndarray
    masses: tuple[float, float]


def _unit(k: int) -> np.ndarray:
    e = np.zeros(4)
    e[k] = 1.0
    return e


def _bubble_basis(legs: tuple[int, int, int, int], var: int, mext: tuple[float, ...],
                  m_e: float, m_f: float, log_mu2: float,
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Polynomial and Lambda_n coefficients of the bubble for unit vertex coefficients.

    Vertex 1 = gamma . (1, P^2, t', u') on legs (i, j, e, f), vertex 2 = delta . (1, P^2,
    t'', u'') on legs (e, f, k, l); returns poly[m, n] (4, 4, 4, 4) including LOOP, and
    lam[k, m, n] (3, 4, 4, 4, 4) without it (module docstring gives the formula).
    """
    i, j, k, m4 = legs
    e0, ev = _unit(0), _unit(var)
    mi2, mj2, mk2, ml2 = (mext[p] ** 2 for p in (i, j, k, m4))
    me2, mf2 = m_e**2, m_f**2
    dots = _dot_forms(tuple(np.float64(m) for m in mext))  # type: ignore[misc]
    c1 = [e0, ev, (mi2 + me2) * e0, (mj2 + me2) * e0]
    w1 = [0 * e0, 0 * e0, -(ev + (mi2 - mj2) * e0), -(ev + (mj2 - mi2) * e0)]
    c2 = [e0, ev, (me2 + mk2) * e0, (me2 + ml2) * e0]
    w2 = [0 * e0, 0 * e0, -(ev + (mk2 - ml2) * e0), -(ev + (ml2 - mk2) * e0)]
    vv = {(2, 2): dots[i, k], (2, 3): dots[i, m4], (3, 2): dots[j, k], (3, 3): dots[j, m4]}
    poly = np.zeros((4, 4, 4, 4))
    lam = np.zeros((3, 4, 4, 4, 4))
    rest = (me2 + (mf2 - me2) / 2) * e0 - ev / 6
    for m in range(4):
        for n in range(4):
            a = _sym(c1[m], c2[n])
            b = _sym(c1[m], w2[n]) + _sym(c2[n], w1[m])
            w = _sym(w1[m], w2[n])
            v = -4 * vv[(m, n)] if (m, n) in vv else np.zeros(4)
            poly[m, n] = 0.5 * LOOP * (-(a + b / 2 + w / 3) * (1 - log_mu2)
                                       + 0.5 * log_mu2 * _sym(v, rest))
            lam[0, m, n] = 0.5 * (-a - 0.5 * me2 * _sym(v, e0))
            lam[1, m, n] = 0.5 * (-b - 0.5 * _sym(v, (mf2 - me2) * e0 - ev))
            lam[2, m, n] = 0.5 * (-w - 0.5 * _sym(v, ev))
    return poly, lam


def channel_amplitude(vecs: tuple[np.ndarray, np.ndarray], kinds: tuple[str, str],
                      mk: float, meta: float, mu: float) -> Amplitude:
    """F^4 T^(4) (up to linear terms) of the elastic channel |a b> -> |a b>.

    ``vecs`` are the flavour vectors (C^8, unit norm) of a and b, ``kinds`` their
    multiplets ('pi', 'K', 'eta'); ``mu`` the scale in units of M_pi.
    """
    a, b = (np.asarray(v, dtype=complex) for v in vecs)
    legs_v = (a, b, a.conj(), b.conj())
    mass = field_masses(mk, meta)
    m_of = {"pi": 1.0, "K": mk, "eta": meta}
    mext = (m_of[kinds[0]], m_of[kinds[1]], m_of[kinds[0]], m_of[kinds[1]])
    c = tree_tensor(mk, meta)
    tree = np.einsum("abcdm,a,b,c,d->m", c, *legs_v)
    lec = np.einsum("labcdmn,a,b,c,d->lmn", lec_tensor(mk, meta), *legs_v)
    poly = np.zeros((4, 4), dtype=complex)
    terms: dict[tuple[int, tuple[float, float], int], np.ndarray] = {}
    log_mu2 = math.log(mu**2)
    for legs, var in PAIRINGS:
        i, j, k, m4 = legs
        w1 = np.einsum("abefm,a,b->efm", c, legs_v[i], legs_v[j])
        w2 = np.einsum("efcdn,c,d->efn", c, legs_v[k], legs_v[m4])
        for ename in _NAMES:
            for fname in _NAMES:
                ei, fi = list(MULTIPLETS[ename]), list(MULTIPLETS[fname])
                g = np.einsum("efm,efn->mn", w1[np.ix_(ei, fi)], w2[np.ix_(ei, fi)])
                if np.abs(g).max() < 1e-13:
                    continue
                m_e, m_f = mass[ei[0]], mass[fi[0]]
                bp, bl = _bubble_basis(legs, var, mext, m_e, m_f, log_mu2)
                poly = poly + np.einsum("mn,mnpq->pq", g, bp)
                for n in range(3):
                    key = (var, (float(m_e), float(m_f)), n)
                    q = np.einsum("mn,mnpq->pq", g, bl[n])
                    terms[key] = terms.get(key, 0) + q
    return Amplitude(_real(poly), tuple(LoopTerm(_real(q), v, p, n)
                                        for (v, p, n), q in terms.items()),
                     _real(lec), _real(tree), (mext[0], mext[1]))


def _real(x: np.ndarray) -> np.ndarray:
    """The real part of a channel coefficient, checking that the imaginary part cancels."""
    x = np.asarray(x)
    if np.abs(x.imag).max(initial=0.0) > 1e-9 * max(1.0, np.abs(x).max()):
        raise RuntimeError("an elastic channel coefficient came out complex")
    return np.ascontiguousarray(x.real)


def _y(x: np.ndarray) -> np.ndarray:
    return np.concatenate([np.ones(x.shape[:-1] + (1,)), x], axis=-1)


def _qval(q: np.ndarray, y: np.ndarray) -> np.ndarray:
    return ((y @ q) * y).sum(axis=-1)


def _qd1(q: np.ndarray, y: np.ndarray, a: np.ndarray) -> np.ndarray:
    return 2 * y @ (q @ np.concatenate([[0.0], a]))


def _qd2(q: np.ndarray, a: np.ndarray, b: np.ndarray) -> float:
    return float(2 * np.concatenate([[0.0], a]) @ q @ np.concatenate([[0.0], b]))


class Moments:
    """A cache of :class:`PairMoments` by (m_e, m_f)."""

    def __init__(self) -> None:
        self._pairs: dict[tuple[float, float], PairMoments] = {}

    def __call__(self, pair: tuple[float, float]) -> PairMoments:
        if pair not in self._pairs:
            self._pairs[pair] = PairMoments(*pair)
        return self._pairs[pair]


MOMENTS = Moments()


def loop_jets(amp: Amplitude, x: np.ndarray, order: int, skip: tuple[int, ...] = (),
              ) -> dict[tuple[int, tuple[float, float]], np.ndarray]:
    """LOOP-free Lambda jets (3, order + 1, n) for every (variable, pair) of the loops."""
    keys = sorted({(t.var, t.pair) for t in amp.loops if t.var not in skip})
    return {key: MOMENTS(key[1]).jets(x[:, key[0] - 1], order) for key in keys}


def evaluate(amp: Amplitude, x: np.ndarray, lecs: np.ndarray | None = None) -> np.ndarray:
    """F^4 T^(4) at points x = (s, t, u) (n, 3), complex above thresholds (up to linear terms).

    ``lecs`` = (L1, L2, L3) at the amplitude's scale, default zero.
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    y = _y(x)
    out = _qval(amp.poly, y).astype(complex)
    if lecs is not None:
        out = out + _qval(np.tensordot(np.asarray(lecs, dtype=float), amp.lec, 1), y)
    for term in amp.loops:
        z = x[:, term.var - 1]
        vals = np.empty(len(z), dtype=complex)
        pm = MOMENTS(term.pair)
        below = z < pm.threshold
        if below.any():
            vals[below] = pm.jets(z[below], 0)[term.n, 0]
        if (~below).any():
            vals[~below] = pm.complex_values(z[~below])[term.n]
        out = out + _qval(term.quad, y) * LOOP * vals
    return out


def second(amp: Amplitude, x: np.ndarray, a: np.ndarray,
           jets: dict[tuple[int, tuple[float, float]], np.ndarray]) -> np.ndarray:
    """D^2 [F^4 T^(4)][a, a] at L = 0, points x (n, 3), exact (Leibniz rule)."""
    y = _y(x)
    out = np.full(len(x), _qd2(amp.poly, a, a))
    for term in amp.loops:
        av = a[term.var - 1]
        q2 = _qd2(term.quad, a, a)
        if av == 0 and q2 == 0:
            continue
        j = LOOP * jets[(term.var, term.pair)][term.n]
        out = out + (q2 * j[0] + 2 * _qd1(term.quad, y, a) * j[1] * av
                     + _qval(term.quad, y) * j[2] * av**2)
    return out


def third_mixed(amp: Amplitude, x: np.ndarray, a: np.ndarray, b: np.ndarray,
                jets: dict[tuple[int, tuple[float, float]], np.ndarray]) -> np.ndarray:
    """D^3 [F^4 T^(4)][a, a, b] at points x (n, 3), exact; L-independent (quadratic)."""
    y = _y(x)
    out = np.zeros(len(x))
    for term in amp.loops:
        q = term.quad
        av, bv = a[term.var - 1], b[term.var - 1]
        if av == 0 and _qd2(q, a, a) == 0:
            continue
        j = LOOP * jets[(term.var, term.pair)][term.n]
        pv, pa, pb = _qval(q, y), _qd1(q, y, a), _qd1(q, y, b)
        out = out + (2 * _qd2(q, a, b) * j[1] * av + _qd2(q, a, a) * j[1] * bv
                     + 2 * pa * j[2] * av * bv + pb * j[2] * av**2 + pv * j[3] * av**2 * bv)
    return out


def lec_normal(amp: Amplitude, a: np.ndarray) -> np.ndarray:
    """D^2 of the L1, L2, L3 polynomials along a: the normal of the bound in (L1, L2, L3)."""
    return np.array([_qd2(amp.lec[i], a, a) for i in range(3)])
