"""Proof that a dual functional is bounded below over every heavy state.

A functional B(y, J) = sum_{e, q <= e} c[e, q] y^(e-q) w^q on the heavy states (y = M^2/m^2
in (0, 1], even spin J, j = J(J+1), w = y j) is a valid dual certificate of a sum-rule
bound only if B >= target for *every* state, not just on an LP grid.
:func:`verify_functional` proves this, or returns the states where it fails:

* **each even spin J <= spin_exact_max** over all y in [0, 1]: B is then a polynomial in
  y alone.  Branch and bound on cells of y (first split on a log grid of w = y j) with
  rigorous lower enclosures, the better of a monotone-term bound and a Taylor form about
  the cell midpoint, with the worst-case floating-point error subtracted; cells too
  narrow to split in double precision are re-bounded in 40-digit mpmath arithmetic.
* **every larger spin** through the continuous relaxation j >= j' (the next even spin),
  0 <= y <= min(1, w/j'): writing B = sum_k y^k F_k(w), each F_k with k >= 1 contributes
  at worst min(F_k, 0) min(1, w/j')^k.  This covers m -> infinity, J -> infinity and the
  fixed-impact-parameter limit w -> (bM/2)^2 at once.  Branch and bound in w runs up to a
  domination cut-off W (:func:`tail_cutoff`), beyond which the leading large-w
  coefficient dominates every negative term, so B >= target there too.

The proven value is a lower bound of inf B, hence (in :mod:`eftsieve.bounds.sum_rules`)
a rigorous exclusion.  :func:`evaluate`, the floating-point value of such a functional,
lives here so that this module does not depend on the LP machinery.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

_EPS = float(np.finfo(float).eps)


# ---- floating-point values of a functional -------------------------------------------------
def evaluate(c: np.ndarray, y: np.ndarray, spin: np.ndarray) -> np.ndarray:
    """sum c[e, q] y^(e-q) w^q with w = y J(J+1) (q <= e)."""
    y = np.asarray(y, dtype=float)
    w = y * np.asarray(spin, dtype=float) * (np.asarray(spin, dtype=float) + 1.0)
    out = np.zeros(np.broadcast(y, w).shape)
    for e, q in zip(*np.nonzero(c), strict=True):
        if q <= e:
            out = out + c[e, q] * y ** (e - q) * w**q
    return out


# ---- verification of a dual functional over every heavy state --------------------------------
@dataclass(frozen=True)
class VerifySettings:
    """How a dual functional is verified and how the cutting-plane loop runs.

    Attributes
    ----------
    spin_exact_max
        Even spins J <= this are checked one by one over all y in [0, 1]; larger spins
        through the continuous relaxation (fixed-impact-parameter limit included).
    tol
        Relative slack: the functional must stay above ``lp_value - tol * max(1, |lp_value|)``.
    max_rounds
        Cutting-plane rounds (add violating states, re-solve) before giving up.
    accept_tol
        Relative distance below the LP value that a functional certified at its own
        minimum may have (when the LP tolerance, not the grid, limits it).
    max_new_states
        States added per round.
    max_depth, max_cells
        Branch-and-bound limits.
    """

    spin_exact_max: int = 2000
    tol: float = 1e-6
    max_rounds: int = 25
    accept_tol: float = 1e-3
    max_new_states: int = 128
    max_depth: int = 60
    max_cells: int = 400_000

    def to_dict(self) -> dict[str, Any]:
        return {"spin_exact_max": self.spin_exact_max, "tol": self.tol,
                "max_rounds": self.max_rounds, "accept_tol": self.accept_tol,
                "max_new_states": self.max_new_states,
                "max_depth": self.max_depth, "max_cells": self.max_cells}


@dataclass(frozen=True)
class Verification:
    """A lower bound of a functional B(y, J) over every heavy state.

    Attributes
    ----------
    passed
        True when B >= ``target`` was proven everywhere.
    lower
        The proven lower bound of inf B (>= target when passed; -inf otherwise).
    target
        The value that B had to stay above.
    best_value, best_state
        The smallest value met and its state (y, J).
    violations
        States (y, J, B) found below the target (empty when passed).
    extents
        What was covered: spins checked exactly, the continuous tail, the w range.
    """

    passed: bool
    lower: float
    target: float
    best_value: float
    best_state: tuple[float, int]
    violations: tuple[tuple[float, int, float], ...]
    extents: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"passed": self.passed, "lower": self.lower, "target": self.target,
                "min_value_found": self.best_value,
                "argmin": {"y": self.best_state[0], "J": self.best_state[1]},
                "n_violations": len(self.violations), **self.extents}


def _powers(x: np.ndarray, n: int) -> np.ndarray:
    return np.asarray(x, dtype=float)[:, None] ** np.arange(n)


@functools.lru_cache(maxsize=64)
def _binomials(n: int) -> tuple[np.ndarray, ...]:
    """Row k: C(e, k) for e = k..n-1, as floats (made once per degree)."""
    return tuple(np.array([float(math.comb(e, k)) for e in range(k, n)]) for k in range(n))


def _lower_poly(a: np.ndarray, aa: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Rigorous lower bounds of p(x) = sum_e a[:, e] x^e over cells [lo, hi] with 0 <= lo.

    The better of two enclosures: monotone terms (positive terms at lo, negative ones at
    hi) and the exact Taylor form about the midpoint, p >= T0 - sum_k |T_k| r^k.  The
    floating-point error, at most ~(n+2) eps sum_e aa_e hi^e with aa >= |a| the sum of
    the absolute values that formed a, is subtracted.
    """
    n = a.shape[1]
    ph = _powers(hi, n)
    mono = (np.maximum(a, 0) * _powers(lo, n) + np.minimum(a, 0) * ph).sum(1)
    m, r = 0.5 * (lo + hi), 0.5 * (hi - lo)
    pm, pr = _powers(m, n), _powers(r, n)
    tay = np.zeros(m.shape)
    binoms = _binomials(n)
    for k in range(n):
        tk = (a[:, k:] * binoms[k] * pm[:, : n - k]).sum(1)
        tay = tay + (tk if k == 0 else -np.abs(tk) * pr[:, k])
    return np.maximum(mono, tay) - 8.0 * (n + 2) * _EPS * (aa * ph).sum(1)


