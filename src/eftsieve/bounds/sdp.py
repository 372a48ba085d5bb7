"""The semidefinite programs of the ``extremal`` family, built once and re-solved.

All three programs share the constraint ``S + S^x = M(.)`` restricted to one
representative of each orbit of matrix entries under transposition and crossing (the
other rows repeat them), with S PSD on the n^2-dimensional pair space and block diagonal
in the sectors that the sign symmetries of M imply (:mod:`eftsieve.bounds.sectors`; one
block when there are none), and, where M has continuous symmetries, first solved on the
finer blocks they imply (:mod:`eftsieve.bounds.symmetry`; see :class:`ExtremalSDP`):

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

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem, as_matrix, cross, facet_from_dual, verify_rho
from eftsieve.bounds.sectors import pair_sectors
from eftsieve.tolerances import CONE_BOUNDARY_TOL


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
    #: the verified facet of z when the program already built it (reduced programs)
    cert: Any = None
    #: verify_rho's (proven, lambda_min relative) for rho at the unit point, when the
    #: program already checked it (reduced programs)
    verified: tuple[bool, float] | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"status": self.status, "value": self.value}

    def facet(self, problem: ConeProblem) -> Any:
        """The verified facet of ``z`` (:func:`eftsieve.bounds.cones.facet_from_dual`): the
        one the program already built, else built now; None without z or a valid one."""
        if self.cert is not None:
            return self.cert
        return None if self.z is None else facet_from_dual(problem, self.z)


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


def _basis_maps(sectors: list[np.ndarray], parts: list[tuple[int, np.ndarray]], n2: int,
                perm: np.ndarray, reps: np.ndarray) -> list[Any]:
    """Per block (sector index, orthonormal basis B of shape (len(sector), m)), the map
    vec(S_b) -> rows of (rho + rho^x) at the orbit representatives, with
    rho = sum_b E_b B S_b B^T E_b^T (E_b embeds the block's sector)."""
    from scipy import sparse

    rp, rq = np.divmod(reps, n2)
    xp, xq = np.divmod(perm[reps], n2)
    out = []
    for b, basis in parts:
        m = basis.shape[1]
        full = np.zeros((n2, m))
        full[sectors[b]] = basis
        inside = np.zeros(n2, dtype=bool)
        inside[sectors[b]] = True
        rows = np.flatnonzero((inside[rp] & inside[rq]) | (inside[xp] & inside[xq]))
        a = (np.einsum("ir,is->irs", full[rp[rows]], full[rq[rows]])
             + np.einsum("ir,is->irs", full[xp[rows]], full[xq[rows]])).reshape(len(rows), -1)
        mat = np.zeros((len(reps), m * m))
        mat[rows] = a
        out.append(sparse.csr_matrix(mat))
    return out


def _independent_rows(stacked: np.ndarray, rel: float = 1e-9) -> np.ndarray:
    """Indices of a maximal set of linearly independent rows (pivoted QR of the transpose);
    the others are combinations of them, so their equations follow (up to ``rel``)."""
    from scipy.linalg import qr

    if not len(stacked):
        return np.zeros(0, dtype=int)
    _, r, piv = qr(stacked.T, mode="economic", pivoting=True)
    d = np.abs(np.diag(r))
    rank = int(np.count_nonzero(d > rel * d[0])) if len(d) and d[0] > 0 else 0
    return np.sort(piv[:rank])


class _Programs:
    """The membership, shooting and centre programs for one block structure of S.

    ``parts`` lists the blocks as (sector index, basis); None means one block per sector
    with the identity as its basis (the sparse maps of :func:`_row_maps`)."""

    def __init__(self, problem: ConeProblem, sectors: list[np.ndarray], solver: str,
                 parts: list[tuple[int, np.ndarray]] | None = None) -> None:
        import cvxpy as cp

        self.problem, self.sectors, self.solver = problem, sectors, solver
        n2 = problem.n ** 2
        reps = orbit_representatives(problem.n)
        perm = _cross_perm(problem.n)
        if parts is None:
            self.parts: list[tuple[int, np.ndarray | None]] = [(b, None)
                                                               for b in range(len(sectors))]
            rows_of = _row_maps(sectors, n2, perm, reps)
        else:
            self.parts = list(parts)
            rows_of = _basis_maps(sectors, parts, n2, perm, reps)
        mr = problem.matrices().reshape(problem.k, -1)[:, reps].T           # (rows, k)
        self._eye_live = np.zeros((n2, n2))
        for sec in sectors:
            self._eye_live[sec, sec] = 1.0              # identity on the live pairs only
        eye = self._eye_live.ravel()
        i_rows = (eye + eye[perm])[reps]                                     # (I + I^x) rows
        live = np.nonzero(sum(abs(a).sum(axis=1).A1 for a in rows_of)
                          + np.abs(mr).sum(axis=1) + np.abs(i_rows) > 0)[0]
        if parts is not None:
            # a block basis mixes entries, so rows repeat one another: keep independent ones
            stacked = np.hstack([a[live].toarray() for a in rows_of]
                                + [i_rows[live, None], mr[live]])
            live = live[_independent_rows(stacked)]
        rows_of = [a[live] for a in rows_of]
        self._mr, self._i_rows = mr[live], i_rows[live]
        sizes = [len(sectors[b]) if basis is None else basis.shape[1]
                 for b, basis in self.parts]
        self._rows_of, self._sizes = rows_of, sizes
        # per sector: its blocks' bases side by side, and which blocks they are
        self._sector_bases: dict[int, tuple[np.ndarray, list[int]]] | None = None
        if parts is not None:
            self._sector_bases = {}
            for j, (b, basis) in enumerate(parts):
                prev, members = self._sector_bases.get(b, (np.zeros((len(sectors[b]), 0)), []))
                self._sector_bases[b] = (np.hstack([prev, basis]), [*members, j])
        self._direct: Any = None

        def blocks() -> list[Any]:
            return [cp.Variable((m, m), symmetric=True) for m in sizes]

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

    def eye(self) -> np.ndarray:
        """The identity on the live pairs (dead pairs: eftsieve.bounds.sectors; built once,
        do not modify)."""
        return self._eye_live

    def full(self, values: list[Any]) -> np.ndarray | None:
        """The n^2 x n^2 matrix of per-block values (or duals), or None."""
        n2 = self.problem.n ** 2
        out = np.zeros((n2, n2))
        if any(part is None for part in values):
            return None
        if self._sector_bases is None:                 # one block per sector
            for (b, _), part in zip(self.parts, values, strict=True):
                out[np.ix_(self.sectors[b], self.sectors[b])] = np.asarray(part)
            return out
        for b, (basis, members) in self._sector_bases.items():
            inner = np.zeros((basis.shape[1],) * 2)
            at = 0
            for j in members:
                part = np.asarray(values[j])
                m = len(part)
                inner[at:at + m, at:at + m] = part
                at += m
            out[np.ix_(self.sectors[b], self.sectors[b])] = basis @ inner @ basis.T
        return out

    def solve(self, prob: Any, time_limit: float | None = None, fallback: bool = True) -> str:
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

    def membership_direct(self, c: np.ndarray) -> SDPResult:
        """:meth:`membership` with Clarabel called directly (the program's data built once,
        only its right-hand side updated per point): the same program without cvxpy's
        per-solve work, which is most of the time of a small program.  The PSD blocks
        are Clarabel's scaled upper triangles (off-diagonal entries times sqrt 2)."""
        import clarabel

        if self._direct is None:
            self._direct = _DirectMembership(self, clarabel)
        return self._direct.solve(c)

    def membership(self, c: np.ndarray) -> SDPResult:
        self._c.value = c
        status = self.solve(self._p1)
        s1 = self.full([b.value for b in self._s1])
        if s1 is None or self._t1.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t1.value)
        rho = s1 + t * self.eye()
        return SDPResult(status, t, rho, self.full([c.dual_value for c in self._psd1]))

    def shoot(self, c0: np.ndarray, d: np.ndarray, cap: float) -> SDPResult:
        self._c0.value = np.asarray(c0, dtype=float)
        self._d.value = np.asarray(d, dtype=float)
        self._cap.value = float(cap)
        status = self.solve(self._p2)
        s2 = self.full([b.value for b in self._s2])
        if s2 is None or self._lam.value is None:
            return SDPResult(status, float("nan"), None, None)
        z = self.full([c.dual_value for c in self._psd2])
        return SDPResult(status, float(self._lam.value), s2, z)

    def centre(self) -> SDPResult:
        status = self.solve(self._p3)
        s3 = self.full([b.value for b in self._s3])
        if s3 is None or self._cv.value is None or self._t3.value is None:
            return SDPResult(status, float("nan"), None, None)
        t = float(self._t3.value)
        rho = s3 + t * self.eye()
        return SDPResult(status, t, rho, None, np.asarray(self._cv.value, dtype=float))


