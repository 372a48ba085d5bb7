"""The semidefinite programs of the ``extremal`` family, built once and re-solved.

All three programs share the constraint ``S + S^x = M(.)`` restricted to one
representative of each orbit of matrix entries under transposition and crossing (the
other rows repeat them), with S PSD on the n^2-dimensional pair space and block diagonal
in the sectors that the sign symmetries of M imply (:mod:`eftsieve.bounds.sectors`; one
block when there are none):

* :meth:`ExtremalSDP.membership`: maximise t with rho = S + t I, rho + rho^x = M(c),
  t <= 1.  t* > 0 means c is strictly inside, t* < 0 outside; the dual of S >= 0 is a
  separating Z.
* :meth:`ExtremalSDP.shoot`: maximise lambda with S + S^x = M(c0) + lambda M(d),
  lambda <= cap: the boundary along a ray, and the supporting hyperplane there.
* :meth:`ExtremalSDP.centre`: maximise t with rho = S + t I, rho + rho^x = M(c),
  tau(c) = 1: a well-inside point of the cone and its rho.
* :meth:`ExtremalSDP.shoot_free`: :meth:`~ExtremalSDP.shoot` with some coefficients free
  (variables of the program): the boundary of the cone's projection onto the others
  along a ray (:mod:`eftsieve.bounds.projection`).  The free coefficients' rows of the
  dual vanish at the optimum, up to the solver's accuracy.

The solver is Clarabel (through cvxpy; SCS as fall-back).  Solver statuses are returned
as they come; no result is trusted without the checks of :mod:`eftsieve.bounds.cones`.
cvxpy is imported lazily.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem, as_matrix, cross
from eftsieve.bounds.sectors import pair_sectors


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


def _row_maps(sectors: list[np.ndarray], n2: int, perm: np.ndarray, reps: np.ndarray,
              ) -> list[Any]:
    """Per sector, the sparse map vec(S_b) -> rows of (S + S^x) at the orbit
    representatives, with S the block-diagonal embedding of the blocks S_b."""
    from scipy import sparse

    where = np.full(n2 * n2, -1, dtype=np.int64)      # flat (p, q) -> (sector, flat in block)
    block = np.full(n2 * n2, -1, dtype=np.int64)
    for b, sec in enumerate(sectors):
        m = len(sec)
        flat = (sec[:, None] * n2 + sec[None, :]).ravel()
        where[flat] = np.arange(m * m)
        block[flat] = b
    out = []
    for b, sec in enumerate(sectors):
        m = len(sec)
        rows, cols = [], []
        for source in (reps, perm[reps]):             # S at the entry, and at its crossing
            hit = block[source] == b
            rows.append(np.nonzero(hit)[0])
            cols.append(where[source[hit]])
        r, c = np.concatenate(rows), np.concatenate(cols)
        out.append(sparse.csr_matrix((np.ones(len(r)), (r, c)), shape=(len(reps), m * m)))
    return out


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
        # S is block diagonal in the sectors of the pair space (eftsieve.bounds.sectors)
        self.sectors = pair_sectors(problem.tensors)
        rows_of = _row_maps(self.sectors, n2, perm, reps)
        mr = problem.matrices().reshape(problem.k, -1)[:, reps].T           # (rows, k)
        eye_live = np.zeros((n2, n2))
        for sec in self.sectors:
            eye_live[sec, sec] = 1.0                    # identity on the live pairs only
        eye = eye_live.ravel()
        i_rows = (eye + eye[perm])[reps]                                     # (I + I^x) rows
        live = np.nonzero(sum(abs(a).sum(axis=1).A1 for a in rows_of)
                          + np.abs(mr).sum(axis=1) + np.abs(i_rows) > 0)[0]
        rows_of = [a[live] for a in rows_of]
        self._mr, self._i_rows = mr[live], i_rows[live]

        def blocks() -> list[Any]:
            return [cp.Variable((len(sec), len(sec)), symmetric=True) for sec in self.sectors]

        def lhs(bs: list[Any]) -> Any:
            return sum(a @ cp.reshape(b, (b.shape[0] ** 2,), order="C")
                       for a, b in zip(rows_of, bs, strict=True))

        # membership: max t, (S + tI) + (S + tI)^x = M(c)
        self._c = cp.Parameter(problem.k)
        self._s1, self._t1 = blocks(), cp.Variable()
        self._psd1 = [b >> 0 for b in self._s1]
        self._p1 = cp.Problem(cp.Maximize(self._t1), [
            *self._psd1, lhs(self._s1) + self._t1 * self._i_rows == self._mr @ self._c,
            self._t1 <= 1])
        # shooting: max lam, S + S^x = M(c0) + lam M(d)
        self._c0, self._d = cp.Parameter(problem.k), cp.Parameter(problem.k)
        self._cap = cp.Parameter(nonneg=True)
        self._s2, self._lam = blocks(), cp.Variable()
        self._psd2 = [b >> 0 for b in self._s2]
        self._p2 = cp.Problem(cp.Maximize(self._lam), [
            *self._psd2, lhs(self._s2) == self._mr @ self._c0 + self._lam * (self._mr @ self._d),
            self._lam <= self._cap])
        # centre: max t, (S + tI) + (S + tI)^x = M(c), tau . c = 1
        self._s3, self._t3 = blocks(), cp.Variable()
        self._cv = cp.Variable(problem.k)
        self._p3 = cp.Problem(cp.Maximize(self._t3), [
            *[b >> 0 for b in self._s3],
            lhs(self._s3) + self._t3 * self._i_rows == self._mr @ self._cv,
            problem.tau() @ self._cv == 1, self._t3 <= 1])
        self._lhs, self._blocks = lhs, blocks
        self._free_programs: dict[tuple[int, ...], Any] = {}

    def _eye(self) -> np.ndarray:
        """The identity on the live pairs (dead pairs: eftsieve.bounds.sectors)."""
        out = np.zeros((self.problem.n ** 2,) * 2)
        for sec in self.sectors:
            out[sec, sec] = 1.0
        return out

    def _full(self, parts: list[Any]) -> np.ndarray | None:
        """The n^2 x n^2 matrix of per-sector blocks (values or duals), or None."""
        n2 = self.problem.n ** 2
        out = np.zeros((n2, n2))
        for sec, part in zip(self.sectors, parts, strict=True):
            if part is None:
                return None
            out[np.ix_(sec, sec)] = np.asarray(part)
        return out

    def _solve(self, prob: Any, time_limit: float | None = None, fallback: bool = True) -> str:
        """Solve; an inaccurate solve shows in the returned status (cvxpy's warning about
        it is absorbed, the status says the same).  With ``time_limit`` (seconds, Clarabel
        only) a solve that runs out returns its status (``user_limit``), never a value.
        When Clarabel raises, SCS is tried (``fallback``) or the error is the status."""
        import warnings

        import cvxpy as cp

        opts = {"time_limit": float(time_limit)} if time_limit and self.solver == "CLARABEL" \
            else {}
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)
            try:
                prob.solve(solver=self.solver, **opts)
            except cp.error.SolverError as first:
                if not fallback:
                    return f"solver_error: {first}"
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
        s1 = self._full([b.value for b in self._s1])
        if s1 is None or self._t1.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t1.value)
        rho = s1 + t * self._eye()
        return SDPResult(status, t, rho, self._full([c.dual_value for c in self._psd1]))

    def shoot(self, c0: np.ndarray, d: np.ndarray, cap: float = 1e3) -> SDPResult:
        """max lam with M(c0 + lam d) in C, lam <= cap; rho is S at the boundary."""
        self._c0.value = np.asarray(c0, dtype=float)
        self._d.value = np.asarray(d, dtype=float)
        self._cap.value = float(cap)
        status = self._solve(self._p2)
        s2 = self._full([b.value for b in self._s2])
        if s2 is None or self._lam.value is None:
            return SDPResult(status, float("nan"), None, None)
        z = self._full([c.dual_value for c in self._psd2])
        return SDPResult(status, float(self._lam.value), s2, z)

    def shoot_free(self, c0: np.ndarray, d: np.ndarray, free: tuple[int, ...],
                   cap: float = 1e3, time_limit: float | None = None) -> SDPResult:
        """max lam with M(c0 + lam d + f) in C for some f supported on ``free`` (indices of
        coefficients; c0 and d should vanish there), lam <= cap.

        ``rho`` is S at the boundary, ``z`` the dual of S >= 0, ``c`` the lifted point
        c0 + lam d + f (as the solver found it; prove it with
        :func:`eftsieve.bounds.cones.verify_rho` before use).  Where the boundary is
        degenerate, interior-point solvers stall on the free directions; the program is
        then re-solved with a small penalty -p |f|_1 in the objective (p = 1e-7, then
        1e-6), which bounds the free rows of the dual by p instead of pinning them to 0.
        The lifted point stays a point of the cone, and the facet's residual on the free
        coefficients is measured from its certificate (:mod:`eftsieve.bounds.projection`).
        No SCS fall-back: a shot that fails is reported as failed.
        """
        import cvxpy as cp

        key = tuple(sorted(int(i) for i in free))
        if key not in self._free_programs:
            k = self.problem.k
            sel = np.zeros((k, len(key)))
            sel[list(key), range(len(key))] = 1.0
            c0p, dp = cp.Parameter(k), cp.Parameter(k)
            capp, pen = cp.Parameter(nonneg=True), cp.Parameter(nonneg=True)
            s, lam, f = self._blocks(), cp.Variable(), cp.Variable(len(key))
            psd = [b >> 0 for b in s]
            prob = cp.Problem(cp.Maximize(lam - pen * cp.norm1(f)), [
                *psd, self._lhs(s) == self._mr @ c0p + lam * (self._mr @ dp)
                + (self._mr @ sel) @ f, lam <= capp])
            self._free_programs[key] = (prob, c0p, dp, capp, pen, s, lam, f, psd, sel)
        prob, c0p, dp, capp, pen, s, lam, f, psd, sel = self._free_programs[key]
        c0p.value = np.asarray(c0, dtype=float)
        dp.value = np.asarray(d, dtype=float)
        capp.value = float(cap)
        status = "not solved"
        for penalty in (0.0, 1e-7, 1e-6):
            pen.value = penalty
            status = self._solve(prob, time_limit, fallback=False)
            if status in ("optimal", "optimal_inaccurate") and lam.value is not None:
                break
        else:
            return SDPResult(status, float("nan"), None, None)
        sv = self._full([b.value for b in s])
        if sv is None or f.value is None:
            return SDPResult(status, float("nan"), None, None)
        z = self._full([c.dual_value for c in psd])
        lifted = np.asarray(c0, dtype=float) + float(lam.value) * np.asarray(d, dtype=float) \
            + sel @ np.asarray(f.value, dtype=float)
        return SDPResult(status, float(lam.value), sv, z, lifted)

    def centre(self) -> SDPResult:
        """The point of {tau . c = 1} deepest inside the cone (largest lambda_min(rho))."""
        status = self._solve(self._p3)
        s3 = self._full([b.value for b in self._s3])
        if s3 is None or self._cv.value is None or self._t3.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t3.value)
        rho = s3 + t * self._eye()
        return SDPResult(status, t, rho, None, np.asarray(self._cv.value, dtype=float))


def tensor_matrix(problem: ConeProblem, c: np.ndarray) -> np.ndarray:
    """M(c) as an n^2 x n^2 matrix (rows (ij), columns (kl))."""
    return as_matrix(problem.tensor(c))