def _bnb(lower_fn: Any, value_fn: Any, lo: np.ndarray, hi: np.ndarray, owner: np.ndarray,
         n_owner: int, target: float, s: VerifySettings, exact_fn: Any = None
         ) -> dict[str, Any]:
    """Branch and bound on cells [lo, hi] (grouped by owner): prove f >= target or find f < target.

    Cells too narrow to split in floating point, or left at the depth/cell limits, are
    re-bounded by ``exact_fn`` (40-digit arithmetic) when given.
    """
    best_val = np.full(n_owner, np.inf)
    best_x = np.zeros(n_owner)
    proven = np.inf
    stuck: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    for depth in range(s.max_depth + 1):
        for pts in (lo, 0.5 * (lo + hi), hi) if depth == 0 else (0.5 * (lo + hi),):
            val = value_fn(pts, owner)
            order = np.lexsort((val, owner))
            first = order[np.r_[True, owner[order][1:] != owner[order][:-1]]]
            better = val[first] < best_val[owner[first]]
            best_val[owner[first][better]] = val[first][better]
            best_x[owner[first][better]] = pts[first][better]
        lb = lower_fn(lo, hi, owner)
        done = lb >= target
        if done.any():
            proven = min(proven, float(lb[done].min()))
        keep = ~done & ~(best_val[owner] < target)
        narrow = keep & (hi - lo <= 1e-12 * np.maximum(hi, 1e-300))
        stuck.append((lo[narrow], hi[narrow], owner[narrow]))
        keep &= ~narrow
        if not keep.any():
            break
        lo, hi, owner = lo[keep], hi[keep], owner[keep]
        if depth == s.max_depth or 2 * lo.size > s.max_cells:
            stuck.append((lo, hi, owner))
            break
        mid = 0.5 * (lo + hi)
        lo, hi, owner = np.r_[lo, mid], np.r_[mid, hi], np.r_[owner, owner]
    lo, hi, owner = (np.concatenate([c[i] for c in stuck]) for i in range(3))
    unresolved = False
    if lo.size:
        alive = ~(best_val[owner] < target)
        lo, hi, owner = lo[alive], hi[alive], owner[alive]
    if lo.size:
        if exact_fn is not None and lo.size <= 2000:
            lb = exact_fn(lo, hi, owner)
        else:
            lb = lower_fn(lo, hi, owner)
        proven = min(proven, float(lb.min()))
        unresolved = bool((lb < target).any())
    return {"best_val": best_val, "best_x": best_x, "proven": proven, "unresolved": unresolved}


