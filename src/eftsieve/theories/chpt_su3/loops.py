"""Unequal-mass one-loop two-point functions with exact derivatives, for SU(3) ChPT.

The s-channel bubble of two mesons of masses m_e, m_f reduces (Feynman parameter x,
see docs/physics_su3.md) to the three moments

    Lambda_n(s) = int_0^1 dx x^n ln D(x, s),   D = m_e^2 (1 - x) + m_f^2 x - x (1 - x) s,

n = 0, 1, 2, real for s below the threshold (m_e + m_f)^2.  Lambda_0 is the usual
two-point function: 16 pi^2 Jbar(s) = Lambda_0(0) - Lambda_0(s), with Jbar of Gasser &
Leutwyler, Nucl. Phys. B250 (1985) 465, App. A (Jbar(s) = -(1/16 pi^2) int dx ln(D/D0)).

Evaluation (every result is an analytic formula, no finite differences):

* |s| < R_SERIES (m_e + m_f)^2: the Taylor series ln D = ln D0 + ln(1 - s x(1-x)/D0),
  Lambda_n = int x^n ln D0 - sum_k (s^k / k) int x^n (x(1-x)/D0)^k, whose radius of
  convergence is the threshold; the x-moments are smooth and integrated by Gauss-Legendre.
* elsewhere: Lambda_0 in closed form through I0 = int_0^1 dx / D (elementary: log or
  arctan), its derivatives from the exact first-order differential equation it obeys,
  and Lambda_1, Lambda_2 from the exact integration-by-parts identities

    2 s Lambda_1 = m_f^2 ln m_f^2 - m_e^2 ln m_e^2 - (a + b) - b Lambda_0,
    3 s Lambda_2 = m_f^2 ln m_f^2 - 2 b Lambda_1 - m_e^2 Lambda_0 - 2 s/3 - b/2,

  a = s, b = m_f^2 - m_e^2 - s (docs/physics_su3.md derives them).  For equal masses the
  closed form of :mod:`eftsieve.theories.loops` is reused for Lambda_0.

Derivatives are carried as *jets* f, f', f'', ... (arrays of shape (order + 1, n)).
The tests compare every function and derivative with mpmath quadrature of the
Feynman-parameter integrals.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from eftsieve.theories import loops

#: the series is used for |s| below this fraction of the threshold (radius of convergence 1)
R_SERIES = 0.5
_N_SERIES = 64
_N_GAUSS = 256


def jet_mul(f: np.ndarray, g: np.ndarray) -> np.ndarray:
    """Jet of f g from the jets of f and g (Leibniz rule)."""
    out = np.zeros(np.broadcast_shapes(f.shape, g.shape), dtype=np.result_type(f, g))
    for n in range(out.shape[0]):
        for k in range(n + 1):
            out[n] = out[n] + math.comb(n, k) * f[k] * g[n - k]
    return out


def jet_div(f: np.ndarray, g: np.ndarray) -> np.ndarray:
    """Jet of f / g (g nonzero), by the recursion h^(n) = (f^(n) - sum C(n,k) g^(k) h^(n-k))/g."""
    shape = np.broadcast_shapes(f.shape, g.shape)
    out = np.zeros(shape, dtype=np.result_type(f, g))
    for n in range(shape[0]):
        acc = np.broadcast_to(f[n], shape[1:]).astype(out.dtype)
        for k in range(1, n + 1):
            acc = acc - math.comb(n, k) * g[k] * out[n - k]
        out[n] = acc / g[0]
    return out


def jet_var(s: np.ndarray, order: int) -> np.ndarray:
    """Jet of the identity function at s: (s, 1, 0, ...)."""
    out = np.zeros((order + 1,) + s.shape, dtype=s.dtype)
    out[0] = s
    if order >= 1:
        out[1] = 1.0
    return out


def jet_const(c: float | np.ndarray, like: np.ndarray) -> np.ndarray:
    """Jet of a constant, shaped like ``like``."""
    out = np.zeros_like(like)
    out[0] = c
    return out


@lru_cache(maxsize=1)
def _gauss_unit() -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on (0, 1), computed once (leggauss is slow)."""
    x, w = np.polynomial.legendre.leggauss(_N_GAUSS)
    return 0.5 * (x + 1.0), 0.5 * w


