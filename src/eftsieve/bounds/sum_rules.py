"""Sum-rule bounds as a moment problem: a linear programme, its dual and a verified certificate.

Dispersive sum rules write every low-energy coefficient as an average over heavy states
(mass m >= M, spin J) with a non-negative measure.  Normalise the measure so that one
average (for the scalar EFT: the g2 sum rule) is one; a heavy state is then labelled by
y = M^2/m^2 in (0, 1] and j = J(J+1), J = 0, 2, 4, ..., and every coordinate and every
null constraint is a :class:`StatePolynomial`

    f(y, J) = sum_{e, l <= e} c[e, l] y^e j^l = sum c[e, l] y^(e-l) w^l,   w = y j,

(w -> b^2 M^2/4 at large J and fixed impact parameter b = 2J/m).  The allowed coordinates
are the averages <f> over measures with <1> = 1 and <n_i> = 0 for the null constraints.

Which side of the truth each number is on, for the minimum of <o> along a direction o:

* **primal (inner)**: the LP over a finite grid of states returns a positive spectrum; it
  is re-solved on its support in 40-digit arithmetic (:func:`exact_spectrum`) so that it
  satisfies the normalisation and every imposed null constraint exactly.  Its value is
  *above* the minimum over all states (a restriction), i.e. on the allowed side of the
  truncated problem.  It is **not** a proof that a full crossing-symmetric amplitude with
  that spectrum exists: null constraints beyond the imposed order are not enforced.
* **dual (outer)**: any multipliers c_i give <o> = <o - sum c_i n_i> >= inf over states
  of B(y, J) = o - sum c_i n_i (since <1> = 1).  :func:`verify_functional` bounds that
  infimum from below over *every* state: exactly per even spin up to a cut-off (branch
  and bound in y with monotone-term bounds, which is rigorous up to a floating-point
  error term that is subtracted), and for all larger spins through the continuous
  relaxation j >= j_c in the variables (w, y <= min(1, w/j_c)), which contains the
  m -> infinity, J -> infinity and fixed-impact-parameter limits, closed by a
  leading-coefficient domination bound for w -> infinity.  The verified infimum is
  *below* the true minimum: a rigorous exclusion.

The LP is a standard-form problem solved with HiGHS through :func:`solve_lp`, which
checks primal and dual residuals and raises :class:`~eftsieve.errors.SolverError` on any
status other than optimal.  The cutting-plane loop of :class:`SumRuleSolver` adds the
states that violate the dual functional and re-solves, a few rounds, else raises.

Reference: the LP/dual formulation of positivity bounds with null constraints follows
S. Caron-Huot and V. Van Duong, "Extremal Effective Field Theories", arXiv:2011.02957,
Sec. 3 (there solved as a semi-definite programme over continuous m).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.tolerances import FEASIBILITY_TOL

_EPS = float(np.finfo(float).eps)
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
             tol: float = FEASIBILITY_TOL) -> LPResult:
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
    opts = {"primal_feasibility_tolerance": 1e-10, "dual_feasibility_tolerance": 1e-10}
    res = linprog(c, A_ub=a_ub_ if len(b_ub_) else None, b_ub=b_ub_ if len(b_ub_) else None,
                  A_eq=a_eq_ if len(b_eq_) else None, b_eq=b_eq_ if len(b_eq_) else None,
                  bounds=list(zip(lb, ub, strict=True)), method="highs", options=opts)
    if res.status != 0:
        raise SolverError(_LP_STATUS.get(res.status, f"status {res.status}"), problem)
    x = np.asarray(res.x)
    y = np.asarray(res.eqlin.marginals) if len(b_eq_) else np.zeros(0)
    z = np.asarray(res.ineqlin.marginals) if len(b_ub_) else np.zeros(0)
    red = c - a_eq_.T @ y - a_ub_.T @ z
    scale = max(1.0, float(np.abs(c).max(initial=0)), float(np.abs(b_eq_).max(initial=0)),
                float(np.abs(b_ub_).max(initial=0)))
    p_res = max(float(np.abs(a_eq_ @ x - b_eq_).max(initial=0)),
                float(np.maximum(a_ub_ @ x - b_ub_, 0).max(initial=0)),
                float(np.maximum(lb - x, 0).max(initial=0)),
                float(np.maximum(x - ub, 0).max(initial=0)))
    # dual feasibility: z <= 0; reduced cost >= 0 where only the lower bound can be active,
    # <= 0 where only the upper bound can, = 0 for free variables
    viol = np.where(np.isfinite(lb) & ~np.isfinite(ub), np.maximum(-red, 0), 0.0)
    viol = np.maximum(viol, np.where(~np.isfinite(lb) & np.isfinite(ub), np.maximum(red, 0), 0))
    viol = np.maximum(viol, np.where(~np.isfinite(lb) & ~np.isfinite(ub), np.abs(red), 0))
    d_res = max(float(viol.max(initial=0)), float(np.maximum(z, 0).max(initial=0)))
    red_lb = np.where(np.isfinite(lb), np.maximum(red, 0) * np.where(np.isfinite(lb), lb, 0), 0)
    red_ub = np.where(np.isfinite(ub), np.minimum(red, 0) * np.where(np.isfinite(ub), ub, 0), 0)
    dual_obj = float(b_eq_ @ y + b_ub_ @ z + red_lb.sum() + red_ub.sum())
    gap = abs(float(c @ x) - dual_obj)
    if max(p_res, d_res, gap) > tol * scale:
        raise SolverError("inaccurate", f"{problem} (primal residual {p_res:.2e}, dual "
                          f"residual {d_res:.2e}, duality gap {gap:.2e})")
    return LPResult(x, float(c @ x), y, z, red, "optimal", p_res, d_res, gap)


# ---- polynomials on the heavy states -------------------------------------------------------
@dataclass(frozen=True)
class StatePolynomial:
    """f(y, J) = sum_{e, l <= e} c[e][l] y^e (J(J+1))^l with exact rational coefficients.

    Attributes
    ----------
    exact
        ``exact[e][l]`` as :class:`fractions.Fraction`; rows have length e + 1.
    label
        A name (``g3t``, ``n4``, ...).
    """

    exact: tuple[tuple[Fraction, ...], ...]
    label: str = ""

    @property
    def degree(self) -> int:
        return len(self.exact) - 1

    def coeffs(self, size: int | None = None) -> np.ndarray:
        """The float coefficient matrix c[e, l], zero-padded to ``size``."""
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
            for l, v in enumerate(row):
                if v:
                    total += mp.mpf(v.numerator) / v.denominator * yy**e * jj**l
        return total

    def to_dict(self) -> dict[str, Any]:
        return {"label": self.label, "coefficients_y^e_j^l": [[str(v) for v in row]
                                                              for row in self.exact]}


def evaluate(c: np.ndarray, y: np.ndarray, spin: np.ndarray, absolute: bool = False
             ) -> np.ndarray:
    """sum c[e, l] y^(e-l) w^l with w = y J(J+1) (or the sum of |terms| if ``absolute``)."""
    y = np.asarray(y, dtype=float)
    w = y * np.asarray(spin, dtype=float) * (np.asarray(spin, dtype=float) + 1.0)
    cc = np.abs(c) if absolute else c
    out = np.zeros(np.broadcast(y, w).shape)
    for e in range(c.shape[0]):
        for l in range(e + 1):
            if cc[e, l] != 0.0:
                out = out + cc[e, l] * y ** (e - l) * w**l
    return out