def _mp_spin_lower(c: np.ndarray, spins: np.ndarray, lo: np.ndarray, hi: np.ndarray,
                   owner: np.ndarray) -> np.ndarray:
    """:func:`_lower_poly` for the per-spin polynomials, in 40-digit arithmetic."""
    import mpmath

    n = c.shape[0]
    out = np.zeros(lo.size)
    with mpmath.workdps(40):
        cm = [[mpmath.mpf(float(c[e, q])) for q in range(n)] for e in range(n)]
        for i in range(lo.size):
            j = mpmath.mpf(int(spins[owner[i]]) * (int(spins[owner[i]]) + 1))
            a = [mpmath.fsum(cm[e][q] * j**q for q in range(e + 1)) for e in range(n)]
            size = mpmath.fsum(abs(cm[e][q]) * j**q for e in range(n) for q in range(e + 1))
            m, r = (mpmath.mpf(float(lo[i])) + mpmath.mpf(float(hi[i]))) / 2, \
                (mpmath.mpf(float(hi[i])) - mpmath.mpf(float(lo[i]))) / 2
            t = [mpmath.fsum(a[e] * math.comb(e, k) * m ** (e - k) for e in range(k, n))
                 for k in range(n)]
            low = t[0] - mpmath.fsum(abs(t[k]) * r**k for k in range(1, n))
            out[i] = float(low - mpmath.mpf(10) ** -30 * size * (1 + m + r) ** n)
    return out - 1e-15 * np.abs(out)


