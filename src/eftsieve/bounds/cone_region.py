"""Positivity cones as Regions, and exact verdicts for points in the shell.

* :func:`cone_region` turns a :class:`eftsieve.bounds.cone_build.ConeBuild` into an
  :class:`eftsieve.region.Region`: every facet reads ``normal . c >= 0`` (offset 0) and
  carries its certificate in ``extra``; the inner cone's facets and rays are stored as
  the region's inner set; the forward tensors themselves are stored in
  ``settings["cone_problem"]`` so that a saved region can re-decide any point.
* :func:`shell_membership` decides points exactly, one solve per point: ``inside`` only
  with a verified rho (extremal) or a proof (elastic), ``outside`` only with a verified
  separating certificate, and ``marginal`` with the reason otherwise (also when the
  solver raises).  :class:`ConeShell` does the same with the problem parsed once, each
  point seeded by its own id, and independent sectors solved one by one
  (:mod:`eftsieve.bounds.cone_sectors`); the check kernel uses it
  (:mod:`eftsieve.check.shell`).
* :meth:`ConeShell.decide_in_order` is the learning mode the check kernel uses: points
  in a fixed order, each first tested against the verified facets that earlier
  ``outside`` verdicts produced (:mod:`eftsieve.bounds.cone_learn`), and solved only
  when none of them excludes it.  ``learn=True`` gives it to :func:`shell_membership`
  and :func:`classify_cone`; they default to one solve per point, so that a point's
  verdict never depends on the other points given with it.
* :func:`classify_cone` is the fast path for scripts: the facet test against the inner
  and outer cones, then :func:`shell_membership` for the points between them.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

import numpy as np

from eftsieve.bounds.cone_build import ConeBuild
from eftsieve.bounds.cone_learn import (
    LEARNED_REASON,
    LearnedFacets,
    ShellDecisions,
    facet_forms,
    unit_rows,
)
from eftsieve.bounds.cones import (
    INSIDE,
    MARGINAL,
    OUTSIDE,
    ConeProblem,
    FacetCertificate,
    facet_from_states,
    verify_rho,
)
from eftsieve.bounds.elastic import StateReduction, prove_elastic, search_states
from eftsieve.errors import SolverError
from eftsieve.region.model import Facet, Region
from eftsieve.tolerances import CONE_BOUNDARY_TOL

#: relative band of the fast facet test inside which a point goes to the exact solve
FACET_TEST_BAND = 1e-12


def prune(certs: tuple[FacetCertificate, ...], tol: float = 1e-7) -> list[FacetCertificate]:
    """Drop facets implied (to ``tol``) by the others.  Dropping a valid facet can only
    enlarge an outer cone, so a loose tolerance is safe."""
    from scipy.optimize import linprog

    keep = list(range(len(certs)))
    for i in range(len(certs)):
        others = [j for j in keep if j != i]
        if not others:
            continue
        a = np.array([certs[j].normal for j in others])
        res = linprog(certs[i].normal, A_ub=-a, b_ub=np.zeros(len(others)),
                      bounds=[(-1, 1)] * len(certs[i].normal), method="highs")
        if res.status == 0 and res.fun >= -tol:
            keep.remove(i)
    return [certs[i] for i in keep]


def _channel(cert: FacetCertificate, modes: tuple[str, ...]) -> str:
    if cert.kind == "product-state":
        def top(vec: list[float]) -> str:
            v = np.asarray(vec)
            i = np.argsort(-np.abs(v))[:2]
            return " + ".join(f"{v[j]:+.3g} {modes[j]}" for j in i if abs(v[j]) > 1e-3)
        return f"product state u = {top(cert.data['u'])}; v = {top(cert.data['v'])}"
    data = cert.data
    rank = len(data["Z_factors"]) if "Z_factors" in data else len(data["Z_sparse"]["factors"])
    return f"dual PSD matrix of rank {rank}"


def cone_region(theory: str, build: ConeBuild, convention: dict[str, Any],
                notes: tuple[str, ...] = ()) -> Region:
    """The Region of a built cone (module docstring)."""
    p = build.problem
    facets = [Facet(tuple(float(x) for x in c.normal), 0.0, build.family,
                    _channel(c, p.modes), {}, 0.0, "verified",
                    {"certificate": c.to_dict()}) for c in prune(build.outer)]
    label = ("inner cone (simplicial, spanned by verified rays)"
             if build.stats.get("inner_set") == "simplex" else
             "inner cone (hull of verified rays)")
    inner = [Facet(tuple(float(x) for x in n), 0.0, build.family, label, {}, 0.0,
                   "verified", {"kind": "inner"})
             for n in build.inner_normals]
    # wall time is left out so that the same build gives the same hash
    stats = {k: v for k, v in build.stats.items() if k != "seconds"}
    settings = {"family": build.family, "cone_problem": p.to_dict(),
                "shell_fraction": list(build.shell_fraction), "build": stats}
    if build.stats.get("elastic_inner"):
        notes = (*notes, f"elastic inner points: {build.stats['elastic_inner']}")
    return Region(theory, p.coefficients, convention, tuple(facets), settings,
                  tuple(inner), tuple(tuple(float(x) for x in r) for r in build.inner_rays),
                  notes=notes)


# ---- exact verdicts -------------------------------------------------------------------------
@lru_cache(maxsize=8)
def _sdp_for(key: bytes, coefficients: tuple[str, ...], modes: tuple[str, ...]) -> Any:
    from eftsieve.bounds.sdp import ExtremalSDP

    n, k = len(modes), len(coefficients)
    tensors = np.frombuffer(key, dtype=float).reshape(k, n, n, n, n)
    return ExtremalSDP(ConeProblem(coefficients, modes, tensors.copy()))


def sdp_for(problem: ConeProblem) -> Any:
    """The (cached) :class:`eftsieve.bounds.sdp.ExtremalSDP` of a problem: kept with the
    problem object, and shared by equal problems (keyed by the tensors' bytes)."""
    return problem.derived("extremal_sdp", lambda: _sdp_for(
        problem.tensors.tobytes(), problem.coefficients, problem.modes))


#: the short reason of a point whose exact solve ends within the solver's accuracy of the
#: cone's boundary: neither a proof inside nor a certificate outside (more solves of the
#: same point give the same answer)
BOUNDARY_REASON = "within the solver's accuracy of the boundary"


def mostly_undecided(n_undecided: int, n_solved: int) -> bool:
    """Whether at least half of ``n_solved`` exact solves left their point undecided: the
    few decided ones then say little (e.g. a fit on a face of the cone, where no solve
    proves a point inside or out), and more solves of the same kind would not help."""
    return n_undecided > 0 and 2 * n_undecided >= n_solved

#: (code, status line, short reason, normal of the verified separating facet or None)
Decision = tuple[int, str, str, np.ndarray | None]


def _extremal_one(problem: ConeProblem, x: np.ndarray) -> tuple[int, str, str]:
    return _extremal_facet(problem, x)[:3]


def _extremal_facet(problem: ConeProblem, x: np.ndarray) -> Decision:
    """One extremal membership solve; an ``outside`` verdict comes with the normal of its
    verified dual certificate (a valid outer facet of the whole cone)."""
    sdp = sdp_for(problem)
    res = sdp.membership(x)
    if res.rho is None:
        short = res.status.split(":", 1)[0]
        return (MARGINAL, f"marginal: SDP not solved (status {res.status})",
                f"SDP not solved (status {short})", None)
    unit = x / np.linalg.norm(x)
    ok, lam_rel = res.verified if res.verified is not None else \
        verify_rho(problem, unit, res.rho)[:2]
    if ok and lam_rel > CONE_BOUNDARY_TOL:
        return INSIDE, f"inside: verified rho, lambda_min/max|rho| = {lam_rel:.3g} " \
                       f"(solver {res.status})", "verified rho", None
    if res.value < 0 and res.z is not None:
        cert = res.facet(problem)
        if cert is not None:
            val = float(cert.normal @ unit)
            if val < -CONE_BOUNDARY_TOL:
                return OUTSIDE, f"outside: verified dual certificate, n.c/|c| = {val:.3g} " \
                                f"(solver {res.status})", "verified dual certificate", \
                    cert.normal
    return MARGINAL, f"marginal: {BOUNDARY_REASON} " \
                     f"(t* = {res.value:.3g}, solver {res.status})", BOUNDARY_REASON, None


def _elastic_facet(problem: ConeProblem, x: np.ndarray, rng: np.random.Generator,
                   cells: int, reduction: StateReduction | None) -> Decision:
    """One elastic decision; an ``outside`` verdict comes with the normal of its violating
    product state's facet E(u, v) . c >= 0 (valid on the whole elastic cone; the
    extremal solve tried on the way is used for ``inside`` only, since its dual
    certificates bound the smaller extremal cone)."""
    unit = x / np.linalg.norm(x)
    m = problem.tensor(unit)
    u, v, e = search_states(m, rng)
    scale = float(np.abs(m).max())
    if e < -CONE_BOUNDARY_TOL * scale:
        normal = facet_from_states(problem, u, v).normal
        return (OUTSIDE, f"outside: product state with E/|M| = {e / scale:.3g} "
                f"(n.c = {normal @ unit:.3g})", "violating product state", normal)
    verdict, why, _ = _extremal_one(problem, x)
    if verdict == INSIDE:
        return INSIDE, "inside (elastic): " + why.split(": ", 1)[1], "verified rho", None
    proof = prove_elastic(m, cells, reduction=reduction)
    if proof.outcome == "proven":
        return (INSIDE, f"inside: branch-and-bound proof over product states "
                f"({proof.cells} cells)", "branch-and-bound proof", None)
    if proof.outcome == "violated" and proof.witness is not None:
        normal = facet_from_states(problem, proof.witness[0], proof.witness[1]).normal
        return (OUTSIDE, f"outside: product state with E = {proof.witness[2]:.3g}",
                "violating product state", normal)
    if proof.note:
        return (MARGINAL, f"marginal: elastic positivity undecided ({proof.note})",
                "elastic positivity undecided: too many modes for branch and bound", None)
    return (MARGINAL, f"marginal: elastic positivity undecided within {proof.cells} cells",
            "elastic positivity undecided within the cell budget", None)


def problem_of(cone: Region | ConeProblem) -> tuple[ConeProblem, str | None]:
    """The ConeProblem (and family, for a Region) behind a region or problem."""
    if isinstance(cone, ConeProblem):
        return cone, None
    try:
        return ConeProblem.from_dict(cone.settings["cone_problem"]), str(cone.settings["family"])
    except KeyError as err:
        raise ValueError(f"region of '{cone.theory}' is not a positivity cone") from err


def _solver_failures() -> tuple[type[BaseException], ...]:
    """The exceptions of a solve that make a point ``marginal`` instead of stopping the run:
    eftsieve's SolverError, cvxpy's solver and arithmetic errors, linear-algebra failures."""
    import cvxpy as cp

    return (SolverError, cp.error.SolverError, np.linalg.LinAlgError, ArithmeticError)


def decide_point(problem: ConeProblem, family: str, x: np.ndarray, rng: np.random.Generator,
                 elastic_cells: int = 300_000, reduction: StateReduction | None = None,
                 ) -> tuple[int, str, str]:
    """The exact verdict of one point: (code, status line, short reason).

    The short reason has no numbers, so that reasons can be counted (``verified rho``,
    ``SDP not solved (status infeasible_inaccurate)``, ...).  A solve that raises a
    solver or linear-algebra error gives ``marginal`` with that reason, never a verdict.
    """
    return _decide_point(problem, family, x, rng, elastic_cells, reduction)[:3]


def _decide_point(problem: ConeProblem, family: str, x: np.ndarray, rng: np.random.Generator,
                  elastic_cells: int, reduction: StateReduction | None) -> Decision:
    """:func:`decide_point` and, for ``outside``, the normal of the verified facet that
    separates the point (None otherwise)."""
    if not np.isfinite(x).all():
        return MARGINAL, "marginal: non-finite point", "non-finite point", None
    if not np.any(x):
        return (MARGINAL, "marginal: the origin is the cone's apex (on the boundary)",
                "the cone's apex c = 0", None)
    try:
        if family == "extremal":
            return _extremal_facet(problem, x)
        return _elastic_facet(problem, x, rng, elastic_cells, reduction)
    except _solver_failures() as err:
        name = type(err).__name__
        return (MARGINAL, f"marginal: the solve failed ({name}: {err})",
                f"solve failed ({name})", None)


def shell_membership(cone: Region | ConeProblem, points: np.ndarray, family: str | None = None,
                     seed: int = 0, elastic_cells: int = 300_000,
                     reduction: StateReduction | None = None, learn: bool = False,
                     ) -> tuple[np.ndarray, tuple[str, ...]]:
    """Exact verdicts for points, one solve per point: (codes, statuses).

    Parameters
    ----------
    cone
        A cone Region (family taken from it) or a ConeProblem (give ``family``).
    points
        Shape (m, k), in the cone's coordinates.
    family
        ``extremal`` or ``elastic``; overrides the region's.
    seed
        Seed of the product-state search (elastic); point i uses
        ``default_rng([seed, i])``, so its verdict does not depend on the other points.
    elastic_cells
        Cell budget of each elastic proof.
    reduction
        The theory's product-state reduction (elastic; optional, checked before use).
    learn
        Reuse the separating facets of earlier points (in the given order) on later ones
        (:meth:`ConeShell.decide_in_order`): fewer solves, the same exact verdicts where
        both decide, but a point's outcome then depends on the points before it (one it
        would leave ``marginal`` alone may be ``outside`` by an earlier facet).  Off by
        default, so that each point's verdict depends on nothing else.

    Returns
    -------
    codes
        int8 array: 0 inside, 1 marginal, 2 outside (the codes of eftsieve.check).
    statuses
        One line per point: the verdict, what proves it and the solver status, or why
        there is no verdict.
    """
    problem, fam = problem_of(cone)
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    shell = ConeShell(problem, family or fam or "", elastic_cells, reduction)
    got = shell.decide_in_order(pts, np.arange(len(pts)), seed,
                                LearnedFacets(problem.k) if learn else None)
    return got.codes, got.statuses


class ConeShell:
    """Exact decisions for points of one cone, with the problem parsed and checked once.

    Parameters
    ----------
    problem, family
        The cone's forward tensors and its family (``extremal`` or ``elastic``).
    elastic_cells, reduction
        As :func:`shell_membership`.
    """

    def __init__(self, problem: ConeProblem, family: str, elastic_cells: int = 300_000,
                 reduction: StateReduction | None = None) -> None:
        if family not in ("extremal", "elastic"):
            raise ValueError(f"unknown family '{family}'; use extremal or elastic")
        if reduction is not None and reduction.defect(problem.tensors) > 1e-9:
            raise ValueError("the state reduction's generators are not symmetries of M")
        from eftsieve.bounds.cone_sectors import sectors

        self.problem, self.family = problem, family
        self.elastic_cells, self.reduction = elastic_cells, reduction
        #: independent sectors (the cone is their product; each is solved on its own)
        self.sectors = sectors(problem)

    @classmethod
    def from_region(cls, region: Region, reduction: StateReduction | None = None
                    ) -> ConeShell:
        """The shell solver of a cone region (its stored ``cone_problem`` and family)."""
        problem, fam = problem_of(region)
        return cls(problem, fam or "", reduction=reduction)

    def decide(self, points: np.ndarray, ids: np.ndarray, seed: int = 0,
               ) -> tuple[np.ndarray, tuple[str, ...], tuple[str, ...]]:
        """Exact verdicts of ``points`` (m, k): (codes, status lines, short reasons).

        ``ids`` (e.g. global row numbers) seed each point's product-state search as
        ``default_rng([seed, id])``: a point's verdict depends on nothing else.
        """
        got = self.decide_in_order(points, ids, seed)
        return got.codes, got.statuses, got.reasons

    def decide_in_order(self, points: np.ndarray, ids: np.ndarray, seed: int = 0,
                        learned: LearnedFacets | None = None, max_solves: int | None = None,
                        ) -> ShellDecisions:
        """Exact verdicts of ``points`` (m, k) in the given order, reusing certificates.

        With ``learned`` (advanced in place), a point is first tested against the facets
        learned so far: if one gives n . c/|c| < -CONE_BOUNDARY_TOL it is ``outside``
        with no solve (status names the earlier point); otherwise it is solved, and the
        facet of an ``outside`` verdict is learned for the points after it.  The running
        minimum of n . c/|c| over the learned facets is kept for the rest of the batch
        and updated once per new facet (vectorised).  ``max_solves`` caps the solves;
        the points beyond it are still tested against the learned facets, and left
        ``marginal`` with an empty reason when none decides them.  Without ``learned``
        and ``max_solves`` this is :meth:`decide`: one solve per point.
        """
        pts = np.atleast_2d(np.asarray(points, dtype=float))
        if pts.shape[1] != self.problem.k:
            raise ValueError(f"points must have {self.problem.k} columns, got {pts.shape[1]}")
        ids = np.asarray(ids)
        m = len(pts)
        codes = np.full(m, MARGINAL, dtype=np.int8)
        solved, by_facet = np.zeros(m, dtype=bool), np.zeros(m, dtype=bool)
        statuses, reasons = [""] * m, [""] * m
        cap = m if max_solves is None else max(int(max_solves), 0)
        n_solves = 0
        # running minimum of n . c/|c| over the learned facets (inf: none yet), and which
        units = unit_rows(pts)
        margin, who = np.full(m, np.inf), np.zeros(m, dtype=np.int64)
        if learned is not None and len(learned) and m:
            forms = facet_forms(units, learned.normals)
            who = np.argmin(np.where(np.isnan(forms), np.inf, forms), axis=1)
            margin = forms[np.arange(m), who]
        for i in range(m):
            if learned is not None and margin[i] < -CONE_BOUNDARY_TOL:
                j = int(who[i])
                codes[i], by_facet[i], reasons[i] = OUTSIDE, True, LEARNED_REASON
                statuses[i] = (f"outside: facet learned at row {learned.sources[j]} "
                               f"(verified {learned.kinds[j]}), n.c/|c| = {margin[i]:.3g}")
                continue
            if n_solves >= cap:
                continue
            n_solves += 1
            rng = np.random.default_rng([int(seed), int(ids[i])])
            code, statuses[i], reasons[i], normal = self._decide_one(pts[i], rng)
            codes[i], solved[i] = code, True
            if learned is not None and normal is not None:
                learned.add(normal, int(ids[i]), "dual certificate"
                            if self.family == "extremal" else "product state")
                new = facet_forms(units[i + 1:], learned.normals[-1:])[:, 0]
                better = new < margin[i + 1:]
                margin[i + 1:][better] = new[better]
                who[i + 1:][better] = len(learned) - 1
        return ShellDecisions(codes, tuple(statuses), tuple(reasons), solved, by_facet)

    def _decide_one(self, x: np.ndarray, rng: np.random.Generator) -> Decision:
        """One point: directly, or sector by sector for a product of independent cones
        (outside if any sector is outside, inside if every sector is inside); an
        ``outside`` verdict comes with its facet's normal in the full coordinates."""
        if len(self.sectors) == 1 or not np.isfinite(x).all():
            return _decide_point(self.problem, self.family, x, rng, self.elastic_cells,
                                 self.reduction)
        found: list[tuple[int, str, str]] = []
        for sec in self.sectors:
            xs = x[list(sec.coefficients)]
            if not np.any(xs):
                found.append((MARGINAL, "marginal: a sector is at its apex (on the boundary)",
                              "a sector at its apex (on the boundary)"))
                continue
            code, why, short, normal = _decide_point(sec.problem, self.family, xs, rng,
                                                     self.elastic_cells, None)
            if code == OUTSIDE:
                full = None
                if normal is not None:
                    full = np.zeros(self.problem.k)
                    full[list(sec.coefficients)] = normal
                return (code, f"{why} [sector {', '.join(sec.problem.coefficients)}]", short,
                        full)
            found.append((code, why, short))
        for code, why, short in found:
            if code == MARGINAL:
                return code, why, short, None
        return INSIDE, "inside: every sector inside (" + "; ".join(w for _, w, _ in found) \
            + ")", found[0][2], None


def _min_form(cols: list[np.ndarray], a: np.ndarray) -> np.ndarray:
    """min_j a_j . x over the rows of a, column by column, in place (O(n) memory)."""
    best = np.full(len(cols[0]), np.inf)
    work = np.empty(len(cols[0]))
    for row in a:
        np.multiply(cols[0], row[0], out=work)
        for col, coef in zip(cols[1:], row[1:], strict=True):
            work += coef * col
        np.minimum(best, work, out=best)
    return best


def classify_cone(region: Region, points: np.ndarray, chunk: int = 1_000_000,
                  solve_shell: bool = True, learn: bool = False,
                  ) -> tuple[np.ndarray, np.ndarray, dict[int, str]]:
    """Verdicts for many points: facet tests, then exact solves for the shell only.

    With ``learn``, the shell points are decided in index order reusing the separating
    facets of earlier ones (:func:`shell_membership`; fewer solves, the order of the
    points then matters for which are left ``marginal``).  Returns (codes, in_shell mask,
    statuses of the shell points by index).
    """
    pts = np.asarray(points, dtype=float)
    a_out, _ = region.arrays()
    a_in, _ = region.arrays(inner=True)
    codes = np.full(len(pts), MARGINAL, dtype=np.int8)
    shell = np.zeros(len(pts), dtype=bool)
    for s in range(0, len(pts), chunk):
        cols = [np.ascontiguousarray(pts[s:s + chunk, j]) for j in range(pts.shape[1])]
        scale = np.abs(cols[0])
        for col in cols[1:]:
            np.maximum(scale, np.abs(col), out=scale)
        scale *= FACET_TEST_BAND
        out_m, in_m = _min_form(cols, a_out), _min_form(cols, a_in)
        c = codes[s:s + chunk]
        c[out_m < -scale] = OUTSIDE
        c[in_m > scale] = INSIDE
        shell[s:s + chunk] = c == MARGINAL
    statuses: dict[int, str] = {}
    if solve_shell and shell.any():
        idx = np.nonzero(shell)[0]
        sub, why = shell_membership(region, pts[idx], learn=learn)
        codes[idx] = sub
        statuses = dict(zip(idx.tolist(), why, strict=True))
    return codes, shell, statuses