_SOLVED = ("optimal", "optimal_inaccurate")
#: Clarabel's statuses as cvxpy names them
_CLARABEL_STATUS = {"Solved": "optimal", "AlmostSolved": "optimal_inaccurate",
                    "PrimalInfeasible": "infeasible", "DualInfeasible": "unbounded",
                    "AlmostPrimalInfeasible": "infeasible_inaccurate",
                    "AlmostDualInfeasible": "unbounded_inaccurate"}


def _svec_maps(m: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For Clarabel's PSD triangle of an m x m block (upper triangle by columns,
    off-diagonal entries scaled by sqrt 2): row and column of each entry and its scale."""
    rows, cols = np.triu_indices(m)
    order = np.lexsort((rows, cols))                 # column by column
    rows, cols = rows[order], cols[order]
    scale = np.where(rows == cols, 1.0, np.sqrt(2.0))
    return rows, cols, scale


class _DirectMembership:
    """The membership program of a :class:`_Programs` as Clarabel data (built once):
    variables the scaled triangles v_b of the blocks and t; minimise -t subject to
    sum_b A_b smat(v_b) + t (I + I^x) = M(c) (zero cone), 1 - t >= 0, v_b in the PSD
    triangle cone."""

    def __init__(self, prog: _Programs, clarabel: Any) -> None:
        from scipy import sparse

        self.prog, self.clarabel = prog, clarabel
        cols, self.maps = [], []
        for a, m in zip(prog._rows_of, prog._sizes, strict=True):
            r, c, sc = _svec_maps(m)
            # vec(S) (C order) from v: S[r, c] = S[c, r] = v / scale
            tt = np.zeros((m * m, len(r)))
            tt[r * m + c, np.arange(len(r))] = 1 / sc
            tt[c * m + r, np.arange(len(r))] = 1 / sc
            cols.append(sparse.csr_matrix(a @ tt))
            self.maps.append((r, c, sc))
        n_eq = prog._mr.shape[0]
        nv = sum(x.shape[1] for x in cols)
        self.nv = nv
        eq = sparse.hstack(cols + [sparse.csr_matrix(prog._i_rows[:, None])]).tocsc()
        cap = sparse.csc_matrix(([1.0], ([0], [nv])), shape=(1, nv + 1))
        psd = sparse.hstack([-sparse.identity(nv), sparse.csc_matrix((nv, 1))])
        self.a = sparse.vstack([eq, cap, psd]).tocsc()
        self.n_eq = n_eq
        self.q = np.zeros(nv + 1)
        self.q[-1] = -1.0
        self.cones = [clarabel.ZeroConeT(n_eq), clarabel.NonnegativeConeT(1)] + [
            clarabel.PSDTriangleConeT(m) for m in prog._sizes]
        self.settings = clarabel.DefaultSettings()
        self.settings.verbose = False
        self.p = sparse.csc_matrix((nv + 1, nv + 1))

    def _blocks(self, vec: np.ndarray) -> list[np.ndarray]:
        out, at = [], 0
        for (r, c, sc), m in zip(self.maps, self.prog._sizes, strict=True):
            v = vec[at:at + len(r)] / sc
            at += len(r)
            mat = np.zeros((m, m))
            mat[r, c] = v
            mat[c, r] = v
            out.append(mat)
        return out

    def solve(self, c: np.ndarray) -> SDPResult:
        b = np.concatenate([self.prog._mr @ c, [1.0], np.zeros(self.nv)])
        # a new solver per point (no state carried from the last one: the same point
        # gives the same bits whatever was solved before, in any thread)
        try:
            solver = self.clarabel.DefaultSolver(self.p, self.q, self.a, b, self.cones,
                                                 self.settings)
            sol = solver.solve()
        except (ValueError, RuntimeError, ArithmeticError) as err:
            # not decisive: the caller solves the point again on the sign sectors
            return SDPResult(f"solver_error: {err}", float("nan"), None, None)
        status = _CLARABEL_STATUS.get(str(sol.status).split(".")[-1], str(sol.status))
        if status not in _SOLVED:
            return SDPResult(status, float("nan"), None, None)
        x, z = np.asarray(sol.x), np.asarray(sol.z)
        t = float(x[-1])
        s_full = self.prog.full(self._blocks(x[:-1]))
        z_full = self.prog.full(self._blocks(z[self.n_eq + 1:]))
        assert s_full is not None and z_full is not None
        return SDPResult(status, t, s_full + t * self.prog.eye(), z_full)


class ExtremalSDP:
    """The programs of the ``extremal`` family for one :class:`ConeProblem`.

    With ``reduce`` (the default) and continuous symmetries of M
    (:mod:`eftsieve.bounds.symmetry`), :meth:`membership`, :meth:`shoot` and
    :meth:`centre` first solve the program on the finer blocks those symmetries imply
    (about six times less solver time on the 12-mode problem of docs/physics_cones.md)
    and keep its answer when it is decisive: a rho that
    :func:`~eftsieve.bounds.cones.verify_rho` proves, or a dual matrix that
    :func:`~eftsieve.bounds.cones.facet_from_dual` turns into a verified facet (that
    separates the point, for membership).  Otherwise the same program is solved on
    the sign sectors alone, as without ``reduce``; :meth:`shoot_free` likewise (decisive:
    a verified facet and a lifted point).  ``reduced_used`` and ``reduced_fallbacks``
    count the reduced answers kept and passed over.
    """

    def __init__(self, problem: ConeProblem, solver: str = "CLARABEL",
                 reduce: bool = True) -> None:
        from eftsieve.bounds.sectors import sign_charges
        from eftsieve.bounds.symmetry import lie_generators, symmetry_blocks

        self.problem = problem
        self.solver = solver
        # S is block diagonal in the sectors of the pair space (eftsieve.bounds.sectors)
        self.sectors = pair_sectors(problem.tensors)
        #: the generators of the continuous symmetries (computed once; none unless reduce)
        self._gens = lie_generators(problem.tensors) if reduce else []
        parts = symmetry_blocks(problem.tensors, self.sectors, sign_charges(problem.tensors),
                                gens=self._gens) if self._gens else None
        #: the finer blocks of the continuous symmetries: (sector, basis) each, or None
        self.symmetry_blocks = parts if parts is not None and len(parts) > len(
            self.sectors) else None
        self._fast = None if self.symmetry_blocks is None else _Programs(
            problem, self.sectors, solver, self.symmetry_blocks)
        self._exact_programs: _Programs | None = None
        self._commutant: Any = None
        self._free_programs: dict[tuple[int, ...], Any] = {}
        self.reduced_used = 0
        self.reduced_fallbacks = 0

    @property
    def _exact(self) -> _Programs:
        """The programs on the sign sectors (built on first use)."""
        if self._exact_programs is None:
            self._exact_programs = _Programs(self.problem, self.sectors, self.solver)
        return self._exact_programs

    def _averaged(self, res: SDPResult) -> SDPResult:
        """The reduced program's result with its dual matrix averaged over the group
        (:class:`eftsieve.bounds.symmetry.Commutant`): a certificate of the unreduced
        program with the same normal."""
        from eftsieve.bounds.symmetry import Commutant

        if res.z is None:
            return res
        if self._commutant is None:
            self._commutant = Commutant(self.problem.tensors, self.sectors, self._gens)
        return replace(res, z=self._commutant.project(res.z))

    def _keep(self, decisive: bool) -> bool:
        if decisive:
            self.reduced_used += 1
        else:
            self.reduced_fallbacks += 1
        return decisive

    def _check(self, c: np.ndarray, rho: np.ndarray | None) -> tuple[bool, float]:
        """verify_rho at c/|c|: (proven, lambda_min relative); (False, -1) without rho."""
        if rho is None:
            return False, -1.0
        ok, lam, _ = verify_rho(self.problem, c / np.linalg.norm(c), rho)
        return bool(ok), float(lam)

    def _proves(self, c: np.ndarray, rho: np.ndarray | None) -> bool:
        ok, lam = self._check(c, rho)
        return ok and lam > CONE_BOUNDARY_TOL

    def membership(self, c: np.ndarray) -> SDPResult:
        """max t with rho = S + t I (module docstring); c is scaled to unit norm."""
        c = np.asarray(c, dtype=float)
        unit = c / np.linalg.norm(c)
        if self._fast is not None:
            res = self._fast.membership_direct(unit) if self.solver == "CLARABEL" \
                else self._fast.membership(unit)
            decisive = False
            if res.status in _SOLVED and res.rho is not None:
                if res.value > 0:
                    verified = self._check(unit, res.rho)
                    res = replace(res, verified=verified)
                    decisive = verified[0] and verified[1] > CONE_BOUNDARY_TOL
                if not decisive and res.z is not None:
                    res = self._averaged(res)
                    cert = None if res.z is None else facet_from_dual(self.problem, res.z)
                    decisive = cert is not None and \
                        float(cert.normal @ unit) < -CONE_BOUNDARY_TOL
                    res = replace(res, cert=cert)
            if self._keep(decisive):
                return res
        return self._exact.membership(unit)

    def shoot(self, c0: np.ndarray, d: np.ndarray, cap: float = 1e3) -> SDPResult:
        """max lam with M(c0 + lam d) in C, lam <= cap; rho is S at the boundary."""
        if self._fast is not None:
            res = self._averaged(self._fast.shoot(c0, d, cap))
            cert = facet_from_dual(self.problem, res.z) \
                if res.status in _SOLVED and res.z is not None else None
            res = replace(res, cert=cert)
            decisive = cert is not None
            if self._keep(decisive):
                return res
        return self._exact.shoot(c0, d, cap)

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
        if self._fast is not None:
            res = self._averaged(self._shoot_free_on(self._fast, c0, d, free, cap, time_limit))
            cert = facet_from_dual(self.problem, res.z) \
                if res.status in _SOLVED and res.z is not None else None
            res = replace(res, cert=cert)
            if self._keep(cert is not None and res.c is not None):
                return res
        return self._shoot_free_on(self._exact, c0, d, free, cap, time_limit)

    def _shoot_free_on(self, ex: _Programs, c0: np.ndarray, d: np.ndarray,
                       free: tuple[int, ...], cap: float, time_limit: float | None
                       ) -> SDPResult:
        """:meth:`shoot_free` on one block structure (its programs cached per free set)."""
        import cvxpy as cp

        key = (id(ex), *sorted(int(i) for i in free))
        if key not in self._free_programs:
            k = self.problem.k
            idx = list(key[1:])
            sel = np.zeros((k, len(idx)))
            sel[idx, range(len(idx))] = 1.0
            c0p, dp = cp.Parameter(k), cp.Parameter(k)
            capp, pen = cp.Parameter(nonneg=True), cp.Parameter(nonneg=True)
            s, lam, f = ex._blocks(), cp.Variable(), cp.Variable(len(idx))
            psd = [b >> 0 for b in s]
            prob = cp.Problem(cp.Maximize(lam - pen * cp.norm1(f)), [
                *psd, ex._lhs(s) == ex._mr @ c0p + lam * (ex._mr @ dp)
                + (ex._mr @ sel) @ f, lam <= capp])
            self._free_programs[key] = (prob, c0p, dp, capp, pen, s, lam, f, psd, sel)
        prob, c0p, dp, capp, pen, s, lam, f, psd, sel = self._free_programs[key]
        c0p.value = np.asarray(c0, dtype=float)
        dp.value = np.asarray(d, dtype=float)
        capp.value = float(cap)
        status = "not solved"
        for penalty in (0.0, 1e-7, 1e-6):
            pen.value = penalty
            status = ex.solve(prob, time_limit, fallback=False)
            if status in _SOLVED and lam.value is not None:
                break
        else:
            return SDPResult(status, float("nan"), None, None)
        sv = ex.full([b.value for b in s])
        if sv is None or f.value is None:
            return SDPResult(status, float("nan"), None, None)
        z = ex.full([c.dual_value for c in psd])
        lifted = np.asarray(c0, dtype=float) + float(lam.value) * np.asarray(d, dtype=float) \
            + sel @ np.asarray(f.value, dtype=float)
        return SDPResult(status, float(lam.value), sv, z, lifted)

    def centre(self) -> SDPResult:
        """The point of {tau . c = 1} deepest inside the cone (largest lambda_min(rho))."""
        if self._fast is not None:
            res = self._fast.centre()
            decisive = res.status in _SOLVED and res.c is not None and res.value > 0 \
                and self._proves(res.c, res.rho)
            if self._keep(decisive):
                return res
        return self._exact.centre()


def tensor_matrix(problem: ConeProblem, c: np.ndarray) -> np.ndarray:
    """M(c) as an n^2 x n^2 matrix (rows (ij), columns (kl))."""
    return as_matrix(problem.tensor(c))
