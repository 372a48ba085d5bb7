"""The projection of a positivity cone onto one or two coefficients, the others free.

With coefficients K kept and F free, the projection of the cone C (on K and F) is

    P = {c_K : (c_K, c_F) in C for some c_F}.

It answers "which values of c_K can a UV completion give, whatever the free coefficients
do?", the question behind a limit on c_K that was obtained with the other coefficients
profiled or marginalised.  The slice c_F = 0 (the ordinary region) is a subset of P.

The projection is built by shooting rays in the plane of the kept coefficients from the
projection of the cone's centre (:meth:`eftsieve.bounds.sdp.ExtremalSDP.shoot_free`,
``extremal`` family):

* **inner points, exact.**  Each shot ends at a boundary point of P with the free
  coefficients that reach it.  Pulled back towards the centre by a small delta, that
  lifted point is proven inside C by :func:`eftsieve.bounds.cones.verify_rho` on the full
  problem, so its kept part is a point of P with a proof.  The inner set is the conic
  hull of these points.
* **outer facets, with a stated residual.**  Each shot's dual gives, through
  :func:`eftsieve.bounds.cones.facet_from_dual` on the full problem, a verified facet
  n . c >= 0 of C.  Its free part n_F vanishes only to the solver's accuracy, so for every
  point of C

      n_K . c_K >= -|n_F|_1 max_f |c_f|.

  The kept part n_K is therefore a facet of P up to the residual r = |n_F|_1 / |n_K|,
  which is stored with it: a point c_K outside that facet by the distance m is outside P
  unless some free coefficient exceeds m / r in absolute value (r is about the solver's
  tolerance or the penalty of :meth:`~eftsieve.bounds.sdp.ExtremalSDP.shoot_free`, 1e-13 to
  1e-6).  Facets with r above :data:`MAX_RESIDUAL` are dropped, never reported.

The ``elastic`` cone is projected by :func:`project_elastic`.  Its inner points are those
of the extremal projection (the extremal cone lies inside the elastic one).  Its outer
facets are conic combinations of product-state facets E(u, v) . c >= 0 whose free part
vanishes (to the LP's accuracy, with the same stated residual): along each ray, a linear
program over the free coefficients and the ray's length keeps every product state found
so far satisfied, and the product-state search (:func:`eftsieve.bounds.elastic.
search_states`) at its optimum adds a violated state, until it finds none (Kelley's
cutting planes, J. Soc. Indust. Appl. Math. 8 (1960) 703).  The LP's dual weights give
the facet; each state in it is an exact facet of the elastic cone, so the combination is
one whatever the search missed (a missed state only makes the facet weaker).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.bounds.cones import ConeProblem, FacetCertificate, verify_rho
from eftsieve.errors import SolverError

#: largest residual r = |n_F|_1/|n_K| of a kept outer facet (module docstring)
MAX_RESIDUAL = 1e-5
#: the shooting range: a shot that reaches it found no boundary in that direction
CAP = 1e6
#: time limit of one shot's solve: a shot that runs out fails (its direction is skipped);
#: a few near-degenerate directions otherwise take Clarabel tens of seconds
SHOT_SECONDS = 5.0
_OK = ("optimal", "optimal_inaccurate")


@dataclass(frozen=True)
class ProjectedCone:
    """A built projection (module docstring).

    Attributes
    ----------
    keep, free
        The kept and the free coefficients.
    normals
        Irredundant outer facets ``n . c_K >= 0`` of P (unit normals over ``keep``).
    residuals
        Each facet's residual r (module docstring).
    certificates
        Each facet's certificate on the full problem (its normal has all coefficients).
    points
        Verified points of P (unit norm, over ``keep``), one per successful shot.
    lifts
        The points of C they are projected from (over keep + free, in the problem's order).
    stats
        Shots, failed shots, facets dropped for their residual, the largest residual kept.
    """

    keep: tuple[str, ...]
    free: tuple[str, ...]
    normals: np.ndarray
    residuals: np.ndarray
    certificates: tuple[FacetCertificate, ...]
    points: np.ndarray
    lifts: np.ndarray
    stats: dict[str, Any] = field(default_factory=dict)

    def inner_normals(self) -> np.ndarray:
        """Inward normals of the conic hull of ``points`` (none when it is all of R^k)."""
        return _hull_normals(self.points)


def sign_with_others_free(pc: ProjectedCone) -> str:
    """For a one-coefficient projection: ``nonnegative``, ``nonpositive``, ``zero``,
    ``free`` (proven points of both signs) or ``undecided``."""
    signs = {float(np.sign(n[0])) for n in pc.normals}
    if signs == {1.0, -1.0}:
        return "zero"
    if signs:
        return "nonnegative" if signs == {1.0} else "nonpositive"
    both = (pc.points[:, 0] > 0).any() and (pc.points[:, 0] < 0).any()
    return "free" if both else "undecided"


def _angle(v: np.ndarray) -> float:
    return math.atan2(float(v[1]), float(v[0]))


def _arc(vectors: np.ndarray) -> tuple[int, int, float] | None:
    """For unit vectors in the plane: the indices of the two ends of the smallest arc that
    holds them all (clockwise end first) and its length; None when no arc shorter than pi
    holds them (they positively span the plane or a line)."""
    raw = np.array([_angle(v) for v in vectors])
    order = np.argsort(raw)
    ang = raw[order]
    gaps = np.diff(np.concatenate([ang, [ang[0] + 2 * math.pi]]))
    g = int(np.argmax(gaps))
    length = 2 * math.pi - float(gaps[g])
    if length >= math.pi:
        return None
    return int(order[(g + 1) % len(ang)]), int(order[g]), length


def _hull_normals(points: np.ndarray) -> np.ndarray:
    """Inward normals of the conic hull of points in one or two dimensions."""
    dim = points.shape[1]
    if dim == 1:
        pos, neg = (points[:, 0] > 0).any(), (points[:, 0] < 0).any()
        if pos and neg:
            return np.zeros((0, 1))
        return np.array([[1.0]]) if pos else np.array([[-1.0]])
    ends = _arc(points)
    if ends is None:
        return np.zeros((0, 2))
    p1, p2 = points[ends[0]], points[ends[1]]
    out = np.array([[-p1[1], p1[0]], [p2[1], -p2[0]]])
    return out / np.linalg.norm(out, axis=1, keepdims=True)


def _irredundant(normals: np.ndarray, residuals: np.ndarray) -> list[int]:
    """Indices of the facets that bound the intersection of the half-spaces n . x >= 0
    (one or two dimensions); of facets with the same normal, the smallest residual."""
    if not len(normals):
        return []
    if normals.shape[1] == 1:
        keep = []
        for sign in (1.0, -1.0):
            idx = np.flatnonzero(np.sign(normals[:, 0]) == sign)
            if len(idx):
                keep.append(int(idx[np.argmin(residuals[idx])]))
        return keep
    ends = _arc(normals)
    if ends is None:
        raise SolverError("inconsistent", "projection: the outer facets leave no interior "
                          "(the projection is flat: a ray, a line or the apex)")
    a, b, length = ends

    def best_near(i: int) -> int:
        # of the normals within 1e-6 rad of an end (the same facet up to the solves'
        # accuracy; a slightly looser one is still valid), the smallest residual
        near = np.flatnonzero(normals @ normals[i] > math.cos(1e-6))
        return int(near[np.argmin(residuals[near])])

    if length < 1e-6:                        # one half-plane, found by several shots
        return [best_near(a)]
    return [best_near(a), best_near(b)]


def _directions(n_keep: int, shots: int) -> list[np.ndarray]:
    """The shooting directions in the kept plane (both ways along a line)."""
    if n_keep == 1:
        return [np.array([1.0]), np.array([-1.0])]
    th = 2 * math.pi * (np.arange(shots) + 0.5) / shots
    return list(np.column_stack([np.cos(th), np.sin(th)]))


def _keep_facet(kept: list[tuple[np.ndarray, float, FacetCertificate]],
                cert: FacetCertificate, ki: list[int], fi: tuple[int, ...]) -> int:
    """Append a full-cone facet's kept part (unit), its residual r = |n_F|_1/|n_K| and the
    certificate to ``kept``; 1 (dropped) instead when r exceeds MAX_RESIDUAL, else 0."""
    nk, nf = cert.normal[ki], cert.normal[list(fi)]
    size = float(np.linalg.norm(nk))
    r = float(np.abs(nf).sum()) / size if size > 0 else math.inf
    if r > MAX_RESIDUAL:
        return 1
    kept.append((nk / size, r, cert))
    return 0


def _finish(keep: Sequence[str], free: tuple[str, ...], ki: list[int], fi: tuple[int, ...],
            kept: list[tuple[np.ndarray, float, FacetCertificate]], pts: np.ndarray,
            lf: np.ndarray, stats: dict[str, Any]) -> ProjectedCone:
    """Check each kept facet on the proven points (up to its residual and rounding), keep
    the irredundant ones, and assemble the projection."""
    nrm = np.array([k[0] for k in kept]).reshape(-1, len(ki))
    rs = np.array([k[1] for k in kept])
    for n, r in zip(nrm, rs, strict=True):
        slack = r * np.abs(lf[:, list(fi)]).max(axis=1) / np.linalg.norm(lf[:, ki], axis=1)
        if (pts @ n < -slack - 1e-9).any():
            raise SolverError("inconsistent", f"projection onto {', '.join(keep)}: an "
                              "outer facet cuts a proven point")
    idx = _irredundant(nrm, rs)
    stats = {**stats, "max_residual": float(rs[idx].max()) if idx else 0.0,
             "points": len(pts)}
    return ProjectedCone(tuple(keep), free, nrm[idx], rs[idx],
                         tuple(kept[i][2] for i in idx), pts, lf, stats)


def project_cone(problem: ConeProblem, keep: Sequence[str], shots: int = 24,
                 shrink: float = 1e-6, sdp: Any = None) -> ProjectedCone:
    """The projection of the extremal cone of ``problem`` onto ``keep`` (one or two of its
    coefficients), every other coefficient of the problem free (module docstring).

    ``sdp``: an :class:`eftsieve.bounds.sdp.ExtremalSDP` of ``problem`` to reuse (its
    programs are compiled once).  Raises SolverError when the centre of the cone cannot
    be found or proven, when fewer than two shots succeed, or when a kept facet
    contradicts a proven point.
    """
    from eftsieve.bounds.sdp import ExtremalSDP

    names = problem.coefficients
    ki = [names.index(c) for c in keep]
    fi = tuple(i for i in range(problem.k) if i not in ki)
    if not 1 <= len(ki) <= 2 or len(set(ki)) != len(ki):
        raise ValueError(f"keep one or two distinct coefficients, got {list(keep)}")
    if not fi:
        raise ValueError("no coefficient is left free: this is the cone itself")
    sdp = ExtremalSDP(problem) if sdp is None else sdp
    cen = sdp.centre()
    if cen.status not in _OK or cen.c is None or cen.rho is None or not cen.value > 0:
        raise SolverError(cen.status, "centre SDP of the cone (no interior point found)")
    ok, _, rho0 = verify_rho(problem, cen.c, cen.rho)
    if not ok:
        raise SolverError(cen.status, "centre SDP: its rho failed verification")
    c0 = np.zeros(problem.k)
    c0[ki] = cen.c[ki]
    dirs = _directions(len(ki), shots)
    kept: list[tuple[np.ndarray, float, FacetCertificate]] = []
    points, lifts = [], []
    failed = dropped = unbounded = 0
    for dk in dirs:
        d = np.zeros(problem.k)
        d[ki] = dk
        res = sdp.shoot_free(c0, d, fi, cap=CAP, time_limit=SHOT_SECONDS)
        if res.status not in _OK or res.rho is None or res.c is None:
            failed += 1
            continue
        for delta in (shrink, 10 * shrink, 100 * shrink, 1000 * shrink):
            c_in = (1 - delta) * res.c + delta * cen.c
            proven, _, _ = verify_rho(problem, c_in, (1 - delta) * res.rho + delta * rho0)
            if proven and np.any(c_in[ki]):      # the apex of P is no direction
                points.append(c_in[ki] / np.linalg.norm(c_in[ki]))
                lifts.append(c_in)
                break
        if res.value >= CAP * (1 - 1e-6):
            unbounded += 1                   # no boundary that way: no facet either
            continue
        if res.z is not None:
            cert = res.facet(problem)
            if cert is not None:
                dropped += _keep_facet(kept, cert, ki, fi)
    if len(points) < 2:
        raise SolverError("failed", f"projection onto {', '.join(keep)}: only {len(points)} "
                          f"of {len(dirs)} shots gave a proven point")
    return _finish(keep, tuple(names[i] for i in fi), ki, fi, kept, np.array(points),
                   np.array(lifts), {"shots": len(dirs), "failed_shots": failed,
                                     "unbounded_shots": unbounded,
                                     "dropped_for_residual": dropped})


#: cutting-plane rounds of one elastic shot (each adds one violated product state)
ELASTIC_ROUNDS = 80


def _combined(problem: ConeProblem, weights: np.ndarray, us: np.ndarray, vs: np.ndarray
              ) -> FacetCertificate:
    """The facet sum_s w_s E(u_s, v_s) . c >= 0 (w >= 0), exact for what it stores."""
    from eftsieve.bounds.cones import elastic_values

    normal = sum(w * elastic_values(problem, u, v) for w, u, v in zip(weights, us, vs,
                                                                       strict=True))
    norm = float(np.linalg.norm(normal))
    return FacetCertificate(normal / norm, "product-states", 0.0, 0.0,
                            {"weights": [float(w) for w in weights],
                             "u": [list(map(float, u)) for u in us],
                             "v": [list(map(float, v)) for v in vs]})


def _elastic_shot(problem: ConeProblem, c0: np.ndarray, d: np.ndarray, fi: tuple[int, ...],
                  states: list[tuple[np.ndarray, np.ndarray, np.ndarray]],
                  rng: np.random.Generator) -> tuple[float, FacetCertificate | None]:
    """max lam with E(u, v) . (c0 + lam d + f) >= 0 for the states found (f on ``fi``),
    states added by the search until none is violated at the optimum: (lam, the facet of
    the LP's dual weights) or (CAP, None) when the ray leaves every state satisfied."""
    from scipy.optimize import linprog

    from eftsieve.bounds.cones import elastic_values
    from eftsieve.bounds.elastic import search_states

    nf = len(fi)
    res = None
    for _ in range(ELASTIC_ROUNDS):
        e = np.array([s[2] for s in states])                        # (S, k)
        # variables (lam, f): maximise lam, -(e . d) lam - e_F . f <= e . c0
        a_ub = np.column_stack([-(e @ d), -e[:, list(fi)]])
        res = linprog(np.concatenate([[-1.0], np.zeros(nf)]), A_ub=a_ub, b_ub=e @ c0,
                      bounds=[(None, CAP)] + [(None, None)] * nf, method="highs")
        if res.status != 0:
            return float("nan"), None
        lam = float(res.x[0])
        point = c0 + lam * d
        point[list(fi)] += res.x[1:]
        size = float(np.linalg.norm(point))
        if not size > 1e-12 * float(np.linalg.norm(c0)):
            break                              # the apex: every state vanishes there
        m = problem.tensor(point / size)
        try:
            u, v, val = search_states(m, rng, starts=24, sweeps=25)
        except np.linalg.LinAlgError:
            return float("nan"), None           # a failed shot (counted, no facet)
        if val >= -1e-10 * float(np.abs(m).max()):
            break
        states.append((u, v, elastic_values(problem, u, v)))
    assert res is not None
    lam = float(res.x[0])
    if lam >= CAP * (1 - 1e-9):
        return CAP, None
    y = -np.asarray(res.ineqlin.marginals)                          # >= 0
    use = np.flatnonzero(y > 1e-12 * max(float(y.max()), 1e-300))
    if not len(use):
        return lam, None
    return lam, _combined(problem, y[use], np.array([states[i][0] for i in use]),
                          np.array([states[i][1] for i in use]))


def project_elastic(problem: ConeProblem, keep: Sequence[str], shots: int = 24,
                    shrink: float = 1e-6, sdp: Any = None, seed: int = 0) -> ProjectedCone:
    """The projection of the elastic cone of ``problem`` onto ``keep`` (module
    docstring): the extremal projection's proven points, and facets that are conic
    combinations of product states with a vanishing free part (residual stated as for
    :func:`project_cone`)."""
    from eftsieve.bounds.cones import elastic_values

    inner = project_cone(problem, keep, shots, shrink, sdp)
    names = problem.coefficients
    ki = [names.index(c) for c in keep]
    fi = tuple(i for i in range(problem.k) if i not in ki)
    rng = np.random.default_rng(seed)
    eye = np.eye(problem.n)
    # start from the states of single modes, u = e_i, v = e_j (exact facets M^{ijij} . c)
    states = [(eye[i], eye[j], elastic_values(problem, eye[i], eye[j]))
              for i in range(problem.n) for j in range(problem.n)]
    states = [s for s in states if np.any(s[2])]
    c0 = np.zeros(problem.k)
    c0[ki] = inner.lifts.mean(axis=0)[ki]
    dirs = _directions(len(ki), shots)
    kept: list[tuple[np.ndarray, float, FacetCertificate]] = []
    failed = dropped = unbounded = 0
    for dk in dirs:
        d = np.zeros(problem.k)
        d[ki] = dk
        lam, cert = _elastic_shot(problem, c0, d, fi, states, rng)
        if not np.isfinite(lam):
            failed += 1
            continue
        if cert is None:
            unbounded += int(lam >= CAP)
        else:
            dropped += _keep_facet(kept, cert, ki, fi)
    return _finish(keep, inner.free, ki, fi, kept, inner.points, inner.lifts,
                   {"shots": len(dirs), "failed_shots": failed, "unbounded_shots": unbounded,
                    "dropped_for_residual": dropped, "product_states": len(states),
                    "inner_points": "extremal (proven by rho)"})


#: the caution every projected region carries (docs/physics_cones.md, "Projections: other
#: coefficients free")
PROJECTION_NOTE = (
    "Projection: the coefficients {free} are free (any value), not zero. A point is "
    "allowed when SOME values of them put it in the cone; a fit's own values of them are "
    "not used. The outer facets hold up to the residual r stated with each (largest "
    "{rmax:.1e}): a point outside a facet by m is excluded unless a free coefficient "
    "exceeds m/r in size.")


def projection_region(theory: str, pc: ProjectedCone, convention: dict[str, Any],
                      notes: tuple[str, ...] = (), family: str = "extremal") -> Any:
    """The :class:`eftsieve.region.Region` of a projection: facets ``n . c >= 0`` over the
    kept coefficients with their certificates (on the full problem) and residuals, and the
    conic hull of the proven points as the inner set.  It has no exact shell solver (the
    shell between the two is a thin wedge of about ``shrink``)."""
    from eftsieve.region.model import Facet, Region

    label = f"projection, {len(pc.free)} free"
    facets = tuple(Facet(tuple(float(x) for x in n), 0.0, family, label, {}, 0.0,
                         "verified", {"certificate": c.to_dict(), "free_residual": float(r),
                                      "full_normal": [float(x) for x in c.normal]})
                   for n, r, c in zip(pc.normals, pc.residuals, pc.certificates, strict=True))
    inner = tuple(Facet(tuple(float(x) for x in n), 0.0, family,
                        "inner cone (hull of proven points of the projection)", {}, 0.0,
                        "verified", {"kind": "inner"}) for n in pc.inner_normals())
    settings = {"family": family,
                "projection": {"keep": list(pc.keep), "free": list(pc.free), **pc.stats}}
    note = PROJECTION_NOTE.format(free=", ".join(pc.free), rmax=pc.stats["max_residual"])
    return Region(theory, pc.keep, {**convention, "free": list(pc.free)}, facets, settings,
                  inner, tuple(tuple(float(x) for x in p) for p in pc.points),
                  notes=(note, *notes))
