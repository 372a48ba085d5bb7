"""The one-loop pi-pi amplitude of SU(2) ChPT, in a form that can be differentiated exactly.

Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (17.5) (also Eqs. (2.3)-(2.5) of
Bijnens et al., arXiv:hep-ph/9511397), in terms of the physical M = M_pi, F = F_pi:

    A(s,t,u) = (s - M^2)/F^2 + B(s,t,u) + C(s,t,u) + O(p^6),
    B = [3 (s^2 - M^4) Jbar(s) + (t(t-u) - 2M^2 t + 4M^2 u - 2M^4) Jbar(t) + (t<->u)] / (6F^4),
    C = [2 (lbar1 - 4/3)(s - 2M^2)^2 + (lbar2 - 5/6)(s^2 + (t-u)^2)
         + 12 M^2 s (lbar4 - 1) - 3 M^4 (lbar3 + 4 lbar4 - 5)] / (96 pi^2 F^4).

Everything here is in units of M (s, t, u in M^2, F in M).  The amplitude is stored as
a polynomial plus a sum of (quadratic polynomial) x Jbar(one Mandelstam variable), so
that any directional derivative is exact (Leibniz rule on analytic pieces).

Isospin amplitudes: T^0 = 3A(s,t,u) + A(t,s,u) + A(u,t,s), T^1 = A(t,s,u) - A(u,t,s),
T^2 = A(t,s,u) + A(u,t,s).  The elastic process |a b> -> |a b> for isospin vectors
a, b in C^3 has T = x1 A(s,t,u) + A(t,s,u) + x2 A(u,t,s) with x1 = |a.b|^2,
x2 = |a.conj(b)|^2 (see docs/physics.md).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from eftsieve.theories.loops import jbar, jbar_derivatives

S, T, U = 0, 1, 2
LOOP = 1.0 / (16 * math.pi**2)   # Jbar = LOOP * j(w)
CT = 1.0 / (96 * math.pi**2)     # prefactor of C


@dataclass(frozen=True)
class Quadratic:
    """p(x) = c0 + lin . x + x^T quad x for x = (s, t, u); exact derivatives.

    Attributes
    ----------
    c0, lin, quad
        Constant, linear (3,) and symmetric quadratic (3, 3) coefficients.
    """

    c0: float
    lin: tuple[float, ...]
    quad: tuple[tuple[float, ...], ...]
    _lin: np.ndarray = field(init=False, repr=False, compare=False)
    _q: np.ndarray = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_lin", np.asarray(self.lin, dtype=float))
        object.__setattr__(self, "_q", np.asarray(self.quad, dtype=float))

    @staticmethod
    def from_terms(terms: dict[tuple[int, ...], float]) -> Quadratic:
        """From monomials: () const, (i,) linear, (i, j) quadratic x_i x_j."""
        c0, lin, q = 0.0, np.zeros(3), np.zeros((3, 3))
        for key, c in terms.items():
            if len(key) == 0:
                c0 += c
            elif len(key) == 1:
                lin[key[0]] += c
            else:
                i, j = key
                q[i, j] += c / 2
                q[j, i] += c / 2
        return Quadratic(c0, (lin[0], lin[1], lin[2]), tuple(map(tuple, q)))

    def permuted(self, perm: tuple[int, int, int]) -> Quadratic:
        """The polynomial with its arguments permuted: p'(x) = p(x[perm])."""
        inv = np.argsort(perm)
        lin = np.asarray(self.lin)[inv]
        q = np.asarray(self.quad)[np.ix_(inv, inv)]
        return Quadratic(self.c0, tuple(lin), tuple(map(tuple, q)))

    def value(self, x: np.ndarray) -> np.ndarray:
        q = self._q
        return self.c0 + x @ self._lin + ((x @ q) * x).sum(axis=-1)

    def d1(self, x: np.ndarray, a: np.ndarray) -> np.ndarray:
        return a @ self._lin + 2 * x @ (self._q @ a)

    def d2(self, a: np.ndarray, b: np.ndarray) -> float:
        return float(2 * a @ self._q @ b)


@dataclass(frozen=True)
class LoopTerm:
    """poly(s, t, u) * LOOP * j(x_var / M^2)."""

    poly: Quadratic
    var: int


