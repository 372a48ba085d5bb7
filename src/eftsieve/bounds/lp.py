"""The exact re-solve of an LP spectrum: the inner (primal) side of a sum-rule bound.

The LP of :mod:`eftsieve.bounds.sum_rules` returns a positive spectrum that meets
<1> = 1 and <n_i> = 0 only to the solver's tolerance.  :func:`exact_spectrum` keeps its
support and re-solves the equations in ``dps``-digit mpmath arithmetic (least squares when
there are fewer states than equations, else the nearest exact solution to the LP
weights), drops states whose weight comes out non-positive and tries once more.  The
result is a positive spectrum satisfying every imposed constraint to 10^-(dps - 15)
relative to the size of each row, so its coordinates are an allowed (inner) point.
"""

from __future__ import annotations

from typing import Any, Protocol

import numpy as np

from eftsieve.errors import SolverError


class ExactRow(Protocol):
    """A constraint row evaluated exactly on one state (a null constraint, e.g.
    :class:`eftsieve.bounds.sum_rules.StatePolynomial`)."""

    def mp_value(self, y: float, spin: int, mp: Any) -> Any: ...


def exact_spectrum(nulls: tuple[ExactRow, ...], y: np.ndarray, spin: np.ndarray,
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
