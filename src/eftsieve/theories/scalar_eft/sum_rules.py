"""Exact derivation of the scalar-EFT sum rules and null constraints (``scalar-eft``).

Everything here is rational arithmetic (:class:`fractions.Fraction`); no floating point
enters the sum rules themselves.  In the notation of :mod:`eftsieve.theories.scalar_eft.theory`
(x = -s u, j = J(J+1), heavy mass m, couplings g{D}, g{D}p, ... of S2^a S3^b):

* :func:`legendre_forward_coefficient` gives [t^k] P_J(1 + 2t) as a polynomial in j,
  from the hypergeometric form P_J(1 + 2t) = 2F1(-J, J+1; 1; -t);
* :func:`heavy_coefficient` combines it with the heavy kernel (2 + t)(1 + t)^-(n+1) into
  h_{n,q}(j) = [x^n t^q] of one heavy state at m = 1, so that
  [x^n t^q] M_low = < h_{n,q}(J) / m^(2(2n+q+1)) >;
* :func:`derive_sum_rules` expands each S2^a S3^b in (x, t) (S2 = 2(x + t^2), S3 = -x t),
  and at each Mandelstam degree D = 2n + q solves the floor(D/2) rows for the couplings by
  exact Gauss-Jordan elimination; the left null space of the system gives the null
  constraints < v(j) / m^(2D+2) > = 0, scaled to coprime integers.

The results are :class:`SumRule` s, collected by degree in :class:`SumRules`, which also
turn them into :class:`~eftsieve.bounds.sum_rules.StatePolynomial` s for the LP.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np

from eftsieve.bounds.sum_rules import StatePolynomial

Poly = tuple[Fraction, ...]  # a polynomial in j = J(J+1), lowest power first


# ---- exact polynomial algebra ------------------------------------------------------------
def _pmul(a: Poly, b: Poly) -> Poly:
    out = [Fraction(0)] * (len(a) + len(b) - 1)
    for i, u in enumerate(a):
        for k, v in enumerate(b):
            out[i + k] += u * v
    return tuple(out)


def _padd(a: Poly, b: Poly, f: Fraction = Fraction(1)) -> Poly:
    n = max(len(a), len(b))
    return tuple((a[i] if i < len(a) else 0) + f * (b[i] if i < len(b) else 0)
                 for i in range(n))


@functools.cache
def legendre_forward_coefficient(k: int) -> Poly:
    """[t^k] P_J(1 + 2t) as a polynomial in j = J(J+1): prod_{i<k} (j - i(i+1)) / (k!)^2.

    From P_J(z) = 2F1(-J, J+1; 1; (1 - z)/2), the hypergeometric form of the Legendre
    polynomial (DLMF Eq. 18.5.7 with alpha = beta = 0, from memory), since
    (-J)_k (J+1)_k (-1)^k = prod_{i<k} (j - i(i+1)).  Tested against scipy.
    """
    p: Poly = (Fraction(1),)
    for i in range(k):
        p = _pmul(p, (Fraction(-i * (i + 1)), Fraction(1)))
    return tuple(c / math.factorial(k) ** 2 for c in p)


def _kernel_coefficient(n: int, q: int) -> Fraction:
    """[t^q] (2 + t) (1 + t)^-(n+1) (the heavy kernel at m = 1)."""
    def b(k: int) -> Fraction:
        return Fraction((-1) ** k * math.comb(n + k, k)) if k >= 0 else Fraction(0)
    return 2 * b(q) + b(q - 1)


@functools.cache
def heavy_coefficient(n: int, q: int) -> Poly:
    """h_{n,q}(j): [x^n t^q] of one heavy state at m = 1 (times 1/m^(2(2n+q+1)) in general)."""
    out: Poly = (Fraction(0),)
    for k in range(q + 1):
        out = _padd(out, legendre_forward_coefficient(k), _kernel_coefficient(n, q - k))
    return out


def low_energy_basis(degree: int) -> list[tuple[int, int]]:
    """Exponents (a, b) of S2^a S3^b with 2a + 3b = degree, a decreasing."""
    return [(a, (degree - 2 * a) // 3) for a in range(degree // 2, -1, -1)
            if (degree - 2 * a) % 3 == 0]


def coupling_names(degree: int) -> list[str]:
    """g{D}, g{D}p, g{D}pp, ... for the basis of :func:`low_energy_basis`."""
    return [f"g{degree}" + "p" * i for i in range(len(low_energy_basis(degree)))]


def _monomial_xt(a: int, b: int) -> dict[tuple[int, int], Fraction]:
    """S2^a S3^b in (x, t), x = -s u: S2 = 2(x + t^2), S3 = -x t.  Keys (power of x, of t)."""
    out: dict[tuple[int, int], Fraction] = {}
    for i in range(a + 1):  # (x + t^2)^a
        key = (i + b, 2 * (a - i) + b)
        out[key] = out.get(key, Fraction(0)) + Fraction(2**a * math.comb(a, i) * (-1) ** b)
    return out


def _rref(m: list[list[Fraction]]) -> tuple[list[list[Fraction]], list[int]]:
    r = [row[:] for row in m]
    piv: list[int] = []
    for col in range(len(r[0]) if r else 0):
        k = next((i for i in range(len(piv), len(r)) if r[i][col] != 0), None)
        if k is None:
            continue
        i0 = len(piv)
        r[i0], r[k] = r[k], r[i0]
        r[i0] = [v / r[i0][col] for v in r[i0]]
        for i in range(len(r)):
            if i != i0 and r[i][col] != 0:
                f = r[i][col]
                r[i] = [u - f * v for u, v in zip(r[i], r[i0], strict=True)]
        piv.append(col)
    return r, piv


def _integer_normalised(p: Poly) -> Poly:
    """p scaled to coprime integers with a positive leading coefficient."""
    lcm = math.lcm(*[c.denominator for c in p])
    ints = [int(c * lcm) for c in p]
    g = math.gcd(*ints) * (1 if [v for v in ints if v][-1] > 0 else -1)
    return tuple(Fraction(v, g) for v in ints)


# ---- sum rules and null constraints to any order -------------------------------------------
@dataclass(frozen=True)
class SumRule:
    """One heavy average: g = < r(j) / m^(2D+2) > for a coupling, or = 0 for a null constraint.

    Attributes
    ----------
    name
        ``g3``, ``g6p``, ... or ``n4``, ``n7_1``, ...
    degree
        The Mandelstam degree D.
    polynomial
        r(j) (lowest power of j = J(J+1) first), exact.
    """

    name: str
    degree: int
    polynomial: Poly

    def state_polynomial(self, label: str | None = None) -> StatePolynomial:
        """y^(D-2) r(j): the average normalised by the g2 sum rule, with y = M^2/m^2."""
        e = self.degree - 2
        if len(self.polynomial) > e + 1:
            raise ValueError(f"{self.name}: j-degree exceeds D - 2 (fixed-b limit would diverge)")
        rows = [tuple(Fraction(0) for _ in range(k + 1)) for k in range(e)]
        rows.append(tuple(self.polynomial) + (Fraction(0),) * (e + 1 - len(self.polynomial)))
        return StatePolynomial(tuple(rows), label or self.name)

    def value(self, spin: np.ndarray) -> np.ndarray:
        """r(J(J+1)) for an array of spins."""
        j = np.asarray(spin, dtype=float) * (np.asarray(spin, dtype=float) + 1.0)
        return np.polynomial.polynomial.polyval(j, [float(c) for c in self.polynomial])

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "degree": self.degree,
                "polynomial_in_J(J+1)": [str(c) for c in self.polynomial]}


@dataclass(frozen=True)
class SumRules:
    """All sum rules up to a Mandelstam degree.

    Attributes
    ----------
    order
        The highest degree D included.
    couplings
        One sum rule per low-energy coupling (degree 2 .. order).
    nulls
        The null constraints (degree 4 .. order).
    """

    order: int
    couplings: tuple[SumRule, ...]
    nulls: tuple[SumRule, ...]

    def coupling(self, name: str) -> SumRule:
        for c in self.couplings:
            if c.name == name:
                return c
        raise KeyError(f"no coupling '{name}' up to degree {self.order}")

    def projective(self, name: str) -> StatePolynomial:
        """The coordinate ``name`` (``g3t``, ...) as a polynomial on the states."""
        return self.coupling(name[:-1]).state_polynomial(name)

    def null_polynomials(self) -> tuple[StatePolynomial, ...]:
        return tuple(n.state_polynomial() for n in self.nulls)

    def to_dict(self) -> dict[str, Any]:
        return {"order": self.order, "couplings": [c.to_dict() for c in self.couplings],
                "nulls": [n.to_dict() for n in self.nulls]}


def _degree_system(degree: int) -> tuple[list[list[Fraction]], list[Poly]]:
    """Rows [x^n t^q] (n = D//2 .. 1) of the low-energy basis, and the heavy side."""
    rows = [(n, degree - 2 * n) for n in range(degree // 2, 0, -1)]
    mons = [_monomial_xt(a, b) for a, b in low_energy_basis(degree)]
    a = [[m.get(nq, Fraction(0)) for m in mons] for nq in rows]
    return a, [heavy_coefficient(n, q) for n, q in rows]


def _combine(weights: list[Fraction], polys: list[Poly]) -> Poly:
    out: Poly = (Fraction(0),)
    for w, p in zip(weights, polys, strict=True):
        out = _padd(out, p, w)
    while len(out) > 1 and out[-1] == 0:
        out = out[:-1]
    return out


def _degree_rules(degree: int) -> tuple[list[SumRule], list[SumRule]]:
    """Couplings and null constraints of one degree by exact elimination."""
    a, heavy = _degree_system(degree)
    nrow, ncol = len(a), len(a[0])
    at, piv_rows = _rref([[a[r][c] for r in range(nrow)] for c in range(ncol)])
    free = [r for r in range(nrow) if r not in piv_rows]
    nulls = []
    for k, fr in enumerate(free):  # v^T A = 0
        v = [Fraction(0)] * nrow
        v[fr] = Fraction(1)
        for i, pr in enumerate(piv_rows):
            v[pr] = -at[i][fr]
        name = f"n{degree}" if len(free) == 1 else f"n{degree}_{k + 1}"
        nulls.append(SumRule(name, degree, _integer_normalised(_combine(v, heavy))))
    sq = [a[r] + [Fraction(int(i == k)) for k in range(ncol)] for i, r in enumerate(piv_rows)]
    inv, _ = _rref(sq)  # [I | A_P^-1]
    couplings = [SumRule(name, degree, _combine([inv[c][ncol + i] for i in range(ncol)],
                                                [heavy[r] for r in piv_rows]))
                 for c, name in enumerate(coupling_names(degree))]
    return couplings, nulls


@functools.cache
def derive_sum_rules(order: int) -> SumRules:
    """Every coupling sum rule and null constraint up to Mandelstam degree ``order`` (>= 3)."""
    if order < 3:
        raise ValueError("the order must be at least 3 (g3 needs the degree-3 sum rule)")
    couplings: list[SumRule] = []
    nulls: list[SumRule] = []
    for d in range(2, order + 1):
        c, n = _degree_rules(d)
        couplings += c
        nulls += n
    return SumRules(order, tuple(couplings), tuple(nulls))