class PairMoments:
    """Lambda_n(s), n = 0, 1, 2, of one meson pair (masses in any common unit).

    Parameters
    ----------
    m_e, m_f
        The masses at x = 0 and x = 1 of the Feynman parameter.
    """

    def __init__(self, m_e: float, m_f: float) -> None:
        self.m_e, self.m_f = float(m_e), float(m_f)
        self.me2, self.mf2 = self.m_e**2, self.m_f**2
        self.threshold = (self.m_e + self.m_f) ** 2
        self.equal = math.isclose(self.m_e, self.m_f, rel_tol=1e-14)
        x, w = _gauss_unit()
        d0 = self.me2 * (1 - x) + self.mf2 * x
        ratio = x * (1 - x) / d0 * self.threshold          # <= 1 on [0, 1]
        k = np.arange(1, _N_SERIES + 1)
        powers = ratio[None, :] ** k[:, None]                       # (K, x)
        self._const = np.array([w @ (x**n * np.log(d0)) for n in range(3)])
        #: mom[n, k-1] = threshold^k int x^n (x(1-x)/D0)^k
        self._mom = np.array([(powers * (w * x**n)[None, :]).sum(axis=1) for n in range(3)])

    # ---- series ---------------------------------------------------------------
    def _series(self, s: np.ndarray, order: int) -> np.ndarray:
        """Jets (3, order + 1, n) from the Taylor series in z = s/threshold (|z| < 1)."""
        k = np.arange(1, _N_SERIES + 1, dtype=float)
        z = s / self.threshold
        out = np.zeros((3, order + 1) + s.shape)
        for n in range(3):
            coef = -self._mom[n] / k                          # coefficient of z^k
            for d in range(order + 1):
                c = coef.copy()
                for i in range(d):
                    c = c * (k - i)
                c = c[k >= d]                                   # z^(k - d), k = d..N
                acc = np.zeros_like(s)
                for ci in c[::-1]:                              # Horner in z
                    acc = acc * z + ci
                if d == 0:
                    acc = acc * z                               # the series starts at z^1
                out[n, d] = acc / self.threshold**d
            out[n, 0] = out[n, 0] + self._const[n]
        return out

    # ---- closed form ------------------------------------------------------------
    def lambda0_value(self, s: np.ndarray) -> np.ndarray:
        """Lambda_0(s) in closed form, real s < threshold, s != 0."""
        if self.equal:
            return math.log(self.me2) - loops.jbar(s / self.me2).real
        a = s
        b = self.mf2 - self.me2 - s
        c = self.me2
        lam = b * b - 4 * a * c
        i0 = np.empty_like(s)
        pos = lam > 0
        r = np.sqrt(np.abs(lam))
        rp, bp, ap = r[pos], b[pos], a[pos]
        ratio = (2 * ap + bp - rp) * (bp + rp) / ((2 * ap + bp + rp) * (bp - rp))
        i0[pos] = np.log(np.abs(ratio)) / rp
        neg = ~pos
        rn, bn, an = r[neg], b[neg], a[neg]
        i0[neg] = 2.0 / rn * (np.arctan((2 * an + bn) / rn) - np.arctan(bn / rn))
        big_l = math.log(self.mf2 / self.me2)
        return math.log(self.mf2) - 2 + b * big_l / (2 * a) - i0 * lam / (2 * a)

    def _closed(self, s: np.ndarray, order: int) -> np.ndarray:
        """Jets (3, order + 1, n) away from s = 0 (ODE recursion and identities)."""
        sj = jet_var(s, order)
        a = sj
        b = jet_const(self.mf2 - self.me2, sj) - sj
        c = jet_const(self.me2, sj)
        lam0 = np.zeros((order + 1,) + s.shape)
        lam0[0] = self.lambda0_value(s)
        if self.equal:
            w = s / self.me2
            jd = loops.jbar_derivatives(w, order)
            for n in range(order + 1):
                lam0[n] = -jd[n] / self.me2**n
            lam0[0] = math.log(self.me2) - jd[0]
        elif order >= 1:
            lam0 = self._ode_jet(s, lam0, a, b, c, order)
        lmf = self.mf2 * math.log(self.mf2)
        lme = self.me2 * math.log(self.me2)
        ab = jet_const(self.mf2 - self.me2, sj)
        lam1 = jet_div(jet_const(lmf - lme, sj) - ab - jet_mul(b, lam0), 2 * a)
        num2 = (jet_const(lmf, sj) - 2 * jet_mul(b, lam1) - jet_mul(c, lam0)
                - 2 * a / 3 - b / 2)
        lam2 = jet_div(num2, 3 * a)
        return np.stack([lam0, lam1, lam2])

    def _ode_jet(self, s: np.ndarray, lam0: np.ndarray, a: np.ndarray, b: np.ndarray,
                 c: np.ndarray, order: int) -> np.ndarray:
        """Derivatives of Lambda_0 from Lambda_0' = R1 + R2 Lambda_0 (rational R1, R2).

        With X = ((a + b) b - 2 a c)/(a lam), lam = b^2 - 4 a c, L = ln(m_f^2/m_e^2) and
        K = ln m_f^2 - 2 + b L/(2a):  R2 = -X,  R1 = -(a + b) L/(2 a^2) + 1/a + K X.
        """
        big_l = math.log(self.mf2 / self.me2)
        ab = self.mf2 - self.me2
        lam = jet_mul(b, b) - 4 * jet_mul(a, c)
        x_num = ab * b - 2 * jet_mul(a, c)
        x = jet_div(x_num, jet_mul(a, lam))
        kk = jet_const(math.log(self.mf2) - 2, a) + jet_div(big_l * b, 2 * a)
        one = jet_const(1.0, a)
        r1 = (jet_div(jet_const(-ab * big_l / 2, a), jet_mul(a, a)) + jet_div(one, a)
              + jet_mul(kk, x))
        r2 = -x
        out = lam0.copy()
        for n in range(order):
            acc = r1[n].copy()
            for k in range(n + 1):
                acc = acc + math.comb(n, k) * r2[k] * out[n - k]
            out[n + 1] = acc
        return out

    # ---- public -----------------------------------------------------------------
    def jets(self, s: np.ndarray | float, order: int) -> np.ndarray:
        """Lambda_n^(d)(s) for n = 0, 1, 2 and d = 0..order, shape (3, order + 1, len(s)).

        Real s strictly below the threshold (m_e + m_f)^2; raises ValueError otherwise.
        """
        s = np.atleast_1d(np.asarray(s, dtype=float))
        if np.any(s >= self.threshold):
            raise ValueError(f"PairMoments.jets is for s below the threshold {self.threshold:g}")
        out = np.empty((3, order + 1) + s.shape)
        inner = np.abs(s) < R_SERIES * self.threshold
        if inner.any():
            out[:, :, inner] = self._series(s[inner], order)
        if (~inner).any():
            out[:, :, ~inner] = self._closed(s[~inner], order)
        return out

    def complex_values(self, s: np.ndarray | float) -> np.ndarray:
        """Lambda_n(s + i0), n = 0, 1, 2, for any real s (complex above threshold), (3, n).

        Uses 16 pi^2 Jbar in closed form (:func:`jbar_unequal`) and the identities above.
        """
        s = np.atleast_1d(np.asarray(s, dtype=float))
        if np.any(s == 0):
            raise ValueError("complex_values needs s != 0 (use jets at s = 0)")
        lam0 = self._const[0] - jbar_unequal(s, self.m_e, self.m_f)
        b = self.mf2 - self.me2 - s
        lmf, lme = self.mf2 * math.log(self.mf2), self.me2 * math.log(self.me2)
        lam1 = (lmf - lme - (self.mf2 - self.me2) - b * lam0) / (2 * s)
        lam2 = (lmf - 2 * b * lam1 - self.me2 * lam0 - 2 * s / 3 - b / 2) / (3 * s)
        return np.stack([lam0, lam1, lam2])


