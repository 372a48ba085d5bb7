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
    facet_from_dual,
    facet_from_states,
    verify_rho,
)
from eftsieve.bounds.elastic import (
    StateReduction,
    prove_elastic,
    search_reduced,
    search_states,
)
from eftsieve.bounds.sdp import ExtremalSDP
from eftsieve.errors import SolverError

_OK = ("optimal", "optimal_inaccurate")


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
    """

    family: str = "extremal"
    shell_target: float = 1e-3
    max_rounds: int = 30
    rays_per_round: int = 12
    shrink: float = 1e-7
    mc_points: int = 200_000
    seed: int = 0
    elastic_cells: int = 300_000

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

    # ---- rays ----------------------------------------------------------------------------
    def shoot(self, d: np.ndarray) -> None:
        self.rays += 1
        if self.st.family == "extremal":
            self._shoot_extremal(d)
        else:
            self._shoot_elastic(d)

    def _shoot_extremal(self, d: np.ndarray, with_facet: bool = True) -> None:
        res = self.sdp.shoot(self.c0, d, cap=1e6)
        self.solves += 1
        if res.status not in _OK or res.rho is None:
            return
        if with_facet and res.z is not None:
            cert = facet_from_dual(self.p, res.z)
            if cert is not None:
                self.facets.append(cert)
        for delta in (self.st.shrink, 10 * self.st.shrink, 100 * self.st.shrink,
                      1000 * self.st.shrink):
            c_in = self.c0 + (1 - delta) * res.value * d
            ok, _, _ = verify_rho(self.p, c_in, (1 - delta) * res.rho + delta * self.rho0)
            if ok:
                self.inner.append(c_in / (self.w @ c_in))
                return

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

    def _shoot_elastic(self, d: np.ndarray) -> None:
        lam = self._dinkelbach(d, 1e6)
        for delta in (1e3 * self.st.shrink, 1e4 * self.st.shrink, 1e5 * self.st.shrink):
            c_in = self.c0 + (1 - delta) * lam * d
            outcome, proof = self.prove_elastic_point(c_in)
            if outcome == "proven":
                self.inner.append(c_in / (self.w @ c_in))
                return
            if outcome == "violated" and proof.witness is not None:
                u, v, _ = proof.witness
                self.facets.append(facet_from_states(self.p, u, v))
                lam = self._dinkelbach(d, lam)
        # no proof near the elastic boundary: keep the extremal inner point (extremal is
        # inside elastic), but not its dual facet (not valid for elastic)
        self._shoot_extremal(d, with_facet=False)

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

    def inner_normals(self) -> np.ndarray:
        from scipy.spatial import ConvexHull

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

    def shell(self) -> tuple[float, float]:
        x = self.rng.normal(size=(self.st.mc_points, self.p.k))
        outer = (x @ np.array([f.normal for f in self.facets]).T >= 0).all(axis=1)
        inner = (x @ self.inner_normals().T >= 0).all(axis=1)
        frac = float(np.mean(outer & ~inner))
        return frac, float(np.sqrt(max(frac, 1.0 / len(x)) / len(x)))


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
    rounds, frac = 0, (1.0, 0.0)
    while rounds < st.max_rounds:
        rounds += 1
        if len(bld.inner) < problem.k:
            raise SolverError("too few inner points", "cone build: rays did not verify")
        frac = bld.shell()
        if frac[0] < st.shell_target or problem.k == 2:
            break
        verts = bld.outer_vertices()
        normals = bld.inner_normals()
        cv = bld.c0 + verts @ bld.basis.T
        depth = -(cv @ normals.T).min(axis=1) / np.linalg.norm(cv, axis=1)
        for i in np.argsort(-depth)[: st.rays_per_round]:
            if depth[i] <= 0:
                break
            d = verts[i] @ bld.basis.T
            bld.shoot(d / np.linalg.norm(d))
    stats = {"rays": bld.rays, "solves": bld.solves, "rounds": rounds,
             "seconds": time.perf_counter() - t_start, "centre": bld.c0.tolist()}
    return ConeBuild(problem, st.family, tuple(bld.facets), np.array(bld.inner),
                     bld.inner_normals(), frac, stats)


def crossing_symmetric(z: np.ndarray) -> np.ndarray:
    """(Z + Z^x)/2 of a symmetric matrix (the part a linear form on the cone sees)."""
    return 0.5 * (z + cross(z))
