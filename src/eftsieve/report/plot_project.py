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


def _interior_point(normals: np.ndarray) -> np.ndarray | None:
    """A point of the cone {c : normals c >= 0} at least s |n_i| inside every facet, for
    the largest s <= 1 within the box |c_i| <= 1 (one LP); None when s is not positive
    (a cone without interior)."""
    from scipy.optimize import linprog

    key = normals.tobytes() + bytes(str(normals.shape), "ascii")
    if key in _INTERIOR:                    # the panels of one plot share their cone
        return _INTERIOR[key]
    d = normals.shape[1]
    norms = np.linalg.norm(normals, axis=1)
    cost = np.zeros(d + 1)
    cost[-1] = -1.0
    res = linprog(cost, A_ub=np.hstack([-normals, norms[:, None]]), b_ub=np.zeros(len(normals)),
                  bounds=[(-1.0, 1.0)] * d + [(0.0, 1.0)], method="highs")
    found = None if res.status != 0 or -float(res.fun) <= 1e-9 else np.asarray(res.x[:d])
    if len(_INTERIOR) >= 8:
        _INTERIOR.clear()
    _INTERIOR[key] = found
    return found


#: interior points of the last few cones (:func:`_interior_point`), by their normals
_INTERIOR: dict[bytes, np.ndarray | None] = {}


#: box |c_i| <= CHART_BOX of the chart LPs (an unbounded end shows as an angle within
#: about 1/CHART_BOX of the chart's edge; HiGHS can stumble on unbounded LPs in many
#: dimensions)
CHART_BOX = 1e6
#: arcs of neighbouring charts closer than this (radians) join
ARC_JOIN = 1e-4


def _chart_arc(normals: np.ndarray, pair: Sequence[int], u: np.ndarray
               ) -> tuple[float, float] | None:
    """The arc of directions of the projection P seen on the line u . y = 1: angles from
    u (in (-90, 90) degrees) of the ends of that segment, from two LPs over the cone;
    None when the line misses P or an LP fails."""
    from scipy.optimize import linprog

    d = normals.shape[1]
    w = np.array([-u[1], u[0]])
    a_eq = np.zeros((1, d))
    a_eq[0, pair[0]], a_eq[0, pair[1]] = u
    ends = []
    for side in (-1.0, 1.0):
        cost = np.zeros(d)
        cost[pair[0]], cost[pair[1]] = -side * w
        res = linprog(cost, A_ub=-normals, b_ub=np.zeros(len(normals)), A_eq=a_eq, b_eq=[1.0],
                      bounds=[(-CHART_BOX, CHART_BOX)] * d, method="highs")
        if res.status != 0:
            return None
        ends.append(float(np.arctan(-side * float(res.fun))))   # atan(min or max of w.y)
    return ends[0], ends[1]


def _wedge_by_lp(normals: np.ndarray, pair: Sequence[int]) -> Plane | None:
    """The projection P of a cone with interior on two coordinates from nine LPs, or None
    when the cone has no interior (then :func:`cone_projection` uses its grid).

    The shadow p0 of an interior point lies inside P.  Four charts, the lines
    u_k . y = 1 with u_k the direction of p0 turned by k x 90 degrees, each meet P in a
    segment whose ends (the extremes of w_k . y, w_k perpendicular to u_k: two LPs) give
    an arc of P's directions within 90 degrees of u_k.  P is convex and holds p0, so its
    directions are the arcs chained outwards from chart 0's; an arc that reaches its
    chart's edge continues in the next chart.  A chain of 360 degrees is the whole plane
    (no rows); otherwise its two ends are P's boundary rays (a half-plane gives the same
    normal twice)."""
    c0 = _interior_point(normals)
    if c0 is None:
        return None
    p0 = c0[list(pair)]
    norm = float(np.linalg.norm(p0))
    empty = Plane(np.empty((0, 2)), np.empty(0), np.empty(0, dtype=int), np.empty(0))
    if norm < 1e-6:       # an interior point over the plane's origin: P is the whole plane
        return empty
    base = float(np.arctan2(p0[1], p0[0]))
    arcs = []
    for k in range(4):
        ang = base + k * np.pi / 2
        arc = _chart_arc(normals, pair, np.array([np.cos(ang), np.sin(ang)]))
        arcs.append(None if arc is None else (k * np.pi / 2 + arc[0], k * np.pi / 2 + arc[1]))
    if arcs[0] is None:
        return None
    lo, hi = arcs[0]
    for k in (1, 2, 3):                                   # counterclockwise
        a = arcs[k]
        if a is None or a[0] > hi + ARC_JOIN:
            break
        hi = max(hi, a[1])
    for k in (3, 2, 1):                                   # clockwise (charts at -90, -180, ...)
        a = arcs[k]
        if a is None:
            break
        a_lo, a_hi = a[0] - 2 * np.pi, a[1] - 2 * np.pi
        if a_hi < lo - ARC_JOIN:
            break
        lo = min(lo, a_lo)
    if hi - lo >= 2 * np.pi - ARC_JOIN:
        return empty
    rows = []
    for end, turn in ((hi, -1.0), (lo, 1.0)):
        ray = np.array([np.cos(base + end), np.sin(base + end)])
        rows.append(turn * np.array([-ray[1], ray[0]]))  # inward: towards the arc
    return Plane(np.array(rows), np.zeros(2), np.arange(2), np.ones(2))


def cone_projection(normals: np.ndarray, pair: Sequence[int], grid: int = 72,
                    tol: float = 1e-10) -> Plane:
    """The projection of a cone {c : normals c >= 0} on two coordinates: a wedge whose
    two boundary rays come from nine LPs (:func:`_wedge_by_lp`) or, for a cone without
    interior, from bisection (to ``tol`` radians) between feasible and infeasible ray
    directions of a ``grid`` (about 140 LPs); no rows when it is the whole plane."""
    fast = _wedge_by_lp(normals, pair)
    if fast is not None:
        return fast
    return _cone_projection_grid(normals, pair, grid, tol)


def _cone_projection_grid(normals: np.ndarray, pair: Sequence[int], grid: int = 72,
                          tol: float = 1e-10) -> Plane:
    """:func:`cone_projection` by a grid of ray directions and bisection at the flips."""
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