def jbar_unequal(s: np.ndarray | float, m1: float, m2: float) -> np.ndarray:
    """16 pi^2 Jbar(s; m1, m2) on the physical sheet (s + i0), complex above threshold.

    Closed form of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, App. A (from memory;
    verified against quadrature of the Feynman-parameter integral in the tests), with
    Delta = m1^2 - m2^2, Sigma = m1^2 + m2^2, nu^2 = (s - (m1 + m2)^2)(s - (m1 - m2)^2):

        32 pi^2 Jbar = 2 + (Delta/s - Sigma/Delta) ln(m2^2/m1^2)
                        - (nu/s) ln[((s + nu)^2 - Delta^2)/((s - nu)^2 - Delta^2)],

    continued with nu -> i|nu| between pseudo-threshold and threshold; above threshold
    the logarithm is ln|...| - 2 pi i (s + i0), so Im 16 pi^2 Jbar = pi nu/s.  Equal
    masses fall back to :func:`eftsieve.theories.loops.jbar`.  At s = 0 it returns 0.
    """
    s = np.atleast_1d(np.asarray(s, dtype=float))
    if math.isclose(m1, m2, rel_tol=1e-14):
        return loops.jbar(s / m1**2)
    d, sig = m1**2 - m2**2, m1**2 + m2**2
    out = np.zeros(s.shape, dtype=complex)
    nz = s != 0
    sz = s[nz]
    nu2 = (sz - (m1 + m2) ** 2) * (sz - (m1 - m2) ** 2)
    term = np.zeros(sz.shape, dtype=complex)          # (nu/s) ln[...]
    real = nu2 >= 0
    nu = np.sqrt(np.abs(nu2))
    sr, nr = sz[real], nu[real]
    log = np.log(np.abs(((sr + nr) ** 2 - d**2) / ((sr - nr) ** 2 - d**2))).astype(complex)
    # above threshold the s + i0 prescription winds the logarithm by -2 pi i
    log = np.where(sr > (m1 + m2) ** 2, log - 2j * np.pi, log)
    term[real] = nr / sr * log
    # between pseudo-threshold and threshold nu = i|nu|, z = (s + i|nu|)^2 - Delta^2 has
    # Im z > 0 and ln(z/conj z) = 2i (arg z - pi): the branch that vanishes at the
    # pseudo-threshold (z < 0 there), continuous with the real-nu side
    im = ~real
    si, ni = sz[im], nu[im]
    theta = np.arctan2(2 * si * ni, si**2 - ni**2 - d**2) - np.pi
    term[im] = -2 * ni * theta / si
    out[nz] = 0.5 * (2 + (d / sz - sig / d) * math.log(m2**2 / m1**2) - term)
    return out
