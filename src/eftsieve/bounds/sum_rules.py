"""Sum-rule bounds as a moment problem: a linear programme, its dual and a verified certificate.

Dispersive sum rules write each low-energy coefficient as an average over heavy states
(mass m >= M, even spin J) with a non-negative measure, normalised here so that <1> = 1
(for the scalar EFT: the g2 sum rule).  A state is labelled by y = M^2/m^2 in (0, 1] and
j = J(J+1); coordinates and null constraints are :class:`StatePolynomial` s

    f(y, J) = sum_{e, q <= e} c[e, q] y^e j^q = sum c[e, q] y^(e-q) w^q,   w = y j,

where w -> (bM/2)^2 at large J and fixed impact parameter b = 2J/m.  The allowed set is
{<f>} over measures with <1> = 1 and <n_i> = 0.  For min <o> along a direction:

* **primal (inner)**: the LP over a finite grid returns a positive spectrum, re-solved on
  its support in 40-digit arithmetic (:func:`~eftsieve.bounds.lp.exact_spectrum`)
  so that it meets every imposed constraint exactly.  Its value lies *above* the minimum
  (a restriction), on the allowed side of the truncated problem; null constraints beyond
  the imposed order are not enforced on it.
* **dual (outer)**: any multipliers c_i give <o> = <o - sum c_i n_i> >= inf_states B with
  B = o - sum c_i n_i.  :func:`~eftsieve.bounds.verify.verify_functional` bounds inf B
  from below over *every* state: each even spin up to a cut-off over all y (branch and
  bound with rigorous polynomial enclosures, floating-point error subtracted, 40-digit
  fallback), and all larger spins through the continuous relaxation j >= j',
  y <= min(1, w/j'), which holds the m -> infinity, J -> infinity and fixed-b limits,
  closed by a domination bound as w -> infinity.  The verified value lies *below* the
  true minimum: a rigorous exclusion.

:func:`solve_lp` wraps HiGHS (``scipy.optimize.linprog``), checks primal and dual residuals
and raises :class:`~eftsieve.errors.SolverError` unless optimal.  :class:`SumRuleSolver`
runs the cutting-plane loop (add the violating states, re-solve), else raises.

Reference: the dual formulation with null constraints follows S. Caron-Huot and V. Van
Duong, "Extremal Effective Field Theories", arXiv:2011.02957, Sec. 3 (an SDP there).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np

from eftsieve.bounds.lp import exact_spectrum
from eftsieve.bounds.verify import (
    Verification,
    VerifySettings,
    evaluate,
    tail_cutoff,
    verify_functional,
)
from eftsieve.errors import SolverError
from eftsieve.tolerances import FEASIBILITY_TOL

__all__ = ["FAINT", "W_REF", "DirectionalBound", "LPResult", "StatePolynomial", "SumRuleSolver",
           "Verification", "VerifySettings", "evaluate", "exact_spectrum", "solve_lp",
           "verify_functional"]

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
        cut = tail_cutoff(obj - np.tensordot(mult, self._nc, 1), target)
        if cut is not None and cut <= w_max:
            return mult
        beta = solve_triangular(self._r, self._nc[:, -1, -1], trans="T")
        alpha = solve_triangular(self._r, beta) / float(beta @ beta)
        for k in range(-300, 20):
            trial = mult - 10.0**k * alpha
            cut = tail_cutoff(obj - np.tensordot(trial, self._nc, 1), target)
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