def _spin_cells(j: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The starting cells of every spin (copies of a cached set: the same for every
    functional verified at the same spins)."""
    lo, hi, owner = _spin_cells_cached(tuple(float(x) for x in j))
    return lo.copy(), hi.copy(), owner.copy()


@functools.lru_cache(maxsize=16)
def _spin_cells_cached(jt: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    j = np.array(jt)
    base = np.linspace(0.0, 1.0, 17)
    wgrid = np.logspace(-2, 4, 25)
    lo, hi, owner = [], [], []
    for i, jj in enumerate(j):
        pts = np.unique(np.r_[base, wgrid[wgrid < jj] / jj] if jj > 0 else base)
        lo.append(pts[:-1])
        hi.append(pts[1:])
        owner.append(np.full(pts.size - 1, i))
    return np.concatenate(lo), np.concatenate(hi), np.concatenate(owner)


def _polish_spin(a_row: np.ndarray, jj: float) -> tuple[float, float]:
    """The minimum over y in [0, 1] of sum_e a_e y^e (roots of the derivative, rescaled)."""
    sc = 1.0 / (1.0 + jj)
    b = a_row * sc ** np.arange(a_row.size)
    cands = [0.0, 1.0]
    d = (np.arange(1, b.size) * b[1:])[::-1]
    nz = np.flatnonzero(np.abs(d) > 0)
    if nz.size and nz[0] < d.size - 1:
        r = np.roots(d[nz[0]:])
        r = r[np.abs(r.imag) <= 1e-9 * (1 + np.abs(r.real))].real * sc
        cands += [float(v) for v in r if 0.0 < v < 1.0]
    ys = np.array(cands)
    vals = _powers(ys, a_row.size) @ a_row
    k = int(np.argmin(vals))
    return float(ys[k]), float(vals[k])


def _scan_spins(c: np.ndarray, target: float, s: VerifySettings) -> dict[str, Any]:
    """Every even spin J <= spin_exact_max, all y in [0, 1]."""
    spins = np.arange(0, s.spin_exact_max + 1, 2)
    j = spins * (spins + 1.0)
    n = c.shape[0]
    jp = _powers(j, n)
    a, aa = jp @ c.T, jp @ np.abs(c).T

    def lower_fn(lo: np.ndarray, hi: np.ndarray, ow: np.ndarray) -> np.ndarray:
        return _lower_poly(a[ow], aa[ow], lo, hi)

    def value_fn(x: np.ndarray, ow: np.ndarray) -> np.ndarray:
        return (a[ow] * _powers(x, n)).sum(1)

    def exact_fn(lo: np.ndarray, hi: np.ndarray, ow: np.ndarray) -> np.ndarray:
        return _mp_spin_lower(c, spins, lo, hi, ow)

    lo, hi, owner = _spin_cells(j)
    out = _bnb(lower_fn, value_fn, lo, hi, owner, spins.size, target, s, exact_fn)
    viol = np.flatnonzero(out["best_val"] < target)
    viol = viol[np.argsort(out["best_val"][viol])][: s.max_new_states]
    states = []
    for i in viol:
        yv, fv = _polish_spin(a[i], j[i])
        states.append((yv, int(spins[i]), min(fv, float(out["best_val"][i]))))
    k = int(np.argmin(out["best_val"]))
    out.update(states=states, best=(float(out["best_x"][k]), int(spins[k]),
                                    float(out["best_val"][k])))
    return out


def tail_cutoff(c: np.ndarray, target: float) -> float | None:
    """W with f >= target for every state with w >= W, or None if f is not bounded below.

    For y <= 1, f >= Q(w) = sum_p q_p w^p with q_p = c[p,p] + sum_{k>=1} min(c[p+k,p], 0).
    With the top coefficient q_t > 0, Q - target >= 0 once every negative term is below
    q_t w^t / t, i.e. for w >= max_p (t |q_p| / q_t)^(1/(t-p)).
    """
    n = c.shape[0]
    q = np.array([c[p, p] for p in range(n)])
    for e in range(n):
        for p in range(e):
            q[p] += min(c[e, p], 0.0)
    q[0] -= target
    nz = np.flatnonzero(q)
    if nz.size == 0:
        return 1.0
    top = int(nz[-1])
    if q[top] < 0:
        return None
    cands = [(top * abs(q[p]) / q[top]) ** (1.0 / (top - p)) for p in range(top) if q[p] < 0]
    return max([1.0] + cands)


def _scan_tail(c: np.ndarray, target: float, s: VerifySettings) -> dict[str, Any]:
    """Every spin J > spin_exact_max: continuous j >= j', y <= min(1, w / j'), w in [0, inf)."""
    j_next = s.spin_exact_max + 2
    jt = j_next * (j_next + 1.0)
    n = c.shape[0]
    # f = sum_k y^k F_k(w), F_k(w) = sum_p c[p+k, p] w^p, with 0 <= y <= min(1, w/j')
    fk = np.zeros((n, n))
    for k in range(n):
        for p in range(n - k):
            fk[k, p] = c[p + k, p]

    def lower_fn(lo: np.ndarray, hi: np.ndarray, ow: np.ndarray) -> np.ndarray:
        ones = np.ones((lo.size, 1))
        ymax = np.minimum(1.0, hi / jt)
        out = _lower_poly(fk[0] * ones, np.abs(fk[0]) * ones, lo, hi)
        for k in range(1, n):
            if fk[k].any():
                low = _lower_poly(fk[k] * ones, np.abs(fk[k]) * ones, lo, hi)
                out = out + np.minimum(low, 0.0) * ymax**k
        return out

    far = 64 * j_next  # a spin far out, near the fixed-impact-parameter limit

    def at(x: np.ndarray, spin: int) -> np.ndarray:
        jj = spin * (spin + 1.0)
        return evaluate(c, np.minimum(1.0, x / jj), np.full(x.shape, float(spin)))

    def value_fn(x: np.ndarray, ow: np.ndarray) -> np.ndarray:
        return np.minimum(at(x, j_next), at(x, far))

    def state(w: float) -> tuple[float, int, float]:
        spin = j_next if at(np.array([w]), j_next)[0] <= at(np.array([w]), far)[0] else far
        return (float(min(1.0, w / (spin * (spin + 1.0)))), spin,
                float(at(np.array([w]), spin)[0]))

    w_cut = tail_cutoff(c, target)
    if w_cut is None:
        ws = np.logspace(0, 30, 61)
        bad = np.flatnonzero(value_fn(ws, ws) < target)
        states = [state(float(ws[bad[0]]))] if bad.size else []
        return {"proven": -np.inf, "unresolved": not bad.size, "states": states,
                "best": states[0] if states else state(float(ws[-1])), "w_max": None}
    edges = np.r_[0.0, np.logspace(-3, np.log10(max(w_cut, 1e-2)) + 1e-9, 96)]
    lo, hi = edges[:-1], edges[1:]
    out = _bnb(lower_fn, value_fn, lo, hi, np.zeros(lo.size, dtype=int), 1, target, s)
    best = state(float(out["best_x"][0]))
    out.update(states=[best] if best[2] < target else [], best=best, w_max=w_cut)
    return out


def verify_functional(c: np.ndarray, target: float, s: VerifySettings) -> Verification:
    """Prove B(y, J) = sum c[e,q] y^(e-q) w^q >= target for every y in (0, 1] and even J >= 0.

    Spins up to ``s.spin_exact_max`` one by one, larger spins through the continuous
    relaxation and the domination cut-off of :func:`tail_cutoff` (module docstring).
    """
    spins = _scan_spins(c, target, s)
    tail = _scan_tail(c, target, s)
    states = tuple(spins["states"] + tail["states"])
    unresolved = spins["unresolved"] or tail["unresolved"]
    passed = not states and not unresolved
    # beyond the domination cut-off only B >= target is known, so the proven bound is target
    lower = min(spins["proven"], tail["proven"], target) if passed else -np.inf
    best = min([spins["best"], tail["best"]], key=lambda b: b[2])
    extents = {"spins_exact": [0, s.spin_exact_max], "spin_parity": "even",
               "y_range": [0.0, 1.0], "tail": f"J > {s.spin_exact_max}, continuous",
               "w_domination_cutoff": tail["w_max"], "impact_parameter_limit": True,
               "unresolved": bool(unresolved)}
    return Verification(passed, float(lower), float(target), best[2], (best[0], best[1]),
                        states, extents)
