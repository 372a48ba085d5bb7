"""The massless real scalar EFT: sum rules, null constraints and two-sided bounds (``scalar-eft``).

Low-energy amplitude (tree level in the light sector), in the normalisation of
S. Caron-Huot and V. Van Duong, "Extremal Effective Field Theories", arXiv:2011.02957,
Eq. (2.3) (equation number from memory):

    M_low(s, t) = -g^2 (1/s + 1/t + 1/u) - lambda + g2 S2 + g3 S3 + g4 S2^2 + g5 S2 S3
                  + g6 S2^3 + g6p S3^2 + ...,     S2 = s^2 + t^2 + u^2,  S3 = s t u,

with s + t + u = 0.  Couplings of Mandelstam degree D are named g{D}, g{D}p, g{D}pp for
S2^a S3^b (2a + 3b = D) with decreasing a.  Projective coordinates are
g{D}t = g{D} M^(2(D-2)) / g2 (``g3t`` = g3 M^2/g2, ``g4t`` = g4 M^4/g2).

Heavy states.  Above the gap, Im M(s, t) = sum_{J even} rho_J(s) P_J(1 + 2t/s) with
rho_J >= 0.  Writing x = -s u = s (s + t), a heavy state of mass m and spin J exchanged in
the s and u channels contributes, up to a function of t alone (the subtraction),

    a P_J(1 + 2t/m^2) [1/(m^2 - s) + 1/(m^2 - u)]
        = a P_J(1 + 2t/m^2) sum_{n >= 0} (2m^2 + t) x^n / (m^2 (m^2 + t))^(n+1).

A twice-subtracted fixed-t dispersion relation (M/s^2 -> 0 at fixed t) fixes every
coefficient of x^n, n >= 1, of M_low: expanding both sides in t at t = 0,

    [x^n t^q] M_low = < h_{n,q}(J) / m^(2(2n+q+1)) >,

where h_{n,q} is a polynomial in j = J(J+1) with rational coefficients, derived here
with exact arithmetic (:func:`heavy_coefficient`) from the hypergeometric form
P_J(1 + 2t) = 2F1(-J, J+1; 1; -t).  M_low is expanded in (x, t) from its S2, S3 form, so
full s-t-u crossing is built in; at each degree D = 2n + q there are floor(D/2) rows for
fewer couplings, and the left null space of that linear system gives the *null
constraints* < v(j) / m^(2D+2) > = 0 (:func:`derive_sum_rules`).  The first one is
<J(J+1)(J(J+1) - 8)/m^10> = 0 in this normalisation, the lowest null constraint of
arXiv:2011.02957 (Sec. 2).  The cubic-coupling poles give t/x + 1/t at fixed t and drop
out of every n >= 1 sum rule.

Physics cautions (what the bounds assume; also in docs/physics_scalar_eft.md):

* Lorentz invariance in d = 4 (Legendre polynomials, J even for identical scalars).
* Analyticity: the fixed-t dispersion relation holds for -M^2 < t <= 0 with two
  subtractions (M(s, t)/s^2 -> 0 at large |s|), and may be expanded at t = 0 under the
  heavy average.
* Unitarity: only positivity of the spectral densities (Im a_J >= 0) is used, not the
  upper bound |S_J| <= 1, so the heavy states are NOT assumed tree-level or weakly
  coupled; they may be strongly interacting.
* Crossing: full s-t-u symmetry of a single real scalar.
* Mass gap: no heavy state below M.  The light sector is taken at tree level (light
  loops, which add light cuts and modify the sum rules, are neglected).
* Truncation: sum rules and null constraints up to Mandelstam degree ``order`` are
  imposed.  The outer (dual) bounds stay valid at any order; the inner (primal) set is
  allowed only by the constraints up to that order, and higher null constraints can
  still shrink it.  The spin cut-off ``spins`` limits only the LP grid: outer facets are
  verified for all spins, J -> infinity at fixed m and at fixed impact parameter.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.bounds.sum_rules import StatePolynomial, SumRuleSolver, VerifySettings
from eftsieve.errors import InputError, SolverError
from eftsieve.region import Facet, Region
from eftsieve.theories.base import CoordinateMap, Theory

if TYPE_CHECKING:
    from eftsieve.fit import Fit

Poly = tuple[Fraction, ...]  # a polynomial in j = J(J+1), lowest power first

#: Coordinates of points with g2 <= 0 (outside: g2 > 0 is a sum rule), far beyond every facet.
OUTSIDE = 1e30
MAX_LISTED_DEGREE = 12
#: coordinates a region can be built in (higher couplings: the verification of their dual
#: functionals does not converge reliably yet, see docs/physics_scalar_eft.md)
REGION_COORDINATES = ("g3t", "g4t")


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


def _averages(rules: tuple[SumRule, ...], masses: np.ndarray, spins: np.ndarray,
              weights: np.ndarray) -> dict[str, float]:
    m2 = np.asarray(masses, dtype=float) ** 2
    a = np.asarray(weights, dtype=float)
    return {r.name: float(np.sum(a * r.value(spins) / m2 ** (r.degree + 1))) for r in rules}


def couplings_from_spectrum(rules: SumRules, masses: np.ndarray, spins: np.ndarray,
                            weights: np.ndarray) -> dict[str, float]:
    """Dimensionful couplings of M = sum_i a_i P_J(1+2t/m_i^2)[1/(m_i^2-s) + 1/(m_i^2-u)] + f(t)."""
    return _averages(rules.couplings, masses, spins, weights)


def null_residuals(rules: SumRules, masses: np.ndarray, spins: np.ndarray,
                   weights: np.ndarray) -> dict[str, float]:
    """< v(j) / m^(2D+2) > of every null constraint for a discrete spectrum (0 if consistent)."""
    return _averages(rules.nulls, masses, spins, weights)


def low_energy_amplitude(couplings: dict[str, float], s: np.ndarray, t: np.ndarray
                         ) -> np.ndarray:
    """sum_c g_c S2^a S3^b at (s, t, u = -s - t), for couplings named as :func:`coupling_names`."""
    s, t = np.asarray(s, dtype=float), np.asarray(t, dtype=float)
    u = -s - t
    s2, s3 = s**2 + t**2 + u**2, s * t * u
    out = np.zeros(np.broadcast(s, t).shape)
    for name, g in couplings.items():
        deg = int(name[1:].rstrip("p"))
        a, b = low_energy_basis(deg)[len(name) - len(name.rstrip("p"))]
        out = out + g * s2**a * s3**b
    return out


# ---- regions --------------------------------------------------------------------------------
#: ``order`` None means 10 for one coordinate and 8 for two (fast, and reliable in double
#: precision for every direction; see docs/physics_scalar_eft.md).
DEFAULTS: dict[str, Any] = {
    "order": None, "spins": 40, "coordinates": ["g3t"], "directions": 64, "mass_points": 120,
    "y_min": 1e-4, "spin_exact_max": 2000, "verify_tol": 1e-6, "max_rounds": 25,
}


def state_grid(spins: int, mass_points: int, y_min: float, spin_max: int = 2000
               ) -> tuple[np.ndarray, np.ndarray]:
    """The LP grid: y = M^2/m^2 x even J <= spins, plus sparse spins up to ``spin_max``.

    y is dense near the gap and geometric towards ``y_min``.  The sparse spins carry
    states on a log grid of w = y J(J+1) = (b M/2)^2 from 0.1 up to y = 1; they resolve the
    fixed-impact-parameter regime, where extremal functionals also touch zero.
    """
    half = mass_points // 2
    near = 1.0 - 0.5 * (np.arange(half) / half) ** 2
    far = np.geomspace(0.5, y_min, mass_points - half + 1)[1:]
    ys = np.unique(np.r_[near, far])
    yy, jj = np.meshgrid(ys, np.arange(0, spins + 1, 2), indexing="ij")
    y_out, j_out = [yy.ravel()], [jj.ravel()]
    for spin in np.unique(2 * np.round(np.geomspace(spins + 2, spin_max, 12) / 2)).astype(int):
        w = np.geomspace(0.1, spin * (spin + 1.0), 48)
        y_out.append(w / (spin * (spin + 1.0)))
        j_out.append(np.full(w.size, spin))
    return np.concatenate(y_out), np.concatenate(j_out)


def _settings(settings: dict[str, Any]) -> dict[str, Any]:
    unknown = set(settings) - set(DEFAULTS)
    if unknown:
        raise InputError(None, "settings", f"unknown region settings {sorted(unknown)}",
                         f"accepted: {', '.join(DEFAULTS)}")
    s = {**DEFAULTS, **settings}
    s["coordinates"] = [str(c) for c in s["coordinates"]]
    if s["order"] is None:
        s["order"] = 10 if len(s["coordinates"]) == 1 else 8
    try:
        for key in ("order", "spins", "directions", "mass_points", "spin_exact_max",
                    "max_rounds"):
            s[key] = int(s[key])
        s["y_min"], s["verify_tol"] = float(s["y_min"]), float(s["verify_tol"])
    except (TypeError, ValueError) as err:
        raise InputError(None, "settings", f"a region setting is not a number ({err})",
                         "give integers for order/spins/directions/..., floats otherwise"
                         ) from err
    if not (0 < s["y_min"] < 1 and 0 < s["verify_tol"] < 1e-2):
        raise InputError(None, "settings", "need 0 < y_min < 1 and 0 < verify_tol < 1e-2")
    coords = s["coordinates"]
    if not 1 <= len(coords) <= 2 or len(set(coords)) != len(coords):
        raise InputError(None, "coordinates", f"{coords}: give one or two distinct coordinates")
    for c in coords:
        deg = _degree_of(c[:-1]) or 0
        if c not in REGION_COORDINATES:
            raise InputError(None, "coordinates", f"'{c}' is not a region coordinate",
                             f"use {' and/or '.join(REGION_COORDINATES)} (higher couplings "
                             "are not supported yet)")
        if deg > s["order"]:
            raise InputError(None, "order", f"order {s['order']} is below the degree {deg} "
                             f"of {c}", f"use order >= {deg}")
    if s["order"] < 4 or s["spins"] < 2 or s["directions"] < 8 or s["mass_points"] < 8:
        raise InputError(None, "settings", "need order >= 4, spins >= 2, directions >= 8, "
                         "mass_points >= 8")
    return s


def _degree_of(name: str) -> int | None:
    body = name[1:].rstrip("p") if name.startswith("g") else ""
    return int(body) if body.isdigit() else None


def _facet(b: Any, normal: tuple[float, ...], channel: str, point: dict[str, float]) -> Facet:
    nn = float(np.linalg.norm(normal))
    extra = {"certificate": b.certificate, "verification": b.verification.to_dict(),
             "lp_value": b.lp_value, "inner_value": b.inner, "rounds": b.rounds}
    return Facet(normal, b.outer, "null-constraints", channel, point, b.outer / nn,
                 "optimal", extra)


def _inner_facet(normal: tuple[float, ...], offset: float, channel: str,
                 spectra: list[dict[str, Any]]) -> Facet:
    nn = float(np.linalg.norm(normal))
    return Facet(normal, offset, "primal-spectrum", channel, {}, offset / nn, "optimal",
                 {"spectra": spectra})


Built = tuple[list[Facet], list[Facet], list[tuple[float, ...]]]


def _one_dim(solver: SumRuleSolver) -> Built:
    """The interval: outer facets x >= lo_out, -x >= -hi_out; inner vertices lo_in, hi_in."""
    lo, hi = solver.extremize(np.array([1.0])), solver.extremize(np.array([-1.0]))
    outer = [_facet(lo, (1.0,), "direction (+1)", {}), _facet(hi, (-1.0,), "direction (-1)", {})]
    inner = [_inner_facet((1.0,), lo.inner, "direction (+1)", [lo.spectrum]),
             _inner_facet((-1.0,), hi.inner, "direction (-1)", [hi.spectrum])]
    return outer, inner, [(lo.inner_point[0],), (hi.inner_point[0],)]


def _two_dim(solver: SumRuleSolver, n_dir: int) -> Built:
    """Support functions along the axes and ``n_dir`` directions (uniform in angle after
    scaling each axis by the width of the region); inner polygon = hull of the spectra."""
    from scipy.spatial import ConvexHull, QhullError

    bounds = []
    for k in range(2):  # the axes first: they fix the scale of the directions
        for sgn in (1.0, -1.0):
            d = np.zeros(2)
            d[k] = sgn
            bounds.append(solver.extremize(d))
    width = np.array([-bounds[1].outer - bounds[0].outer, -bounds[3].outer - bounds[2].outer])
    for th in 2 * np.pi * np.arange(n_dir) / n_dir:
        d = np.array([np.cos(th), np.sin(th)]) / width
        bounds.append(solver.extremize(d / np.linalg.norm(d)))
    outer = [_facet(b, b.direction, f"direction ({b.direction[0]:.6f}, {b.direction[1]:.6f})",
                    {"angle": float(np.arctan2(b.direction[1], b.direction[0]))})
             for b in bounds]
    pts = np.array([b.inner_point for b in bounds])
    try:
        hull = ConvexHull(pts)
    except QhullError as err:
        raise SolverError("degenerate-inner", "convex hull of the primal points") from err
    verts = [tuple(float(v) for v in pts[i]) for i in hull.vertices]
    inner = []
    for k, (eq, simplex) in enumerate(zip(hull.equations, hull.simplices, strict=True)):
        inner.append(_inner_facet((float(-eq[0]), float(-eq[1])), float(eq[2]),
                                  f"inner hull edge {k}", [bounds[i].spectrum for i in simplex]))
    return outer, inner, verts


def _listed_names() -> tuple[tuple[str, ...], tuple[str, ...]]:
    dims = [n for d in range(2, MAX_LISTED_DEGREE + 1) for n in coupling_names(d)]
    return tuple(dims), tuple(n + "t" for n in dims if n != "g2")


class ScalarEFT(Theory):
    """A massless real scalar with heavy states above a gap M (arXiv:2011.02957)."""

    name = "scalar-eft"
    summary = ("massless real scalar, crossing-symmetric 2->2 amplitude; two-sided bounds on "
               "g_k M^(2k-4)/g2 from twice-subtracted dispersion relations and null constraints")
    parameter_names = _listed_names()[0] + _listed_names()[1]
    coordinates = ("g3t", "g4t")
    conventions = ("projective", "dimensionful")
    kinematic_inputs = {"gap_mev": ("mass gap M of the heavy states (MeV); needed by the "
                                    "dimensionful convention", None)}
    families = ("null-constraints",)

    def build_region(self, settings: dict[str, Any]) -> Region:
        """Outer (verified dual) and inner (exact primal) sets; see :data:`DEFAULTS`."""
        s = _settings(settings)
        rules = derive_sum_rules(s["order"])
        y, spin = state_grid(s["spins"], s["mass_points"], float(s["y_min"]),
                             s["spin_exact_max"])
        ver = VerifySettings(spin_exact_max=s["spin_exact_max"], tol=float(s["verify_tol"]),
                             max_rounds=s["max_rounds"])
        solver = SumRuleSolver(tuple(rules.projective(c) for c in s["coordinates"]),
                               rules.null_polynomials(), y, spin, ver)
        if len(s["coordinates"]) == 1:
            outer, inner, verts = _one_dim(solver)
        else:
            outer, inner, verts = _two_dim(solver, s["directions"])
        conv = {"name": "projective", "definition": "g{D}t = g{D} M^(2(D-2)) / g2",
                "amplitude": "Caron-Huot & Van Duong, arXiv:2011.02957, Eq. (2.3)",
                "units": "mass gap M = 1"}
        notes = (f"sum rules and null constraints up to Mandelstam degree {s['order']} "
                 f"({len(rules.nulls)} null constraints)",
                 "outer facets: dual functionals verified for every spin and mass >= M",
                 "inner set: positive spectra satisfying every imposed sum rule exactly; "
                 "higher-order null constraints are not imposed on it",
                 "assumes Lorentz invariance, analyticity with two subtractions, "
                 "positivity of Im a_J, crossing, a mass gap and a tree-level light sector")
        recorded = {**s, "n_null_constraints": len(rules.nulls),
                    "grid_states_final": int(solver.y.size),
                    "verification": ver.to_dict()}
        return Region(self.name, tuple(s["coordinates"]), conv, tuple(outer), recorded,
                      tuple(inner), tuple(verts), notes=notes)

    # ---- fits ------------------------------------------------------------------------------
    def _mappable(self, fit: Fit) -> list[tuple[str, str]]:
        """(region coordinate, fit parameter) pairs, by degree."""
        out = []
        for p in fit.parameters:
            if p.convention.name == "projective" and p.name in REGION_COORDINATES:
                out.append((p.name, p.name))
            elif p.convention.name == "dimensionful" and p.name + "t" in REGION_COORDINATES:
                out.append((p.name + "t", p.name))
        return sorted(out, key=lambda c: (_degree_of(c[0][:-1]) or 0, c[0]))

    def _gap(self, fit: Fit) -> float | None:
        for p in fit.parameters:
            if p.convention.name == "dimensionful" and p.convention.gap_mev is not None:
                return float(p.convention.gap_mev)
        gap = fit.kinematics.get("gap_mev")
        return None if gap is None else float(gap)

    def validate_fit(self, fit: Fit) -> None:
        """Known names per convention; the dimensionful convention needs g2 and gap_mev > 0."""
        src = fit.source
        for i, p in enumerate(fit.parameters):
            conv = p.convention.name
            if conv == "none":
                continue
            if conv not in self.conventions:
                raise InputError(src, f"parameters[{i}].convention", f"'{conv}' is not a "
                                 "scalar-eft convention", "use projective or dimensionful")
            names = _listed_names()[1] if conv == "projective" else _listed_names()[0]
            if p.name not in names:
                raise InputError(src, f"parameters[{i}].name", f"'{p.name}' is not a {conv} "
                                 "scalar-eft parameter", f"use one of {', '.join(names[:6])}, ...")
        dimful = [p.name for p in fit.parameters if p.convention.name == "dimensionful"]
        if dimful:
            gap = self._gap(fit)
            if gap is None or not gap > 0:
                raise InputError(src, "kinematics.gap_mev", "the dimensionful convention "
                                 "needs the mass gap M", "set gap_mev > 0")
            if "g2" not in dimful:
                raise InputError(src, "parameters", "dimensionful couplings need g2 (the "
                                 "projective coordinates are g_k M^(2k-4)/g2)", "add g2")
        if not self._mappable(fit):
            raise InputError(src, "parameters", "no parameter maps to a region coordinate",
                             "give g3t/g4t (projective) or g2 with g3/g4 (dimensionful)")

    def region_settings_for_fit(self, fit: Fit) -> dict[str, Any]:
        """The defaults with the coordinates of the fit (the two lowest-degree ones)."""
        coords = [c for c, _ in self._mappable(fit)][:2]
        auto = 10 if len(coords) == 1 else 8
        return {**DEFAULTS, "coordinates": coords,
                "order": max([auto] + [_degree_of(c[:-1]) or 0 for c in coords])}

    def coordinate_map(self, fit: Fit, region: Region) -> CoordinateMap:
        """Projective: a column selection (affine).  Dimensionful: g_k M^(2(D-2))/g2 (nonlinear).

        Rows with g2 <= 0 violate the g2 sum rule (g2 = <1/m^6> > 0): every coordinate is
        set to :data:`OUTSIDE` (+1e30), beyond every upper facet, so the verdict is outside.
        """
        pairs = dict(self._mappable(fit))
        missing = [c for c in region.coordinates if c not in pairs]
        if missing:
            raise InputError(fit.source, "parameters", f"the fit has no parameter for {missing}",
                             "build the region from region_settings_for_fit(fit)")
        names = list(fit.names)
        cols = [names.index(pairs[c]) for c in region.coordinates]
        if all(pairs[c] == c for c in region.coordinates):
            jac = np.zeros((len(cols), len(names)))
            jac[np.arange(len(cols)), cols] = 1.0
            return CoordinateMap(jac, np.zeros(len(cols)), tuple(
                f"{c} = fit parameter {c} (projective)" for c in region.coordinates))
        gap = float(self._gap(fit) or 0.0)
        i2 = names.index("g2") if "g2" in names else -1
        degs = [_degree_of(c[:-1]) or 0 for c in region.coordinates]
        projective = [pairs[c] == c for c in region.coordinates]

        def mapping(x: np.ndarray) -> np.ndarray:
            x = np.atleast_2d(x)
            g2 = x[:, i2] if i2 >= 0 else np.ones(len(x))
            ok = g2 > 0
            safe = np.where(ok, g2, 1.0)
            out = np.column_stack([x[:, k] if pr else x[:, k] * gap ** (2 * (d - 2)) / safe
                                   for k, d, pr in zip(cols, degs, projective, strict=True)])
            out[~ok] = OUTSIDE
            return out

        desc = tuple(f"{c} = {pairs[c]}" + ("" if pairs[c] == c else
                     f" * M^{2 * (d - 2)} / g2, M = {gap:g} MeV; g2 <= 0 -> {OUTSIDE:g} (outside)")
                     for c, d in zip(region.coordinates, degs, strict=True))
        return CoordinateMap(None, None, desc, nonlinear=mapping)


THEORY = ScalarEFT()
