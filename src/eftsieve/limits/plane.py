"""The allowed part of a plane through a region: half-planes, polygons and areas.

Two-coefficient results (scans, contours) live in the plane ``c = p0 + x d1 + y d2``.
The outer facets ``a . c >= b`` cut it in the half-planes ``(a.d1) x + (a.d2) y >= b -
a.p0``; the inner facets give the surely allowed part.  Through the apex of a cone
(``p0 = 0``, every offset 0) the allowed part is a wedge bounded by two rays; where the
inner and outer wedges differ and the region has an exact membership test, each
boundary ray is settled by bisection on its angle
(:func:`eftsieve.bounds.cone_region.shell_membership`), as the ends of a line are in
:mod:`eftsieve.limits.line`.

Use :func:`plane_cut` for the half-planes, :meth:`PlaneCut.contains` for points and
:func:`clip_polygon` with :func:`polygon_area` for contours.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.limits.line import (
    BISECTION,
    BOUNDARY,
    FACETS,
    INNER_PARALLEL_TOL,
    INSIDE,
    MARGINAL,
    MAX_STEPS,
    ON_BOUNDARY,
    OUTSIDE,
    UNDECIDED,
    Member,
    exact_member,
)
from eftsieve.region.model import Region
from eftsieve.tolerances import LIMITS_BOUNDARY_RTOL, LIMITS_PARALLEL_TOL, LIMITS_SETTLE_RTOL


@dataclass(frozen=True)
class PlaneCut:
    """The allowed part of a plane, as half-planes ``n . (x, y) >= c`` (rows n1, n2, c).

    Attributes
    ----------
    allowed
        What positivity cannot exclude, shape (m, 3).
    sure
        What positivity certainly allows, shape (k, 3) (a row (0, 0, 1) makes it empty).
    method
        ``facets``, ``bisection``, ``boundary`` or ``undecided`` (as for a line).
    notes
        Why an edge needed more than the facets.
    solves
        Exact membership solves spent.
    """

    allowed: np.ndarray
    sure: np.ndarray
    method: str
    notes: tuple[str, ...] = ()
    solves: int = 0

    def contains(self, xy: np.ndarray, sure: bool = False) -> np.ndarray:
        """Mask of points (n, 2) in the allowed (or the surely allowed) part."""
        h = self.sure if sure else self.allowed
        pts = np.asarray(xy, dtype=float)
        if len(h) == 0:
            return np.ones(len(pts), dtype=bool)
        return np.asarray((pts @ h[:, :2].T - h[:, 2] >= 0).all(axis=1))

    def to_dict(self) -> dict[str, Any]:
        return {"allowed": self.allowed.tolist(), "sure": self.sure.tolist(),
                "method": self.method, "notes": list(self.notes), "solves": self.solves}


def _halfplanes(a: np.ndarray, b: np.ndarray, p0: np.ndarray, d: np.ndarray,
                parallel_tol: float = LIMITS_PARALLEL_TOL) -> np.ndarray:
    """Half-planes (n1, n2, c) of the facets in the plane.  A facet whose normal has a
    component below ``parallel_tol`` in the plane and that the plane satisfies at ``p0``
    is dropped (as for a line, :func:`eftsieve.limits.line.facet_interval`); one the
    plane violates everywhere makes the part empty (the row (0, 0, 1))."""
    n = a @ d  # (m, 2)
    c = b - a @ p0
    norm = np.linalg.norm(n, axis=1)
    scale = max(1.0, float(np.abs(c).max(initial=0.0)))
    satisfied = c <= 1e-12 * scale
    keep = ~((norm <= parallel_tol) & satisfied)
    n, c, norm = n[keep], c[keep], norm[keep]
    rows = [np.array([0.0, 0.0, 1.0])] if np.any(norm == 0) else []
    ok = norm > 0
    h = np.column_stack([n[ok] / norm[ok, None], c[ok] / norm[ok]])
    return np.vstack([h, *rows]) if rows else h


def _wedge(h: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """The two boundary rays of a pointed 2-d cone {n . p >= 0}, or None when it is not
    one (a half-plane, the plane, a ray or the apex alone)."""
    if len(h) == 0 or np.any(h[:, 2] != 0):
        return None
    cands = np.vstack([np.column_stack([-h[:, 1], h[:, 0]]), np.column_stack([h[:, 1], -h[:, 0]])])
    ok = cands[(cands @ h[:, :2].T >= -LIMITS_BOUNDARY_RTOL).all(axis=1)]
    if len(ok) < 2:
        return None
    ang = np.arctan2(ok[:, 1], ok[:, 0])
    i, j = int(np.argmin(ang)), int(np.argmax(ang))
    r1, r2 = ok[i], ok[j]
    cr = r1[0] * r2[1] - r1[1] * r2[0]
    if abs(cr) <= LIMITS_BOUNDARY_RTOL:  # opposite or equal rays: not a pointed wedge
        return None
    mid = r1 + r2
    if not (h[:, :2] @ mid >= -LIMITS_BOUNDARY_RTOL).all():  # the wedge spans the wrap
        mid = -mid
    if np.dot(r1, mid) < 0 or np.dot(r2, mid) < 0:
        return None
    return r1, r2


def wedge_halfplanes(r1: np.ndarray, r2: np.ndarray) -> np.ndarray:
    """The half-planes of the wedge spanned by rays r1, r2 (angle below pi)."""
    s = np.sign(r1[0] * r2[1] - r1[1] * r2[0])
    return np.array([[-s * r1[1], s * r1[0], 0.0], [s * r2[1], -s * r2[0], 0.0]])


def plane_cut(region: Region, p0: np.ndarray, d1: np.ndarray, d2: np.ndarray, *,
              exact: bool = True) -> PlaneCut:
    """The allowed part of the plane ``p0 + x d1 + y d2`` (region coordinates)."""
    d = np.column_stack([d1, d2]).astype(float)
    p0 = np.asarray(p0, dtype=float)
    outer = _halfplanes(*region.arrays(), p0, d)
    inner = _halfplanes(*region.arrays(inner=True), p0, d, INNER_PARALLEL_TOL)
    if not region.inner_facets:
        return PlaneCut(outer, outer, FACETS)
    wo, wi = _wedge(outer), _wedge(inner)
    if wo is not None and wi is not None and all(np.allclose(x, y, rtol=0, atol=1e-15)
                                                 for x, y in zip(wo, wi, strict=True)):
        return PlaneCut(outer, inner, FACETS)
    member = exact_member(region) if exact else None
    if member is None or wo is None or np.any(p0):
        why = ("no exact membership test" if member is None else
               "the slice is not a wedge through the cone's apex")
        return PlaneCut(outer, inner, UNDECIDED, (f"between the inner and outer facets: {why}",))
    if wi is None:  # no inner wedge: probe the middle of the outer one
        mid = (wo[0] + wo[1]) / np.linalg.norm(wo[0] + wo[1])
        pt = d @ mid
        code, why = member(pt)
        if code != INSIDE:
            a, b = region.arrays()
            rel = float((a @ pt - b).min() / np.linalg.norm(pt))
            face = code == MARGINAL and abs(rel) <= LIMITS_BOUNDARY_RTOL
            note = (f"{ON_BOUNDARY}: the plane lies in a face of the cone ({why})" if face
                    else f"the middle of the outer wedge is not proven allowed ({why})")
            return PlaneCut(outer, inner, BOUNDARY if face else UNDECIDED, (note,), 1)
        wi = (mid, mid)
    return _settle_wedge(region, member, d, wo, wi)


def _settle_wedge(region: Region, member: Member, d: np.ndarray,
                  wo: tuple[np.ndarray, np.ndarray], wi: tuple[np.ndarray, np.ndarray]
                  ) -> PlaneCut:
    a, b = region.arrays()
    solves = 0
    notes: list[str] = []
    sure_rays, limit_rays = [], []
    for r_out in wo:
        r_in = min(wi, key=lambda r: -float(np.dot(r, r_out)))
        t_in, t_out = np.arctan2(r_in[1], r_in[0]), np.arctan2(r_out[1], r_out[0])
        t_out = t_in + np.angle(np.exp(1j * (t_out - t_in)))  # the short way round
        for _ in range(MAX_STEPS):
            if abs(t_out - t_in) <= LIMITS_SETTLE_RTOL:
                break
            mid = 0.5 * (t_in + t_out)
            pt = d @ np.array([np.cos(mid), np.sin(mid)])
            code, why = member(pt)
            solves += 1
            if code == INSIDE:
                t_in = mid
            elif code == OUTSIDE:
                t_out = mid
            else:
                rel = float((a @ pt - b).min() / np.linalg.norm(pt))
                tag = ON_BOUNDARY if (code == MARGINAL and abs(rel) <= LIMITS_BOUNDARY_RTOL) \
                    else "undecided"
                notes.append(f"edge near angle {np.degrees(mid):.6g} deg: {tag} ({why})")
                break
        sure_rays.append(np.array([np.cos(t_in), np.sin(t_in)]))
        limit_rays.append(np.array([np.cos(t_out), np.sin(t_out)]))
    method = (BISECTION if not notes else
              BOUNDARY if all(ON_BOUNDARY in n for n in notes) else UNDECIDED)
    return PlaneCut(wedge_halfplanes(*limit_rays), wedge_halfplanes(*sure_rays), method,
                    tuple(notes), solves)


def clip_polygon(poly: np.ndarray, halfplanes: np.ndarray) -> np.ndarray:
    """The part of a polygon (n, 2) inside every half-plane (Sutherland-Hodgman; the
    clip region is convex, the polygon need not be)."""
    out = np.asarray(poly, dtype=float)
    for n1, n2, c in halfplanes:
        if len(out) == 0:
            break
        s = out @ np.array([n1, n2]) - c
        nxt = []
        for k in range(len(out)):
            p, q = out[k], out[(k + 1) % len(out)]
            sp, sq = s[k], s[(k + 1) % len(out)]
            if sp >= 0:
                nxt.append(p)
            if (sp >= 0) != (sq >= 0):
                nxt.append(p + (q - p) * (sp / (sp - sq)))
        out = np.array(nxt).reshape(-1, 2)
    return out


def polygon_area(poly: np.ndarray) -> float:
    """The area of a simple polygon (n, 2), by the shoelace formula."""
    p = np.asarray(poly, dtype=float)
    if len(p) < 3:
        return 0.0
    x, y = p[:, 0], p[:, 1]
    return float(0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
