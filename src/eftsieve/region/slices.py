"""Two-dimensional slices and projections of a three-dimensional region, for plotting.

The chpt-su3 region {x : A x >= b} in (L1, L2, L3) is unbounded (a shifted cone), so
both functions clip it to a box first.  A *slice* fixes one coordinate; a *projection*
drops one (the shadow of the clipped polytope).  Both return the vertices of a convex
polygon in counter-clockwise order.
"""

from __future__ import annotations

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.region.model import Region


def _box_rows(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    d = len(lo)
    eye = np.eye(d)
    return np.vstack([eye, -eye]), np.concatenate([lo, -hi])


def _polytope_vertices(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Vertices of {x : a x >= b} (bounded), via scipy's half-space intersection."""
    from scipy.optimize import linprog
    from scipy.spatial import ConvexHull, HalfspaceIntersection

    d = a.shape[1]
    norms = np.linalg.norm(a, axis=1)
    c = np.zeros(d + 1)
    c[-1] = -1.0
    res = linprog(c, A_ub=np.hstack([-a, norms[:, None]]), b_ub=-b,
                  bounds=[(None, None)] * d + [(0, None)], method="highs")
    if res.status != 0 or res.x[-1] <= 1e-12:
        raise SolverError("empty", "the clipped region has no interior in this box")
    # scipy's convention: A x + c <= 0
    hs = HalfspaceIntersection(np.hstack([-a, b[:, None]]), res.x[:d])
    pts = hs.intersections
    hull = ConvexHull(pts)
    return pts[hull.vertices]


def _ccw(poly: np.ndarray) -> np.ndarray:
    centre = poly.mean(axis=0)
    ang = np.arctan2(poly[:, 1] - centre[1], poly[:, 0] - centre[0])
    return poly[np.argsort(ang)]


def _bounds(region: Region, box: dict[str, tuple[float, float]] | None,
            ) -> tuple[np.ndarray, np.ndarray]:
    lo = np.full(region.dim, -0.01)
    hi = np.full(region.dim, 0.01)
    for name, (a, b) in (box or {}).items():
        k = region.coordinates.index(name)
        lo[k], hi[k] = a, b
    return lo, hi


def region_slice(region: Region, fixed: dict[str, float],
                 box: dict[str, tuple[float, float]] | None = None,
                 ) -> tuple[tuple[str, str], np.ndarray]:
    """The polygon of the region at one fixed coordinate, e.g. ``{"L1": 0.0005}``.

    Returns the names of the two free coordinates and the vertices (n, 2), clipped to
    ``box`` (name -> (low, high); default [-0.01, 0.01] for each coordinate).
    """
    if len(fixed) != 1 or region.dim != 3:
        raise ValueError("give one fixed coordinate of a three-dimensional region")
    (name, value), = fixed.items()
    k = region.coordinates.index(name)
    free = [i for i in range(3) if i != k]
    a, b = region.arrays()
    lo, hi = _bounds(region, box)
    a2, b2 = a[:, free], b - a[:, k] * value
    ba, bb = _box_rows(lo[free], hi[free])
    verts = _polytope_vertices(np.vstack([a2, ba]), np.concatenate([b2, bb]))
    names = (region.coordinates[free[0]], region.coordinates[free[1]])
    return names, _ccw(verts)


def region_projection(region: Region, keep: tuple[str, str],
                      box: dict[str, tuple[float, float]] | None = None,
                      ) -> np.ndarray:
    """The shadow of the region (clipped to ``box``) on the plane of two coordinates."""
    from scipy.spatial import ConvexHull

    idx = [region.coordinates.index(n) for n in keep]
    a, b = region.arrays()
    lo, hi = _bounds(region, box)
    ba, bb = _box_rows(lo, hi)
    verts = _polytope_vertices(np.vstack([a, ba]), np.concatenate([b, bb]))
    pts = verts[:, idx]
    hull = ConvexHull(pts)
    return _ccw(pts[hull.vertices])
