"""Building a positivity cone: verified outer facets and verified inner rays, refined
until the shell between them is small.

The cone K = {c : M(c) in C} is pointed, so it is studied on the slice w . c = 1 with
w = tau (tau . c = tr rho > 0 on K \\ {0}).  Starting from the point c0 deepest inside
(:meth:`ExtremalSDP.centre`), rays c0 + lambda d are shot to the boundary:

* ``extremal``: one SDP per ray gives lambda* and the dual Z of the supporting hyperplane
  (an outer facet, :func:`eftsieve.bounds.cones.facet_from_dual`), and the inner point
  c0 + (1 - delta) lambda* d with the explicit rho = (1 - delta) S* + delta rho0,
  proven by :func:`eftsieve.bounds.cones.verify_rho`.
* ``elastic``: Dinkelbach iterations on the ratio E(c0)/(-E(d)) over product states found
  by :func:`eftsieve.bounds.elastic.search_states` give facets (exact product states), and
  the inner point is proven by :func:`eftsieve.bounds.elastic.prove_elastic`.

Rounds of cutting planes then aim rays at the vertices of the outer polyhedron that lie
farthest outside the inner hull, until the Monte Carlo estimate of the shell (outer minus
inner) falls below ``shell_target`` of the unit sphere's area, or the round limit.

Two geometries serve the rounds:

* ``hull`` (slice dimension up to :data:`HULL_MAX_DIM`): the outer polyhedron's vertices
  by half-space intersection and the inner cone as the convex hull of the verified inner
  points (Qhull, through scipy.spatial).  The number of hull facets grows too fast for
  more coordinates, and Qhull then fails on precision.
* ``lp`` (more coordinates, or when Qhull fails): no vertex enumeration and no hull.  Each
  round maximises random linear objectives over the outer polyhedron (one LP each, HiGHS
  through scipy) and shoots a ray at every optimal vertex: a vertex outside the cone is
  cut off by the new facet, one on it shows the outer set is tight there (Kelley's
  cutting-plane method, J. Soc. Indust. Appl. Math. 8 (1960) 703, applied to the cone's
  support function).  The inner set is the hull of the verified inner points up to
  :data:`INNER_HULL_MAX_DIM` slice dimensions, and above that the simplicial cone spanned
  by k verified inner rays chosen greedily for a large volume (the cone spanned by points
  of a convex cone lies in it, so it needs no further proof; k facets, cheap to test).
  The simplicial cone is a tiny part of the cone in many dimensions: points between it
  and the outer facets are the shell, decided by the exact solves of the check
  (:mod:`eftsieve.check.shell`).  The build stops when a round finds nearly every probed
  vertex on the cone, or at the round limit.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.bounds.cones import (
    ConeProblem,
    FacetCertificate,
    cross,
    elastic_values,
    facet_from_states,
    verify_rho,
)
from eftsieve.bounds.elastic import (
    MAX_GENERAL_MODES,
    StateReduction,
    prove_elastic,
    search_reduced,
    search_states,
)
from eftsieve.bounds.sdp import ExtremalSDP
from eftsieve.errors import SolverError

_OK = ("optimal", "optimal_inaccurate")
#: largest slice dimension (coefficients - 1) built with hulls (``hull`` geometry); above
#: it the ``lp`` geometry (module docstring).  Qhull fails on precision from about 6.
HULL_MAX_DIM = 5
#: largest slice dimension whose inner set is the hull of the verified inner points in the
#: ``lp`` geometry (thousands of facets at 6-7; tens of thousands from 8); above it the
#: inner set is a simplicial cone
INNER_HULL_MAX_DIM = 7
#: ... and whose hull has at most this many facets (the facet test's cost grows with it)
INNER_HULL_MAX_FACETS = 5000
#: an LP vertex whose ray reaches the cone within this relative distance counts as tight
TIGHT_REL = 1e-3


@dataclass(frozen=True)
class ConeSettings:
    """How a cone is built (engine settings; they do not change the cone, only its
    approximation).

    Attributes
    ----------
    family
        ``extremal`` or ``elastic``.
    shell_target
        Stop when the shell holds less than this fraction of the unit sphere's area.
    max_rounds, rays_per_round
        Cutting-plane rounds and rays per round.
    shrink
        delta of the inner points c0 + (1 - delta) lambda* d (extremal); elastic proofs
        try 10x, 100x this.
    mc_points
        Uniform points on the unit sphere for the shell estimate.
    seed
        Seed of every random number.
    elastic_cells
        Cell budget of each elastic proof.
    geometry
        ``auto`` (``hull`` up to :data:`HULL_MAX_DIM`, ``lp`` above), ``hull`` or ``lp``.
    tight_stop
        ``lp`` geometry: stop when this share of a round's probed vertices lie on the cone.
    """

    family: str = "extremal"
    shell_target: float = 1e-3
    max_rounds: int = 30
    rays_per_round: int = 12
    shrink: float = 1e-7
    mc_points: int = 200_000
    seed: int = 0
    elastic_cells: int = 300_000
    geometry: str = "auto"
    tight_stop: float = 0.9

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class ConeBuild:
    """A built cone.

    Attributes
    ----------
    problem
        The problem.
    family
        The bound family.
    outer
        Verified outer facets.
    inner_rays
        Verified inner points (rows), on the slice tau . c = 1.
    inner_normals
        Unit normals of the inner cone's facets (rows), n . c >= 0.
    shell_fraction
        Monte Carlo estimate of the shell's share of the unit sphere, and its standard error.
    stats
        Rays shot, solves, rounds, seconds.
    """

    problem: ConeProblem
    family: str
    outer: tuple[FacetCertificate, ...]
    inner_rays: np.ndarray
    inner_normals: np.ndarray
    shell_fraction: tuple[float, float]
    stats: dict[str, Any] = field(default_factory=dict)

    def outer_normals(self) -> np.ndarray:
        return np.array([f.normal for f in self.outer])

    def to_dict(self) -> dict[str, Any]:
        return {"family": self.family, "n_outer": len(self.outer),
                "n_inner_rays": len(self.inner_rays), "shell_fraction": self.shell_fraction,
                "stats": self.stats}


class _Builder:
    def __init__(self, problem: ConeProblem, st: ConeSettings,
                 reduction: StateReduction | None = None) -> None:
        if st.family not in ("extremal", "elastic"):
            raise ValueError(f"unknown family '{st.family}'")
        if st.geometry not in ("auto", "hull", "lp"):
            raise ValueError(f"unknown geometry '{st.geometry}' (auto, hull or lp)")
        if problem.rank() < problem.k:
            raise ValueError("the coefficients are not independent in the forward tensor")
        self.p, self.st, self.reduction = problem, st, reduction
        if reduction is not None and reduction.defect(problem.tensors) > 1e-9:
            raise ValueError("the state reduction's generators are not symmetries of M")
        self.rng = np.random.default_rng(st.seed)
        self.sdp = ExtremalSDP(problem)
        self.w = problem.tau()
        cen = self.sdp.centre()
        if cen.status not in _OK or cen.c is None or cen.rho is None or not cen.value > 0:
            raise SolverError(cen.status, "centre SDP of the cone (no interior point found)")
        ok, _, rho0 = verify_rho(problem, cen.c, cen.rho)
        if not ok:
            raise SolverError(cen.status, "centre SDP: its rho failed verification")
        self.c0, self.rho0 = cen.c, rho0
        q, _ = np.linalg.qr(np.column_stack([self.w, np.eye(problem.k)]))
        self.basis = q[:, 1:problem.k]                      # orthonormal basis of w-perp
        self.facets: list[FacetCertificate] = []
        self.inner: list[np.ndarray] = []
        self.solves = 0
        self.rays = 0
        self.geometry = st.geometry if st.geometry != "auto" else (
            "hull" if problem.k - 1 <= HULL_MAX_DIM else "lp")
        self.hull_error: str | None = None
        self.inner_kind = "hull"

    # ---- rays ----------------------------------------------------------------------------
    def shoot(self, d: np.ndarray) -> float:
        """Shoot the ray c0 + lambda d (d of unit norm); the boundary's lambda (an upper
        estimate for ``elastic``; nan when the solve failed)."""
        self.rays += 1
        if self.st.family == "extremal":
            return self._shoot_extremal(d)
        return self._shoot_elastic(d)

    def _shoot_extremal(self, d: np.ndarray, with_facet: bool = True) -> float:
        res = self.sdp.shoot(self.c0, d, cap=1e6)
        self.solves += 1
        if res.status not in _OK or res.rho is None:
            return float("nan")
        if with_facet and res.z is not None:
            cert = res.facet(self.p)
            if cert is not None:
                self.facets.append(cert)
        for delta in (self.st.shrink, 10 * self.st.shrink, 100 * self.st.shrink,
                      1000 * self.st.shrink):
            c_in = self.c0 + (1 - delta) * res.value * d
            ok, _, _ = verify_rho(self.p, c_in, (1 - delta) * res.rho + delta * self.rho0)
            if ok:
                self.inner.append(c_in / (self.w @ c_in))
                break
        return float(res.value)

    def _dinkelbach(self, d: np.ndarray, lam: float) -> float:
        t0, td = self.p.tensor(self.c0), self.p.tensor(d)
        scale = float(np.abs(t0).max() + np.abs(td).max())
        for _ in range(40):
            if self.reduction is not None:
                u, v, e = search_reduced(t0 + lam * td, self.reduction)
            else:
                u, v, e = search_states(t0 + lam * td, self.rng, starts=48, sweeps=30)
            if e >= -1e-12 * scale * max(1.0, lam):
                break
            cert = facet_from_states(self.p, u, v)
            e0, ed = elastic_values(self.p, u, v) @ self.c0, elastic_values(self.p, u, v) @ d
            self.facets.append(cert)
            if ed >= 0:
                break
            lam = float(e0 / -ed)
        return lam

    def prove_elastic_point(self, c: np.ndarray) -> tuple[str, Any]:
        """``proven``/``violated``/``undecided`` for the elastic cone at c: the extremal
        certificate first (extremal is inside elastic), then branch and bound; with a
        symmetry reduction the (fast) reduced branch and bound goes first."""
        self.solves += 1
        if self.reduction is not None:
            proof = prove_elastic(self.p.tensor(c), self.st.elastic_cells,
                                  reduction=self.reduction)
            if proof.outcome != "undecided":
                return proof.outcome, proof
        res = self.sdp.membership(c)
        if res.rho is not None and res.value > 0:
            ok, _, _ = verify_rho(self.p, c / np.linalg.norm(c), res.rho)
            if ok:
                return "proven", "extremal rho"
        if self.reduction is not None:
            return proof.outcome, proof
        proof = prove_elastic(self.p.tensor(c), self.st.elastic_cells)
        return proof.outcome, proof

    def _shoot_elastic(self, d: np.ndarray) -> float:
        lam = self._dinkelbach(d, 1e6)
        for delta in (1e3 * self.st.shrink, 1e4 * self.st.shrink, 1e5 * self.st.shrink):
            c_in = self.c0 + (1 - delta) * lam * d
            outcome, proof = self.prove_elastic_point(c_in)
            if outcome == "proven":
                self.inner.append(c_in / (self.w @ c_in))
                return lam
            if outcome == "violated" and proof.witness is not None:
                u, v, _ = proof.witness
                self.facets.append(facet_from_states(self.p, u, v))
                lam = self._dinkelbach(d, lam)
        # no proof near the elastic boundary: keep the extremal inner point (extremal is
        # inside elastic), but not its dual facet (not valid for elastic)
        self._shoot_extremal(d, with_facet=False)
        return lam

    def elastic_stats(self) -> dict[str, str]:
        """For an elastic build without a state reduction on more modes than the general
        branch and bound takes: how its inner points are proven (build statistics)."""
        if self.st.family != "elastic" or self.reduction is not None \
                or self.p.n <= MAX_GENERAL_MODES:
            return {}
        return {"elastic_inner": f"proven by extremal certificates only (the extremal cone "
                                 f"lies inside the elastic one); the branch and bound over "
                                 f"product states is not run on {self.p.n} modes (more than "
                                 f"{MAX_GENERAL_MODES}), so the shell includes the gap "
                                 f"between the two cones"}

    # ---- geometry on the slice ---------------------------------------------------------------
    def to_slice(self, c: np.ndarray) -> np.ndarray:
        c = np.atleast_2d(c)
        return (c / (c @ self.w)[:, None] - self.c0) @ self.basis

    def outer_vertices(self) -> np.ndarray:
        from scipy.spatial import HalfspaceIntersection

        normals = np.array([f.normal for f in self.facets])
        a = -(normals @ self.basis)
        b = -(normals @ self.c0)
        dim = self.p.k - 1
        box = 1e3 * max(1.0, float(np.linalg.norm(self.c0)))
        a = np.vstack([a, np.eye(dim), -np.eye(dim)])
        b = np.concatenate([b, -box * np.ones(2 * dim)])
        if dim == 1:
            lo = max(-bb / aa for aa, bb in zip(a[:, 0], b, strict=True) if aa < 0)
            hi = min(-bb / aa for aa, bb in zip(a[:, 0], b, strict=True) if aa > 0)
            return np.array([[lo], [hi]])
        hs = HalfspaceIntersection(np.column_stack([a, b]), np.zeros(dim))
        return np.asarray(hs.intersections)

    def lp_vertices(self, m: int) -> np.ndarray:
        """Vertices of the outer polyhedron on the slice (rows, slice coordinates) that
        maximise m random linear objectives, duplicates dropped (``lp`` geometry)."""
        from scipy.optimize import linprog

        normals = np.array([f.normal for f in self.facets])
        a_ub = -(normals @ self.basis)
        b_ub = normals @ self.c0
        scale = np.linalg.norm(a_ub, axis=1)
        a_ub, b_ub = a_ub / scale[:, None], b_ub / scale
        box = 1e3 * max(1.0, float(np.linalg.norm(self.c0)))
        dim = self.p.k - 1
        found: list[np.ndarray] = []
        for _ in range(m):
            g = self.rng.normal(size=dim)
            res = linprog(-g, A_ub=a_ub, b_ub=b_ub, bounds=[(-box, box)] * dim,
                          method="highs")
            if res.status != 0 or res.x is None:
                continue
            y = np.asarray(res.x)
            if all(np.abs(y - z).max() > 1e-9 * max(1.0, float(np.abs(z).max()))
                   for z in found):
                found.append(y)
        return np.array(found).reshape(-1, dim)

    def inner_normals(self) -> np.ndarray:
        ys = self.to_slice(np.array(self.inner))
        spread = np.linalg.svd(ys - ys.mean(axis=0), compute_uv=False) if len(ys) > 1 \
            else np.zeros(0)
        if len(spread) < self.p.k - 1 or not spread[-1] > FLAT_REL * spread[0]:
            # every verified inner point lies (to rounding) in a proper subspace: the cone
            # is flat, or the rays missed a direction; no inner set, and no region, is
            # claimed (a hull of rounding noise would be a valid but empty inner set)
            raise SolverError("flat", "the inner set (the verified inner points do not "
                              "span the space: the cone may have no interior)")
        if self.geometry == "lp":
            if self.p.k - 1 > INNER_HULL_MAX_DIM:
                return self._simplex_normals()
            from scipy.spatial import ConvexHull

            try:
                n_facets = len(ConvexHull(_distinct(self.to_slice(np.array(
                    self.inner)))).equations)
                if n_facets > INNER_HULL_MAX_FACETS:
                    return self._simplex_normals()
                return self._hull_normals()
            except _qhull_error():
                return self._simplex_normals()
        return self._hull_normals()

    def _hull_normals(self) -> np.ndarray:
        from scipy.spatial import ConvexHull

        self.inner_kind = "hull"
        ys = _distinct(self.to_slice(np.array(self.inner)))
        dim = self.p.k - 1
        if dim == 1:
            eqs = np.array([[1.0, -ys.max()], [-1.0, ys.min()]])
        else:
            eqs = ConvexHull(_essential(ys)).equations
        a, b = eqs[:, :dim], eqs[:, dim]
        normals = -(a @ self.basis.T) - (b - a @ (self.basis.T @ self.c0))[:, None] * self.w
        normals = np.vstack([normals, self.w])
        return normals / np.linalg.norm(normals, axis=1, keepdims=True)

    def _simplex_normals(self) -> np.ndarray:
        """Normals of the simplicial cone spanned by k verified inner rays of large volume
        (rows of R^-1 for the ray matrix R: c = R lam with lam >= 0)."""
        self.inner_kind = "simplex"
        pts = np.array(self.inner)
        try:
            idx = _large_simplex(self.to_slice(pts))
        except ValueError as err:
            # every verified inner point lies in a proper subspace: the cone is flat (or
            # the rays missed a direction); no inner set, and no region, is claimed
            raise SolverError("flat", f"the inner set ({err}: the cone may have no "
                              "interior)") from err
        rays = pts[idx]                                   # (k, k), on the slice w . c = 1
        inv = np.linalg.inv(rays.T)
        return inv / np.linalg.norm(inv, axis=1, keepdims=True)

    def shell(self, normals: np.ndarray) -> tuple[float, float]:
        """Monte Carlo share of the unit sphere between the outer facets and the inner
        cone of ``normals`` (:meth:`inner_normals`, computed once by the caller)."""
        x = self.rng.normal(size=(self.st.mc_points, self.p.k))
        outer = (x @ np.array([f.normal for f in self.facets]).T >= 0).all(axis=1)
        inner = np.zeros(len(x), dtype=bool)
        rest = np.flatnonzero(outer)                  # the inner set lies in the outer one
        for lo in range(0, len(rest), 4096):          # bounded memory for many facets
            rows = rest[lo:lo + 4096]
            inner[rows] = (x[rows] @ normals.T >= 0).all(axis=1)
        frac = float(np.mean(outer & ~inner))
        return frac, float(np.sqrt(max(frac, 1.0 / len(x)) / len(x)))


#: smallest over largest spread of the inner points on the slice below which the cone is
#: taken as flat (measured over the test suite: below 1e-13 for a cone that lies in a
#: hyperplane, 3e-4 and above for every full-dimensional one; docs/physics_aqgc.md)
FLAT_REL = 1e-9


def _large_simplex(ys: np.ndarray, passes: int = 3) -> np.ndarray:
    """Indices of dim + 1 rows of ys (points in dim dimensions) spanning a simplex of large
    volume: greedy farthest-point selection from the affine hull of those chosen, then
    single-vertex exchange passes that keep any exchange increasing |det| (the classic
    heuristic for the maximum-volume simplex in a point set).  Raises ValueError when the
    points do not span the space."""
    m, dim = ys.shape
    if m < dim + 1:
        raise ValueError("too few points for a simplex")
    chosen = [int(np.argmax(np.linalg.norm(ys - ys.mean(axis=0), axis=1)))]
    while len(chosen) < dim + 1:
        base = ys[chosen[0]]
        diff = ys - base
        if len(chosen) > 1:
            q, _ = np.linalg.qr((ys[chosen[1:]] - base).T)
            diff = diff - (diff @ q) @ q.T
        dist = np.linalg.norm(diff, axis=1)
        dist[chosen] = -1.0
        nxt = int(np.argmax(dist))
        if dist[nxt] <= 1e-12 * max(1.0, float(np.abs(ys).max())):
            raise ValueError("the points do not span the space")
        chosen.append(nxt)

    def logvol(ids: list[int]) -> float:
        sign, val = np.linalg.slogdet((ys[ids[1:]] - ys[ids[0]]).T)
        return float(val) if sign != 0 else -np.inf

    best = logvol(chosen)
    for _ in range(passes):
        improved = False
        for pos in range(dim + 1):
            for cand in range(m):
                if cand in chosen:
                    continue
                trial = chosen.copy()
                trial[pos] = cand
                val = logvol(trial)
                if val > best + 1e-9:
                    chosen, best, improved = trial, val, True
        if not improved:
            break
    return np.array(chosen)


def _distinct(ys: np.ndarray, rel: float = 1e-6) -> np.ndarray:
    """Drop points within ``rel`` (of the spread) of an earlier one.  Dropping inner points
    only shrinks the inner cone, so this is always safe; it removes the sliver facets that
    near-duplicate rays at a vertex would add to the hull."""
    scale = float(np.abs(ys).max()) or 1.0
    kept: list[np.ndarray] = []
    for y in ys:
        if all(np.abs(y - z).max() > rel * scale for z in kept):
            kept.append(y)
    return np.array(kept)


def _essential(ys: np.ndarray, rel: float = 1e-6) -> np.ndarray:
    """Hull vertices, dropping each whose removal loses less than ``rel`` of the hull's
    volume (safe: a smaller inner set; fewer facets for the fast facet test)."""
    from scipy.spatial import ConvexHull, QhullError

    pts = ys[ConvexHull(ys).vertices]
    total = ConvexHull(pts).volume
    i = 0
    while i < len(pts) and len(pts) > ys.shape[1] + 1:
        rest = np.delete(pts, i, axis=0)
        try:
            vol = ConvexHull(rest).volume
        except QhullError:  # a degenerate remainder: keep the point
            vol = 0.0
        if total - vol < rel * total:
            pts = rest
        else:
            i += 1
    return pts


def build_cone(problem: ConeProblem, settings: ConeSettings | None = None,
               reduction: StateReduction | None = None) -> ConeBuild:
    """Outer facets and inner rays of the cone, refined until the shell is small (module
    docstring).  ``reduction`` (elastic only) speeds up the elastic proofs.  Raises
    SolverError when no verified interior point exists."""
    st = settings or ConeSettings()
    t_start = time.perf_counter()
    bld = _Builder(problem, st, reduction)
    for j in range(problem.k - 1):
        bld.shoot(bld.basis[:, j])
        bld.shoot(-bld.basis[:, j])
    if bld.geometry == "lp":
        return _build_lp(bld, t_start)
    try:
        return _build_hull(bld, t_start)
    except _qhull_error() as err:
        if st.geometry == "hull":
            raise
        # Qhull's precision gives out (usually from 6 slice dimensions): go on with the
        # LP geometry, keeping every verified facet and inner point found so far
        bld.geometry = "lp"
        bld.hull_error = f"{err.__class__.__name__}: {str(err).splitlines()[0][:120]}"
        return _build_lp(bld, t_start)


def _qhull_error() -> type[Exception]:
    from scipy.spatial import QhullError

    return QhullError


def _build_lp(bld: _Builder, t_start: float) -> ConeBuild:
    """The rounds of the ``lp`` geometry (module docstring)."""
    st, problem = bld.st, bld.p
    rounds, frac, tight_share = 0, (1.0, 0.0), 0.0
    while rounds < st.max_rounds:
        rounds += 1
        if len(bld.inner) < problem.k:
            raise SolverError("too few inner points", "cone build: rays did not verify")
        verts = bld.lp_vertices(st.rays_per_round)
        tight = 0
        for y in verts:
            d = y @ bld.basis.T
            dist = float(np.linalg.norm(d))
            lam = bld.shoot(d / dist)
            tight += int(lam >= dist * (1 - TIGHT_REL))
        tight_share = tight / max(1, len(verts))
        if tight_share >= st.tight_stop:
            break
    if len(bld.inner) < problem.k:
        raise SolverError("too few inner points", "cone build: rays did not verify")
    normals = bld.inner_normals()
    frac = bld.shell(normals)
    stats = {"rays": bld.rays, "solves": bld.solves, "rounds": rounds,
             "seconds": time.perf_counter() - t_start, "centre": bld.c0.tolist(),
             "geometry": "lp", "tight_share_last_round": tight_share,
             "inner_set": bld.inner_kind, **bld.elastic_stats()}
    if bld.hull_error:
        stats["hull_error"] = bld.hull_error
    return ConeBuild(problem, st.family, tuple(bld.facets), np.array(bld.inner),
                     normals, frac, stats)


def _build_hull(bld: _Builder, t_start: float) -> ConeBuild:
    """The rounds of the ``hull`` geometry (module docstring)."""
    st, problem = bld.st, bld.p
    rounds, frac = 0, (1.0, 0.0)
    normals: np.ndarray | None = None           # the inner cone of the current rays
    while rounds < st.max_rounds:
        rounds += 1
        if len(bld.inner) < problem.k:
            raise SolverError("too few inner points", "cone build: rays did not verify")
        normals = bld.inner_normals()
        frac = bld.shell(normals)
        if frac[0] < st.shell_target or problem.k == 2:
            break
        verts = bld.outer_vertices()
        cv = bld.c0 + verts @ bld.basis.T
        depth = -(cv @ normals.T).min(axis=1) / np.linalg.norm(cv, axis=1)
        for i in np.argsort(-depth)[: st.rays_per_round]:
            if depth[i] <= 0:
                break
            d = verts[i] @ bld.basis.T
            bld.shoot(d / np.linalg.norm(d))
            normals = None                       # new rays: the inner cone is stale
    if normals is None:
        normals = bld.inner_normals()
    stats = {"rays": bld.rays, "solves": bld.solves, "rounds": rounds,
             "seconds": time.perf_counter() - t_start, "centre": bld.c0.tolist(),
             "geometry": "hull", "inner_set": bld.inner_kind, **bld.elastic_stats()}
    return ConeBuild(problem, st.family, tuple(bld.facets), np.array(bld.inner),
                     normals, frac, stats)


def crossing_symmetric(z: np.ndarray) -> np.ndarray:
    """(Z + Z^x)/2 of a symmetric matrix (the part a linear form on the cone sees)."""
    return 0.5 * (z + cross(z))
