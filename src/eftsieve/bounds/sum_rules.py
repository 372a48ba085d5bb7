"""Sum-rule bounds as a moment problem: a linear programme, its dual and a verified certificate.

Dispersive sum rules write each low-energy coefficient as an average over heavy states
(mass m >= M, even spin J) with a non-negative measure, normalised here so that <1> = 1
(for the scalar EFT: the g2 sum rule).  A state is labelled by y = M^2/m^2 in (0, 1] and
j = J(J+1); coordinates and null constraints are :class:`StatePolynomial` s

    f(y, J) = sum_{e, q <= e} c[e, q] y^e j^q = sum c[e, q] y^(e-q) w^q,   w = y j,

where w -> (bM/2)^2 at large J and fixed impact parameter b = 2J/m.  The allowed set is
{<f>} over measures with <1> = 1 and <n_i> = 0.  For min <o> along a direction:

* **primal (inner)**: the LP over a finite grid returns a positive spectrum, re-solved on
  its support in 40-digit arithmetic (:func:`exact_spectrum`) so that it meets every
  imposed constraint exactly.  Its value lies *above* the minimum (a restriction), on the
  allowed side of the truncated problem; null constraints beyond the imposed order are
  not enforced on it.
* **dual (outer)**: any multipliers c_i give <o> = <o - sum c_i n_i> >= inf_states B with
  B = o - sum c_i n_i.  :func:`verify_functional` bounds inf B from below over *every*
  state: each even spin up to a cut-off over all y (branch and bound with rigorous
  polynomial enclosures, floating-point error subtracted, 40-digit fallback), and all
  larger spins through the continuous relaxation j >= j', y <= min(1, w/j'), which holds
  the m -> infinity, J -> infinity and fixed-b limits, closed by a domination bound as
  w -> infinity.  The verified value lies *below* the true minimum: a rigorous exclusion.

:func:`solve_lp` wraps HiGHS (``scipy.optimize.linprog``), checks primal and dual residuals
and raises :class:`~eftsieve.errors.SolverError` unless optimal.  :class:`SumRuleSolver`
runs the cutting-plane loop (add the violating states, re-solve), else raises.

Reference: the dual formulation with null constraints follows S. Caron-Huot and V. Van
Duong, "Extremal Effective Field Theories", arXiv:2011.02957, Sec. 3 (an SDP there).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.tolerances import FEASIBILITY_TOL

_EPS = float(np.finfo(float).eps)
#: states with w = y J(J+1) <= W_REF fix the basis of the null constraints in the LP
W_REF = 200.0
#: states whose null-constraint values are all below this (but not zero) are left out of the LP
FAINT = 1e-6
_TIGHT = {"primal_feasibility_tolerance": 1e-9, "dual_feasibility_tolerance": 1e-9}
_LP_STATUS = {0: "optimal", 1: "iteration_limit", 2: "infeasible", 3: "unbounded",
              4: "numerical_difficulties"}


# ---- the generic LP ----------------------------------------------------------------------
@dataclass(frozen=True)
class LPResult:
    """The solution of ``min c.x  s.t.  A_eq x = b_eq,  A_ub x <= b_ub,  lb <= x <= ub``.

    Attributes
    ----------
    x
        The primal solution.
    objective
        c . x.
    dual_eq, dual_ub
        Multipliers y (equalities) and z <= 0 (inequalities), the sensitivities of the
        optimum to b_eq and b_ub.
    reduced_costs
        c - A_eq^T y - A_ub^T z (>= 0 at variables on their lower bound).
    status
        ``optimal`` (anything else raises).
    primal_residual, dual_residual, gap
        Max constraint violation, max dual-feasibility violation, |primal - dual| objective.
    """

    x: np.ndarray
    objective: float
    dual_eq: np.ndarray
    dual_ub: np.ndarray
    reduced_costs: np.ndarray
    status: str
    primal_residual: float
    dual_residual: float
    gap: float

    def to_dict(self) -> dict[str, Any]:
        return {"x": self.x.tolist(), "objective": self.objective,
                "dual_eq": self.dual_eq.tolist(), "dual_ub": self.dual_ub.tolist(),
                "status": self.status, "primal_residual": self.primal_residual,
                "dual_residual": self.dual_residual, "gap": self.gap}


def _bounds_arrays(bounds: Any, n: int) -> tuple[np.ndarray, np.ndarray]:
    pairs = [bounds] * n if (len(bounds) == 2 and not np.iterable(bounds[0])) else list(bounds)
    lb = np.array([-np.inf if p[0] is None else float(p[0]) for p in pairs])
    ub = np.array([np.inf if p[1] is None else float(p[1]) for p in pairs])
    return lb, ub


def solve_lp(c: np.ndarray, a_eq: np.ndarray | None = None, b_eq: np.ndarray | None = None,
             a_ub: np.ndarray | None = None, b_ub: np.ndarray | None = None,
             bounds: Any = (0.0, None), *, problem: str = "linear programme",
             tol: float = FEASIBILITY_TOL, options: dict[str, Any] | None = None) -> LPResult:
    """Solve an LP with HiGHS (``scipy.optimize.linprog``) and check its optimality certificate.

    Raises
    ------
    SolverError
        With status ``infeasible``, ``unbounded``, ... when HiGHS does not end optimal, or
        ``inaccurate`` when the primal/dual residuals or the duality gap exceed ``tol``
        (relative to the size of the data).
    """
    from scipy.optimize import linprog

    c = np.asarray(c, dtype=float)
    n = c.size
    a_eq_ = np.zeros((0, n)) if a_eq is None else np.asarray(a_eq, dtype=float)
    b_eq_ = np.zeros(0) if b_eq is None else np.asarray(b_eq, dtype=float)
    a_ub_ = np.zeros((0, n)) if a_ub is None else np.asarray(a_ub, dtype=float)
    b_ub_ = np.zeros(0) if b_ub is None else np.asarray(b_ub, dtype=float)
    lb, ub = _bounds_arrays(bounds, n)
    opts = dict(options or {})
    res = linprog(c, A_ub=a_ub_ if len(b_ub_) else None, b_ub=b_ub_ if len(b_ub_) else None,
                  A_eq=a_eq_ if len(b_eq_) else None, b_eq=b_eq_ if len(b_eq_) else None,
                  bounds=list(zip(lb, ub, strict=True)), method="highs", options=opts)
    if res.status != 0:
        raise SolverError(_LP_STATUS.get(res.status, f"status {res.status}"), problem)
    x = np.asarray(res.x)
    y = np.asarray(res.eqlin.marginals) if len(b_eq_) else np.zeros(0)
    z = np.asarray(res.ineqlin.marginals) if len(b_ub_) else np.zeros(0)
    red = c - a_eq_.T @ y - a_ub_.T @ z
    p_res, d_res, gap = _residuals(c, x, y, z, red, (a_eq_, b_eq_, a_ub_, b_ub_), lb, ub)
    scale = max(1.0, float(np.abs(c).max(initial=0)), float(np.abs(b_eq_).max(initial=0)),
                float(np.abs(b_ub_).max(initial=0)))
    if max(p_res, d_res, gap) > tol * scale:
        raise SolverError("inaccurate", f"{problem} (primal residual {p_res:.2e}, dual "
                          f"residual {d_res:.2e}, duality gap {gap:.2e})")
    return LPResult(x, float(c @ x), y, z, red, "optimal", p_res, d_res, gap)


def _residuals(c: np.ndarray, x: np.ndarray, y: np.ndarray, z: np.ndarray, red: np.ndarray,
               data: tuple[np.ndarray, ...], lb: np.ndarray, ub: np.ndarray
               ) -> tuple[float, float, float]:
    """Primal violation, dual violation and duality gap of an LP solution."""
    a_eq, b_eq, a_ub, b_ub = data
    p_res = max(float(np.abs(a_eq @ x - b_eq).max(initial=0)),
                float(np.maximum(a_ub @ x - b_ub, 0).max(initial=0)),
                float(np.maximum(lb - x, 0).max(initial=0)),
                float(np.maximum(x - ub, 0).max(initial=0)))
    # z <= 0; reduced cost >= 0 where only a lower bound exists, <= 0 where only an upper
    # one does, = 0 for free variables
    lo_f, up_f = np.isfinite(lb), np.isfinite(ub)
    viol = np.where(lo_f & ~up_f, np.maximum(-red, 0), 0.0)
    viol = np.maximum(viol, np.where(~lo_f & up_f, np.maximum(red, 0), 0.0))
    viol = np.maximum(viol, np.where(~lo_f & ~up_f, np.abs(red), 0.0))
    d_res = max(float(viol.max(initial=0)), float(np.maximum(z, 0).max(initial=0)))
    bound_terms = (np.where(lo_f, np.maximum(red, 0) * np.where(lo_f, lb, 0), 0).sum()
                   + np.where(up_f, np.minimum(red, 0) * np.where(up_f, ub, 0), 0).sum())
    gap = abs(float(c @ x) - float(b_eq @ y + b_ub @ z + bound_terms))
    return p_res, d_res, gap


# ---- polynomials on the heavy states -------------------------------------------------------
@dataclass(frozen=True)
class StatePolynomial:
    """f(y, J) = sum_{e, q <= e} c[e][q] y^e (J(J+1))^q with exact rational coefficients.

    Attributes
    ----------
    exact
        ``exact[e][q]`` as :class:`fractions.Fraction`; rows have length e + 1.
    label
        A name (``g3t``, ``n4``, ...).
    """

    exact: tuple[tuple[Fraction, ...], ...]
    label: str = ""

    @property
    def degree(self) -> int:
        return len(self.exact) - 1

    def coeffs(self, size: int | None = None) -> np.ndarray:
        """The float coefficient matrix c[e, q], zero-padded to ``size``."""
        n = max(len(self.exact), size or 0)
        out = np.zeros((n, n))
        for e, row in enumerate(self.exact):
            out[e, : len(row)] = [float(v) for v in row]
        return out

    def __call__(self, y: np.ndarray, spin: np.ndarray) -> np.ndarray:
        return evaluate(self.coeffs(), y, spin)

    def mp_value(self, y: float, spin: int, mp: Any) -> Any:
        """The value in mpmath arithmetic (y is taken as the exact binary float)."""
        yy, jj, total = mp.mpf(y), mp.mpf(int(spin) * (int(spin) + 1)), mp.mpf(0)
        for e, row in enumerate(self.exact):
            for q, v in enumerate(row):
                if v:
                    total += mp.mpf(v.numerator) / v.denominator * yy**e * jj**q
        return total

    def to_dict(self) -> dict[str, Any]:
        return {"label": self.label, "coefficients_y^e_j^l": [[str(v) for v in row]
                                                              for row in self.exact]}


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
    for k in range(n):
        binom = np.array([float(math.comb(e, k)) for e in range(k, n)])
        tk = (a[:, k:] * binom * pm[:, : n - k]).sum(1)
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


def _tail_cutoff(c: np.ndarray, target: float) -> float | None:
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

    w_cut = _tail_cutoff(c, target)
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
    relaxation and the domination cut-off of :func:`_tail_cutoff` (module docstring).
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


# ---- the cutting-plane solver ------------------------------------------------------------------
@dataclass(frozen=True)
class DirectionalBound:
    """Inner and outer values of min d . x along one direction d of the coordinates.

    Attributes
    ----------
    direction
        d, in the order of ``names``.
    names
        The coordinate names.
    lp_value
        The LP optimum on the final grid.
    outer
        The verified bound: every allowed point has d . x >= outer (rigorous).
    inner
        d . x at ``inner_point``, a positive spectrum that satisfies every imposed sum
        rule exactly (inner >= outer).
    inner_point
        The coordinates of that spectrum.
    spectrum
        Its states: ``y`` = M^2/m^2, ``J`` and normalised weights.
    certificate
        The dual functional: multipliers of the null constraints and of the normalisation.
    verification
        How the functional was verified.
    rounds
        Cutting-plane rounds used.
    """

    direction: tuple[float, ...]
    names: tuple[str, ...]
    lp_value: float
    outer: float
    inner: float
    inner_point: tuple[float, ...]
    spectrum: dict[str, list[float]]
    certificate: dict[str, Any]
    verification: Verification
    rounds: int

    def to_dict(self) -> dict[str, Any]:
        return {"direction": list(self.direction), "names": list(self.names),
                "lp_value": self.lp_value, "outer": self.outer, "inner": self.inner,
                "inner_point": list(self.inner_point), "spectrum": self.spectrum,
                "certificate": self.certificate, "verification": self.verification.to_dict(),
                "rounds": self.rounds}


def exact_spectrum(nulls: tuple[StatePolynomial, ...], y: np.ndarray, spin: np.ndarray,
                   x: np.ndarray, support: np.ndarray | None = None, dps: int = 40
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Re-solve <1> = 1, <n_i> = 0 on the support of an LP solution in ``dps``-digit arithmetic.

    ``x`` are the weights; ``support`` (default: x > 1e-11 max x) the states to keep.  A
    state of tiny weight can matter when its null-constraint values are huge, so callers
    should pick the support from the scaled LP variables.

    Returns the states (y, J) and their weights, all strictly positive, with the residual
    below 10^-(dps - 15) relative to the size of the rows.  Raises SolverError otherwise.
    """
    import mpmath

    keep = np.flatnonzero(x > 1e-11 * x.max() if support is None else support)
    for _ in range(2):  # a second try without the states that came out non-positive
        with mpmath.workdps(dps):
            a = mpmath.matrix([[mpmath.mpf(1)] * len(keep)]
                              + [[n.mp_value(y[i], spin[i], mpmath) for i in keep] for n in nulls])
            b = mpmath.matrix([1] + [0] * len(nulls))
            if a.rows >= a.cols:
                p, _ = mpmath.qr_solve(a, b)
            else:  # more states than constraints: the nearest exact solution to the LP's
                p0 = mpmath.matrix([mpmath.mpf(float(x[i])) for i in keep])
                p = p0 + a.T * mpmath.lu_solve(a * a.T, b - a * p0)
            pw = np.array([float(v) for v in p])
            # every equation must hold relative to the size of its own terms
            ok = all(abs(sum(a[r, k] * p[k] for k in range(a.cols)) - b[r])
                     <= mpmath.mpf(10) ** (15 - dps) * (1 + sum(abs(a[r, k] * p[k])
                                                                for k in range(a.cols)))
                     for r in range(a.rows))
        if ok and (pw > 0).all():
            return y[keep], spin[keep], pw
        if not ok:
            break
        keep = keep[pw > 0]
    raise SolverError("inexact-primal", "re-solving the LP spectrum exactly on its support")


