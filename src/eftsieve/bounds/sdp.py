"""The semidefinite programs of the ``extremal`` family, built once and re-solved.

All three programs share the constraint ``S + S^x = M(.)`` restricted to one
representative of each orbit of matrix entries under transposition and crossing (the
other rows repeat them), with S PSD on the n^2-dimensional pair space:

* :meth:`ExtremalSDP.membership`: maximise t with rho = S + t I, rho + rho^x = M(c),
  t <= 1.  t* > 0 means c is strictly inside, t* < 0 outside; the dual of S >= 0 is a
  separating Z.
* :meth:`ExtremalSDP.shoot`: maximise lambda with S + S^x = M(c0) + lambda M(d),
  lambda <= cap: the boundary along a ray, and the supporting hyperplane there.
* :meth:`ExtremalSDP.centre`: maximise t with rho = S + t I, rho + rho^x = M(c),
  tau(c) = 1: a well-inside point of the cone and its rho.

The solver is Clarabel (through cvxpy; SCS as fall-back).  Solver statuses are returned
as they come; no result is trusted without the checks of :mod:`eftsieve.bounds.cones`.
cvxpy is imported lazily.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem, as_matrix, cross


@dataclass(frozen=True)
class SDPResult:
    """One solve.

    Attributes
    ----------
    status
        The solver status (``optimal``, ``optimal_inaccurate``, ``infeasible``, ...).
    value
        The optimal value (t* or lambda*), nan when not solved.
    rho
        The primal matrix rho (or S for :meth:`ExtremalSDP.shoot`), or None.
    z
        The dual matrix of S >= 0, or None.
    c
        The optimal coefficients (:meth:`ExtremalSDP.centre`), or None.
    """

    status: str
    value: float
    rho: np.ndarray | None
    z: np.ndarray | None
    c: np.ndarray | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"status": self.status, "value": self.value}


def orbit_representatives(n: int) -> np.ndarray:
    """Flat indices (into n^2 x n^2) of one entry per orbit under transpose and crossing.

    Both maps are involutions on the entries; the smallest index of each orbit is found by
    propagating minimum labels along them until nothing changes.
    """
    n2 = n * n
    transpose = np.arange(n2 * n2).reshape(n2, n2).T.ravel()
    crossing = _cross_perm(n)
    label = np.arange(n2 * n2)
    while True:
        new = np.minimum(label, np.minimum(label[transpose], label[crossing]))
        if np.array_equal(new, label):
            break
        label = new
    return np.unique(label)


def _cross_perm(n: int) -> np.ndarray:
    """perm with vec(X^x) = vec(X)[perm] (C order)."""
    n2 = n * n
    return cross(np.arange(n2 * n2, dtype=float).reshape(n2, n2)).astype(int).ravel()


class ExtremalSDP:
    """The three programs of the ``extremal`` family for one :class:`ConeProblem`."""

    def __init__(self, problem: ConeProblem, solver: str = "CLARABEL") -> None:
        import cvxpy as cp

        self.problem = problem
        self.solver = solver
        n2 = problem.n ** 2
        reps = orbit_representatives(problem.n)
        perm = _cross_perm(problem.n)
        self._mr = problem.matrices().reshape(problem.k, -1)[:, reps].T   # (rows, k)
        eye = np.eye(n2).ravel()
        self._i_rows = (eye + eye[perm])[reps]                            # (I + I^x) rows

        def lhs(s: Any) -> Any:
            flat = cp.reshape(s, (n2 * n2,), order="C")
            return (flat + flat[perm])[reps]

        # membership: max t, (S + tI) + (S + tI)^x = M(c)
        self._c = cp.Parameter(problem.k)
        self._s1, self._t1 = cp.Variable((n2, n2), symmetric=True), cp.Variable()
        self._psd1 = self._s1 >> 0
        self._p1 = cp.Problem(cp.Maximize(self._t1), [
            self._psd1, lhs(self._s1) + self._t1 * self._i_rows == self._mr @ self._c,
            self._t1 <= 1])
        # shooting: max lam, S + S^x = M(c0) + lam M(d)
        self._c0, self._d = cp.Parameter(problem.k), cp.Parameter(problem.k)
        self._cap = cp.Parameter(nonneg=True)
        self._s2, self._lam = cp.Variable((n2, n2), symmetric=True), cp.Variable()
        self._psd2 = self._s2 >> 0
        self._p2 = cp.Problem(cp.Maximize(self._lam), [
            self._psd2, lhs(self._s2) == self._mr @ self._c0 + self._lam * (self._mr @ self._d),
            self._lam <= self._cap])
        # centre: max t, (S + tI) + (S + tI)^x = M(c), tau . c = 1
        self._s3, self._t3 = cp.Variable((n2, n2), symmetric=True), cp.Variable()
        self._cv = cp.Variable(problem.k)
        self._p3 = cp.Problem(cp.Maximize(self._t3), [
            self._s3 >> 0, lhs(self._s3) + self._t3 * self._i_rows == self._mr @ self._cv,
            problem.tau() @ self._cv == 1, self._t3 <= 1])

    def _solve(self, prob: Any) -> str:
        """Solve; an inaccurate solve shows in the returned status (cvxpy's warning about
        it is absorbed, the status says the same)."""
        import warnings

        import cvxpy as cp

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)
            try:
                prob.solve(solver=self.solver)
            except cp.error.SolverError:
                try:
                    prob.solve(solver="SCS", eps=1e-9, max_iters=200_000)
                except cp.error.SolverError as err:
                    return f"solver_error: {err}"
        return str(prob.status)

    def membership(self, c: np.ndarray) -> SDPResult:
        """max t with rho = S + t I (module docstring); c is scaled to unit norm."""
        c = np.asarray(c, dtype=float)
        self._c.value = c / np.linalg.norm(c)
        status = self._solve(self._p1)
        if self._s1.value is None or self._t1.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t1.value)
        rho = self._s1.value + t * np.eye(self._s1.shape[0])
        z = None if self._psd1.dual_value is None else np.asarray(self._psd1.dual_value)
        return SDPResult(status, t, rho, z)

    def shoot(self, c0: np.ndarray, d: np.ndarray, cap: float = 1e3) -> SDPResult:
        """max lam with M(c0 + lam d) in C, lam <= cap; rho is S at the boundary."""
        self._c0.value = np.asarray(c0, dtype=float)
        self._d.value = np.asarray(d, dtype=float)
        self._cap.value = float(cap)
        status = self._solve(self._p2)
        if self._s2.value is None or self._lam.value is None:
            return SDPResult(status, float("nan"), None, None)
        z = None if self._psd2.dual_value is None else np.asarray(self._psd2.dual_value)
        return SDPResult(status, float(self._lam.value), np.asarray(self._s2.value), z)

    def centre(self) -> SDPResult:
        """The point of {tau . c = 1} deepest inside the cone (largest lambda_min(rho))."""
        status = self._solve(self._p3)
        if self._s3.value is None or self._cv.value is None or self._t3.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t3.value)
        rho = self._s3.value + t * np.eye(self._s3.shape[0])
        return SDPResult(status, t, rho, None, np.asarray(self._cv.value, dtype=float))


def tensor_matrix(problem: ConeProblem, c: np.ndarray) -> np.ndarray:
    """M(c) as an n^2 x n^2 matrix (rows (ij), columns (kl))."""
    return as_matrix(problem.tensor(c))