@dataclass(frozen=True)
class Amplitude:
    """F^4 times an O(p^4) amplitude: polynomial + sum of loop terms (units M = 1)."""

    poly: Quadratic
    loops: tuple[LoopTerm, ...]

    def permuted(self, perm: tuple[int, int, int]) -> Amplitude:
        # J(y_var) with y = x[perm] is J(x_perm[var])
        return Amplitude(self.poly.permuted(perm),
                         tuple(LoopTerm(t.poly.permuted(perm), perm[t.var]) for t in self.loops))

    def scaled(self, c: float) -> Amplitude:
        def sc(p: Quadratic) -> Quadratic:
            return Quadratic(c * p.c0, tuple(c * v for v in p.lin),
                             tuple(tuple(c * v for v in r) for r in p.quad))
        return Amplitude(sc(self.poly), tuple(LoopTerm(sc(t.poly), t.var) for t in self.loops))


def add(*amps: Amplitude) -> Amplitude:
    """Sum of amplitudes (polynomials added, loop terms concatenated)."""
    c0 = sum(a.poly.c0 for a in amps)
    lin = tuple(np.sum([a.poly.lin for a in amps], axis=0))
    quad = tuple(map(tuple, np.sum([a.poly.quad for a in amps], axis=0)))
    loops = tuple(t for a in amps for t in a.loops)
    return Amplitude(Quadratic(float(c0), lin, quad), loops)


def a_stu(lbar: tuple[float, float, float, float]) -> Amplitude:
    """F^4 [B + C](s,t,u) at O(p^4) (units M = 1), Gasser & Leutwyler (1984) Eq. (17.5)."""
    l1, l2, l3, l4 = lbar
    poly = Quadratic.from_terms({
        # 2 (l1 - 4/3) (s - 2)^2
        (S, S): CT * 2 * (l1 - 4 / 3), (S,): CT * 2 * (l1 - 4 / 3) * (-4),
        (): CT * (2 * (l1 - 4 / 3) * 4 - 3 * (l3 + 4 * l4 - 5)),
    })
    poly2 = Quadratic.from_terms({
        # (l2 - 5/6) (s^2 + (t - u)^2) + 12 s (l4 - 1)
        (S, S): CT * (l2 - 5 / 6), (T, T): CT * (l2 - 5 / 6), (U, U): CT * (l2 - 5 / 6),
        (T, U): CT * (l2 - 5 / 6) * (-2), (S,): CT * 12 * (l4 - 1),
    })
    polys = add(Amplitude(poly, ()), Amplitude(poly2, ()))
    f = 1.0 / 6  # LOOP is applied with Jbar itself
    js = Quadratic.from_terms({(S, S): 3 * f, (): -3 * f})
    # t(t - u) - 2t + 4u - 2
    jt = Quadratic.from_terms({(T, T): f, (T, U): -f, (T,): -2 * f, (U,): 4 * f, (): -2 * f})
    ju = Quadratic.from_terms({(U, U): f, (T, U): -f, (U,): -2 * f, (T,): 4 * f, (): -2 * f})
    return Amplitude(polys.poly, (LoopTerm(js, S), LoopTerm(jt, T), LoopTerm(ju, U)))


#: the permutations giving A(t,s,u) and A(u,t,s) from A(s,t,u)
PERM_T = (1, 0, 2)
PERM_U = (2, 1, 0)


def channel_amplitude(lbar: tuple[float, float, float, float], x1: float, x2: float) -> Amplitude:
    """F^4 [x1 A(s,t,u) + A(t,s,u) + x2 A(u,t,s)] at O(p^4)."""
    a = a_stu(lbar)
    return add(a.scaled(x1), a.permuted(PERM_T), a.permuted(PERM_U).scaled(x2))


def isospin_amplitude(lbar: tuple[float, float, float, float], isospin: int) -> Amplitude:
    """F^4 T^I at O(p^4) for I = 0, 1, 2."""
    a = a_stu(lbar)
    at, au = a.permuted(PERM_T), a.permuted(PERM_U)
    if isospin == 0:
        return add(a.scaled(3.0), at, au)
    if isospin == 1:
        return add(at, au.scaled(-1.0))
    if isospin == 2:
        return add(at, au)
    raise ValueError(f"isospin must be 0, 1 or 2, not {isospin}")