class SumRuleSolver:
    """Extremise linear combinations of coordinates over positive heavy spectra.

    Parameters
    ----------
    coordinates
        The coordinate polynomials (averages normalised by <1> = 1).
    nulls
        The null constraints, whose averages must vanish.
    y, spin
        The initial grid of states (y = M^2/m^2 in (0, 1], even J); it grows as the
        cutting-plane loop adds states, and the added states are kept for later directions.
    settings
        Verification and cutting-plane settings.
    """

    def __init__(self, coordinates: tuple[StatePolynomial, ...],
                 nulls: tuple[StatePolynomial, ...], y: np.ndarray, spin: np.ndarray,
                 settings: VerifySettings) -> None:
        self.coordinates, self.nulls, self.settings = coordinates, nulls, settings
        self.size = max(p.degree for p in coordinates + nulls) + 1
        self._cc = np.stack([p.coeffs(self.size) for p in coordinates])
        self._nc = np.stack([p.coeffs(self.size) for p in nulls])
        self.y, self.spin = np.zeros(0), np.zeros(0, dtype=int)
        self._rows = np.zeros((len(nulls), 0))
        self._crd = np.zeros((len(coordinates), 0))
        self._keys: set[tuple[float, int]] = set()
        self.add_states(y, spin)

    def add_states(self, y: np.ndarray, spin: np.ndarray) -> int:
        """Add states not yet on the grid; returns how many were new."""
        new = [(float(a), int(b)) for a, b in zip(np.atleast_1d(y), np.atleast_1d(spin),
                                                    strict=True)
               if 0 < a <= 1 and (round(float(a), 14), int(b)) not in self._keys]
        if not new:
            return 0
        ny, ns = np.array([a for a, _ in new]), np.array([b for _, b in new])
        self._keys.update((round(a, 14), b) for a, b in new)
        self.y, self.spin = np.r_[self.y, ny], np.r_[self.spin, ns]
        self._rows = np.hstack([self._rows, np.stack([evaluate(c, ny, ns) for c in self._nc])])
        self._crd = np.hstack([self._crd, np.stack([evaluate(c, ny, ns) for c in self._cc])])
        return len(new)

    def _solve_grid(self, d: np.ndarray) -> tuple[float, np.ndarray, np.ndarray]:
        """One LP on the grid: (normalisation multiplier, null multipliers, weights).

        The null rows are replaced by a basis that is orthonormal on the states with
        w <= W_REF (each weighted by (1 + w/ws)^-E, 10^-6 at W_REF): T = R^-T N from the QR
        factorisation there; columns are scaled to a largest entry of one; "faint" states
        are left out; a column for the state at infinity keeps the functional's leading
        large-w coefficient non-negative.  The multipliers are mapped back, R^-1 mu.
        """
        from scipy.linalg import solve_triangular

        obj = d @ self._crd
        w = self.y * self.spin * (self.spin + 1.0)
        big_e = self.size - 1.0
        ref = w <= W_REF
        ws = W_REF / (10.0 ** (6.0 / big_e) - 1.0)
        r = np.linalg.qr((self._rows[:, ref] * (1.0 + w[ref] / ws) ** -big_e).T, mode="r")
        if not ref.any() or np.abs(np.diag(r)).min() <= 1e-300:
            raise SolverError("rank-deficient", "null constraints on the reference states")
        rows = solve_triangular(r, self._rows, trans="T")
        self._r = r
        col = 1.0 / np.maximum(1.0, np.maximum(np.abs(rows).max(0), np.abs(obj)))
        # states whose null values are all tiny but not zero (small y, J > 0) sit below
        # HiGHS's resolution: the LP would treat them as null-free; leave them out
        faint = np.abs(self._rows).max(0) < FAINT
        col[faint & (np.abs(self._rows).max(0) > 0)] = 0.0
        # the state at infinity: the large-w limit of n(y, J)/w^E (leading coefficients);
        # its dual constraint keeps the functional's leading coefficient non-negative
        top = solve_triangular(r, self._nc[:, -1, -1], trans="T")
        top_obj = float(np.tensordot(d, self._cc, 1)[-1, -1])
        vs = 1.0 / max(float(np.abs(top).max()), abs(top_obj), 1e-300)
        a_eq = np.vstack([np.r_[col, 0.0], np.hstack([rows * col, (top * vs)[:, None]])])
        a_eq[np.abs(a_eq) < 1e-9] = 0.0  # HiGHS ignores these anyway (small_matrix_value)
        b_eq = np.r_[1.0, np.zeros(len(self.nulls))]
        cost = np.r_[obj * col, top_obj * vs]
        name = f"sum-rule LP along {d.tolist()}"
        try:
            lp = solve_lp(cost, a_eq, b_eq, problem=name, options=_TIGHT)
        except SolverError as err:  # tight tolerances can stall HiGHS: retry with defaults
            if err.status not in ("numerical_difficulties", "inaccurate"):
                raise
            lp = solve_lp(cost, a_eq, b_eq, problem=name)
        self._support = (lp.x > 1e-12 * lp.x.max()) & (np.r_[col, 1.0] > 0)
        self._at_infinity = float(lp.x[-1] * vs) if self._support[-1] else 0.0
        self._support = self._support[:-1]
        return float(lp.dual_eq[0]), solve_triangular(r, lp.dual_eq[1:]), lp.x[:-1] * col

    def extremize(self, direction: np.ndarray) -> DirectionalBound:
        """Inner and verified outer values of min d . x; raises SolverError if unverified.

        Each round solves the LP, verifies its functional against ``lp - tol`` and adds the
        violating states.  When no new state can be added (the LP tolerance, not the grid,
        limits the functional) or the rounds run out, the functional is certified at its
        own minimum instead; that bound is accepted if within ``accept_tol`` of the LP.
        """
        d = np.asarray(direction, dtype=float)
        d = np.where(np.abs(d) < 1e-12 * np.abs(d).max(), 0.0, d)  # 2e-18 is a zero of cos
        s = self.settings
        obj = np.tensordot(d, self._cc, 1)
        for rnd in range(1, s.max_rounds + 1):
            lam, mult, weights = self._solve_grid(d)
            target = lam - s.tol * max(1.0, abs(lam))
            if (d @ self._crd).min() >= target:
                mult = np.zeros_like(mult)  # the objective alone is the functional
            mult = self._regularise(obj, mult, target)
            func = obj - np.tensordot(mult, self._nc, 1)
            ver = verify_functional(func, target, s)
            if ver.passed:
                return self._bound(d, lam, mult, weights, ver, rnd)
            added = self.add_states(np.array([v[0] for v in ver.violations]),
                                    np.array([v[1] for v in ver.violations]))
            if not added or rnd == s.max_rounds:
                break
        for _ in range(4):  # certify at the functional's own minimum
            low = min([ver.best_value] + [v[2] for v in ver.violations])
            if ver.passed or not np.isfinite(low):
                break
            ver = verify_functional(func, low - s.tol * max(1.0, abs(lam)), s)
        if not ver.passed or lam - ver.lower > s.accept_tol * max(1.0, abs(lam)):
            raise SolverError("unverified", f"dual functional along {d.tolist()} after {rnd} "
                              f"rounds: min {ver.best_value:.8g}, LP value {lam:.8g}")
        return self._bound(d, lam, mult, weights, ver, rnd)

    def _regularise(self, obj: np.ndarray, mult: np.ndarray, target: float) -> np.ndarray:
        """Make the functional bounded as w -> infinity if the LP left it (numerically) flat.

        In double precision the LP cannot fix the sign of the leading large-w coefficients
        when the optimum does not need them.  Adding eps times the null combination with
        unit leading coefficient that is smallest on the reference states, with the
        smallest eps = 10^k that gives a domination cut-off below 10^(250/E), fixes it;
        the verification then accounts for its effect exactly.
        """
        from scipy.linalg import solve_triangular

        w_max = 10.0 ** (250.0 / (self.size - 1))  # w^E stays far from overflow
        cut = _tail_cutoff(obj - np.tensordot(mult, self._nc, 1), target)
        if cut is not None and cut <= w_max:
            return mult
        beta = solve_triangular(self._r, self._nc[:, -1, -1], trans="T")
        alpha = solve_triangular(self._r, beta) / float(beta @ beta)
        for k in range(-300, 20):
            trial = mult - 10.0**k * alpha
            cut = _tail_cutoff(obj - np.tensordot(trial, self._nc, 1), target)
            if cut is not None and cut <= w_max:
                return trial
        return mult

    def _bound(self, d: np.ndarray, lam: float, mult: np.ndarray, weights: np.ndarray,
               ver: Verification, rnd: int) -> DirectionalBound:
        import mpmath

        y, spin, x, sup = self.y, self.spin, weights, self._support
        if self._at_infinity:  # the LP used the state at infinity: a real state far out
            big = 100_000
            wbig = big * (big + 1.0)
            y, spin = np.r_[y, 1.0], np.r_[spin, big]
            x, sup = np.r_[x, self._at_infinity / wbig ** (self.size - 1)], np.r_[sup, True]
        ys, js, pw = exact_spectrum(self.nulls, y, spin, x, sup)
        with mpmath.workdps(40):
            point = tuple(float(mpmath.fsum(mpmath.mpf(p) * c.mp_value(a, b, mpmath)
                                            for a, b, p in zip(ys, js, pw, strict=True)))
                          for c in self.coordinates)
        inner = float(np.dot(d, point))
        if abs(inner - lam) > self.settings.accept_tol * max(1.0, abs(lam)):
            raise SolverError("inexact-primal", f"exact spectrum gives {inner}, LP {lam} "
                              f"along {d.tolist()}")
        if inner < ver.lower - 1e-9 * max(1.0, abs(inner)):
            raise SolverError("inconsistent", f"primal value {inner} below the verified dual "
                              f"bound {ver.lower} along {d.tolist()}")
        cert = {"normalisation_multiplier": lam,
                "null_multipliers": {n.label: float(m) for n, m in zip(self.nulls, mult,
                                                                      strict=True)}}
        spec = {"y": ys.tolist(), "J": [int(v) for v in js], "weight": pw.tolist()}
        return DirectionalBound(tuple(float(v) for v in d),
                                tuple(c.label for c in self.coordinates), lam, ver.lower,
                                inner, point, spec, cert, ver, rnd)
