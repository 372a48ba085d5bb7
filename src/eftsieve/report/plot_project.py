"""Projections of a region onto one or two of its coordinates, for corner panels and
cones of many coefficients: what lies outside a projection is excluded whatever the
other coordinates are.

A polyhedron's shadow comes from its support function (LPs in many directions, an
outer approximation between them); a cone's is a wedge whose boundary rays are found
by bisection on ray feasibility; a coordinate's range from two LPs.

Facet normals from conic solvers carry components of order 1e-8 where the exact
normal has a zero; in a projection such a component lets the dropped coordinate run
to 1e8 and erases the bound.  :func:`drop_noise` zeroes components below
:data:`NORMAL_NOISE` of a row's largest before projecting (the drawing only: checks use
the facets as stored).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from eftsieve.report.plot_base import Plane

#: normal components below this fraction of a row's largest are solver noise (drawings)
NORMAL_NOISE = 1e-6


def drop_noise(normals: np.ndarray) -> np.ndarray:
    """A copy of ``normals`` with the components below :data:`NORMAL_NOISE` of their
    row's largest set to zero."""
    a = np.array(normals, dtype=float)
    big = np.abs(a).max(axis=1, keepdims=True)
    a[np.abs(a) < NORMAL_NOISE * big] = 0.0
    return a

# ---- projections onto a pair of coordinates ------------------------------------------------
#: directions of the support-function projection (outer approximation within 360/N deg)
PROJECTION_DIRECTIONS = 180


def projection_plane(normals: np.ndarray, offsets: np.ndarray,
                     pair: Sequence[int]) -> Plane:
    """The shadow of {x : normals x >= offsets} on two coordinates, as unit rows.

    Support function by LP in :data:`PROJECTION_DIRECTIONS` directions u of the plane:
    h(u) = min u.x over the region; each finite h gives the valid inequality u.y >= h
    (unbounded directions give none).  The polygon they cut is the projection, or a
    superset of it between sampled directions: what lies outside is excluded for every
    value of the other coordinates.
    """
    from scipy.optimize import linprog

    normals = drop_noise(normals)
    if not np.any(offsets):
        return cone_projection(normals, pair)
    d = normals.shape[1]
    rows, rhs = [], []
    for ang in np.linspace(0.0, 2 * np.pi, PROJECTION_DIRECTIONS, endpoint=False):
        u = np.array([np.cos(ang), np.sin(ang)])
        c = np.zeros(d)
        c[list(pair)] = u
        res = linprog(c, A_ub=-normals, b_ub=-offsets, bounds=[(None, None)] * d,
                      method="highs")
        if res.status == 0:
            rows.append(u)
            rhs.append(float(res.fun))
    if not rows:
        return Plane(np.empty((0, 2)), np.empty(0), np.empty(0, dtype=int), np.empty(0))
    a, b = np.array(rows), np.array(rhs)
    scale = max(1.0, float(np.abs(b).max()))
    b[np.abs(b) <= 1e-10 * scale] = 0.0   # an apex at the origin stays there
    return Plane(a, b, np.arange(len(b)), np.ones(len(b)))


def projection_interval(normals: np.ndarray, offsets: np.ndarray,
                        k: int) -> tuple[float, float]:
    """The range of coordinate k over {x : normals x >= offsets} (LPs; infinite ends
    where the region is unbounded, an empty range (inf, -inf) when it is empty)."""
    from scipy.optimize import linprog

    normals = drop_noise(normals)
    d = normals.shape[1]
    if not np.any(offsets):
        return _cone_projection_interval(normals, k)
    ends = []
    for sign in (1.0, -1.0):
        c = np.zeros(d)
        c[k] = sign
        res = linprog(c, A_ub=-normals, b_ub=-offsets, bounds=[(None, None)] * d,
                      method="highs")
        if res.status == 2:
            return np.inf, -np.inf
        ends.append(sign * float(res.fun) if res.status == 0 else -sign * np.inf)
    return ends[0], ends[1]


def _cone_projection_interval(normals: np.ndarray, k: int,
                              tol: float = 1e-9) -> tuple[float, float]:
    """:func:`projection_interval` of a cone {x : normals x >= 0}: each end is 0 or
    infinite.  Solved over the cone cut by the box |x_i| <= 1 (a bounded LP; HiGHS can
    stumble on the unbounded one in many dimensions): an end is infinite when the box
    optimum leaves 0."""
    from scipy.optimize import linprog

    d = normals.shape[1]
    ends = []
    for sign in (1.0, -1.0):
        c = np.zeros(d)
        c[k] = -sign
        res = linprog(c, A_ub=-normals, b_ub=np.zeros(len(normals)), bounds=[(-1, 1)] * d,
                      method="highs")
        reach = -float(res.fun) if res.status == 0 else np.inf
        ends.append(sign * np.inf if reach > tol else 0.0)
    return ends[1], ends[0]


def _ray_in_projection(normals: np.ndarray, pair: Sequence[int], ang: float) -> bool:
    """Whether the ray at angle ``ang`` of the plane of ``pair`` is in the projection of
    the cone {c : normals c >= 0} (an LP feasibility problem)."""
    from scipy.optimize import linprog

    d = normals.shape[1]
    a_eq = np.zeros((2, d))
    a_eq[0, pair[0]] = a_eq[1, pair[1]] = 1.0
    res = linprog(np.zeros(d), A_ub=-normals, b_ub=np.zeros(len(normals)), A_eq=a_eq,
                  b_eq=[np.cos(ang), np.sin(ang)], bounds=[(None, None)] * d,
                  method="highs")
    return bool(res.status == 0)


def cone_projection(normals: np.ndarray, pair: Sequence[int], grid: int = 72,
                    tol: float = 1e-10) -> Plane:
    """The projection of a cone {c : normals c >= 0} on two coordinates: a wedge whose
    boundary rays are found by bisection (to ``tol`` radians) between feasible and
    infeasible ray directions of a ``grid``; no rows when it is the whole plane."""
    angs = np.linspace(0.0, 2 * np.pi, grid, endpoint=False)
    ok = np.array([_ray_in_projection(normals, pair, a) for a in angs])
    empty = Plane(np.empty((0, 2)), np.empty(0), np.empty(0, dtype=int), np.empty(0))
    if ok.all() or not ok.any():
        return empty
    step = angs[1] - angs[0]
    rows = []
    for k in range(grid):
        a, b = ok[k], ok[(k + 1) % grid]
        if a == b:
            continue
        lo, hi = angs[k], angs[k] + step          # feasibility flips inside (lo, hi)
        while hi - lo > tol:
            mid = 0.5 * (lo + hi)
            if _ray_in_projection(normals, pair, mid) == a:
                lo = mid
            else:
                hi = mid
        edge = 0.5 * (lo + hi)
        ray = np.array([np.cos(edge), np.sin(edge)])
        rot = np.array([-ray[1], ray[0]])          # the ray turned by +90 degrees
        rows.append(-rot if a else rot)            # inward: towards the feasible side
    a_rows = np.array(rows)
    return Plane(a_rows, np.zeros(len(rows)), np.arange(len(rows)), np.ones(len(rows)))