def evaluate(amp: Amplitude, x: np.ndarray) -> np.ndarray:
    """The O(p^4) amplitude at points x = (s, t, u) (shape (..., 3)); complex above threshold."""
    x = np.asarray(x, dtype=float)
    out = amp.poly.value(x).astype(complex)
    for term in amp.loops:
        out = out + term.poly.value(x) * LOOP * jbar(x[..., term.var])
    return out


def loop_jets(amp: Amplitude, x: np.ndarray, order: int,
              skip: tuple[int, ...] = ()) -> dict[int, np.ndarray]:
    """LOOP * d^n j/dw^n (n = 0..order) for each Mandelstam variable that the loops use."""
    used = sorted({t.var for t in amp.loops} - set(skip))
    return {v: LOOP * jbar_derivatives(x[:, v], order) for v in used}


def third_mixed(amp: Amplitude, x: np.ndarray, a: np.ndarray, b: np.ndarray,
                jets: dict[int, np.ndarray] | None = None) -> np.ndarray:
    """D^3 F[a, a, b] at points x (n, 3): exact (Leibniz rule, analytic Jbar derivatives).

    Terms whose Jbar argument is constant along a and whose polynomial is linear along a
    vanish identically and are skipped (so Jbar(t) at t = 4M^2 never enters).
    """
    out = np.zeros(len(x))  # the polynomial part is quadratic: no third derivative
    for term in amp.loops:
        p = term.poly
        av, bv = a[term.var], b[term.var]
        if av == 0 and p.d2(a, a) == 0:
            continue
        j = jets[term.var] if jets is not None else LOOP * jbar_derivatives(x[:, term.var], 3)
        pv, pa, pb = p.value(x), p.d1(x, a), p.d1(x, b)
        out = out + (2 * p.d2(a, b) * j[1] * av + p.d2(a, a) * j[1] * bv
                     + 2 * pa * j[2] * av * bv + pb * j[2] * av**2 + pv * j[3] * av**2 * bv)
    return out


def second(amp: Amplitude, x: np.ndarray, a: np.ndarray,
           jets: dict[int, np.ndarray] | None = None) -> np.ndarray:
    """D^2 F[a, a] at points x (n, 3), exact."""
    out = np.full(len(x), amp.poly.d2(a, a))
    for term in amp.loops:
        p = term.poly
        av = a[term.var]
        if av == 0:  # Jbar is constant along a
            if p.d2(a, a) != 0:
                out = out + p.d2(a, a) * LOOP * _jbar_real(x[:, term.var])
            continue
        j = jets[term.var] if jets is not None else LOOP * jbar_derivatives(x[:, term.var], 2)
        out = out + p.d2(a, a) * j[0] + 2 * p.d1(x, a) * j[1] * av + p.value(x) * j[2] * av**2
    return out


def _jbar_real(w: np.ndarray) -> np.ndarray:
    return np.real(jbar(np.minimum(w, 4.0)))


def full_amplitude(s, t, lbar, fpi_over_m: float, isospin: int | None = None,
                   channel: tuple[float, float] | None = None) -> np.ndarray:
    """The physical one-loop amplitude (tree + O(p^4)) in units M = 1, complex above threshold.

    Give either ``isospin`` (T^I) or ``channel`` = (x1, x2).
    """
    s, t = np.broadcast_arrays(np.asarray(s, dtype=float), np.asarray(t, dtype=float))
    u = 4.0 - s - t
    x = np.stack([s, t, u], axis=-1)
    f2 = fpi_over_m**2
    if isospin is not None:
        amp = isospin_amplitude(lbar, isospin)
        tree = {0: 3 * (s - 1) + (t - 1) + (u - 1), 1: t - u, 2: (t - 1) + (u - 1)}[isospin]
    elif channel is not None:
        amp = channel_amplitude(lbar, *channel)
        tree = channel[0] * (s - 1) + (t - 1) + channel[1] * (u - 1)
    else:
        raise ValueError("give isospin or channel")
    return tree / f2 + evaluate(amp, x) / f2**2
