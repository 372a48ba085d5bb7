"""Likelihood scans on a grid as posteriors, truncated by positivity.

A scan gives q = -2 Delta ln L (or Delta chi^2) on a grid of one or two coefficients,
the others held at zero.  With a prior flat in the scanned coefficients over the
scanned range (the stated prior of every result here), the posterior density is
``exp(-q/2)`` normalised over the range.

1-D: q is interpolated by a not-a-knot cubic spline (exact for a Gaussian likelihood,
whose q is quadratic) and integrated cell by cell with 8-point Gauss-Legendre rules,
split at the ends of the allowed part of the line (:mod:`eftsieve.limits.line`), so
that p_inside has no discretisation error for a Gaussian.  Highest-posterior-density
(HPD) intervals come from the density on a uniform grid of :data:`FINE_1D` points.

2-D: q is interpolated by a bicubic spline (bilinear below 4 points per axis) on a
grid :data:`REFINE` times finer; each fine cell carries the density at its centre
times the exact fraction of its area in the allowed part of the plane
(:mod:`eftsieve.limits.plane`, polygon clipping), a midpoint rule whose error is of
order the fine spacing squared.  The truncated contours are the HPD regions
of the truncated posterior, traced with contourpy.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.limits.line import LineCut
from eftsieve.limits.plane import PlaneCut

#: credible levels reported
LEVELS = (0.68, 0.95)
#: points of the uniform grid of a 1-D HPD interval
FINE_1D = 20_001
#: refinement of a 2-D grid per axis
REFINE = 8
#: Gauss-Legendre points per cell in 1-D
GL_POINTS = 8


@dataclass(frozen=True)
class ScanResult:
    """What positivity does to one likelihood scan.

    Attributes
    ----------
    table
        The table's name.
    coefficients
        The scanned coefficients (x, then y).
    p_inside
        Posterior probability of the allowed part (its outer bound: what positivity
        cannot exclude).
    p_inside_sure
        The same for the surely allowed part (equal to ``p_inside`` when decided).
    intervals
        Per coefficient and level, the HPD set of the truncated posterior as a list of
        intervals; ``intervals_before`` the same without positivity.
    contours
        2-D: per level, the truncated HPD contour as lists of points; ``contours_before``
        without positivity.
    prior
        The stated prior.
    method
        How the allowed part was decided (``facets``, ``bisection``, ``boundary``,
        ``undecided``).
    numerics
        The numerical method in one sentence.
    """

    table: str
    coefficients: tuple[str, ...]
    p_inside: float
    p_inside_sure: float
    intervals: dict[str, dict[str, list[list[float]]]]
    intervals_before: dict[str, dict[str, list[list[float]]]]
    prior: str
    method: str
    numerics: str
    contours: dict[str, list[list[list[float]]]] = field(default_factory=dict)
    contours_before: dict[str, list[list[list[float]]]] = field(default_factory=dict)
    grid: dict[str, Any] = field(default_factory=dict, repr=False)
    cut: Any = field(default=None, repr=False)

    def to_dict(self) -> dict[str, Any]:
        return {"table": self.table, "coefficients": list(self.coefficients),
                "allowed_part": None if self.cut is None else self.cut.to_dict(),
                "p_inside": self.p_inside, "p_inside_sure": self.p_inside_sure,
                "intervals": self.intervals, "intervals_before": self.intervals_before,
                "contours": self.contours, "contours_before": self.contours_before,
                "prior": self.prior, "method": self.method, "numerics": self.numerics}


def flat_prior(names: tuple[str, ...], lo: np.ndarray, hi: np.ndarray) -> str:
    return "flat in " + ", ".join(f"{n} on [{a:.6g}, {b:.6g}]"
                                  for n, a, b in zip(names, lo, hi, strict=True)) + \
        " (the scanned range), zero outside"


def hpd_sets(x: np.ndarray, dens: np.ndarray, levels: tuple[float, ...] = LEVELS
             ) -> dict[str, list[list[float]]]:
    """HPD sets of a density on an increasing grid (trapezoid weights), as intervals."""
    w = np.zeros(len(x))
    w[1:] += 0.5 * np.diff(x)
    w[:-1] += 0.5 * np.diff(x)
    mass = dens * w
    total = mass.sum()
    out: dict[str, list[list[float]]] = {}
    if total <= 0:
        return {f"{lv:g}": [] for lv in levels}
    order = np.argsort(-dens, kind="stable")
    cum = np.cumsum(mass[order]) / total
    for lv in levels:
        k = int(np.searchsorted(cum, lv))
        keep = np.zeros(len(x), dtype=bool)
        keep[order[:k + 1]] = True
        edges = np.flatnonzero(np.diff(np.concatenate([[0], keep.astype(int), [0]])))
        out[f"{lv:g}"] = [[float(x[a]), float(x[b - 1])] for a, b in zip(edges[::2],
                                                                          edges[1::2],
                                                                          strict=True)]
    return out


def _spline_1d(x: np.ndarray, q: np.ndarray) -> Any:
    from scipy.interpolate import CubicSpline, interp1d

    if len(x) >= 4:
        return CubicSpline(x, q, bc_type="not-a-knot")
    return interp1d(x, q)


def _mass(spline: Any, q0: float, edges: np.ndarray) -> np.ndarray:
    """The integral of exp(-(q - q0)/2) over each [edges[k], edges[k+1]]."""
    t, w = np.polynomial.legendre.leggauss(GL_POINTS)
    a, b = edges[:-1, None], edges[1:, None]
    nodes = 0.5 * (b - a) * t + 0.5 * (a + b)
    vals = np.exp(-0.5 * (spline(nodes) - q0))
    return np.asarray((vals * w).sum(axis=1) * 0.5 * (edges[1:] - edges[:-1]))


def _p_interval(spline: Any, q0: float, x: np.ndarray, cut: tuple[float, float] | None
                ) -> float:
    if cut is None:
        return 0.0
    lo, hi = max(cut[0], x[0]), min(cut[1], x[-1])
    if lo >= hi:
        return 0.0
    edges = np.unique(np.concatenate([x, [lo, hi]]))
    mass = _mass(spline, q0, edges)
    mid = 0.5 * (edges[:-1] + edges[1:])
    return float(mass[(mid >= lo) & (mid <= hi)].sum() / mass.sum())


def scan_1d(table: str, name: str, x: np.ndarray, q: np.ndarray, cut: LineCut) -> ScanResult:
    """A 1-D scan (x increasing, q = -2 Delta ln L) against the cut of its line."""
    spline = _spline_1d(x, q)
    q0 = float(np.min(q))
    p = _p_interval(spline, q0, x, cut.allowed)
    p_sure = _p_interval(spline, q0, x, cut.sure)
    fine = np.linspace(x[0], x[-1], FINE_1D)
    if cut.allowed is not None:  # the allowed ends are grid points, so HPD sets end there
        ends = [e for e in cut.allowed if x[0] < e < x[-1]]
        fine = np.union1d(fine, ends)
    dens = np.exp(-0.5 * (spline(fine) - q0))
    inside = np.zeros(len(fine), dtype=bool)
    if cut.allowed is not None:
        inside = (fine >= cut.allowed[0]) & (fine <= cut.allowed[1])
    numerics = (f"q interpolated by a {'not-a-knot cubic spline' if len(x) >= 4 else 'linear'}"
                f" over {len(x)} points; p_inside by {GL_POINTS}-point Gauss-Legendre rules per "
                f"cell, split at the allowed ends; HPD intervals on {FINE_1D} points and the "
                "allowed ends")
    return ScanResult(table, (name,), p, p_sure, {name: hpd_sets(fine, dens * inside)},
                      {name: hpd_sets(fine, dens)},
                      flat_prior((name,), x[:1], x[-1:]), cut.method, numerics,
                      grid={"x": fine, "density": dens, "inside": inside}, cut=cut)


def _spline_2d(x: np.ndarray, y: np.ndarray, q: np.ndarray) -> Any:
    from scipy.interpolate import RectBivariateSpline

    kx, ky = (3 if len(x) >= 4 else 1), (3 if len(y) >= 4 else 1)
    return RectBivariateSpline(x, y, q, kx=kx, ky=ky)


def _cells(v: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Fine nodes, the centres of the fine cells and their width."""
    nodes = np.linspace(v[0], v[-1], REFINE * (len(v) - 1) + 1)
    return nodes, 0.5 * (nodes[:-1] + nodes[1:]), float(nodes[1] - nodes[0])


def hpd_levels(dens: np.ndarray, w: np.ndarray, levels: tuple[float, ...] = LEVELS
               ) -> dict[str, float]:
    """Density thresholds whose upper sets hold each credible level."""
    flat, wf = dens.ravel(), w.ravel()
    order = np.argsort(-flat, kind="stable")
    cum = np.cumsum(flat[order] * wf[order])
    if cum[-1] <= 0:
        return {f"{lv:g}": float("inf") for lv in levels}
    cum /= cum[-1]
    return {f"{lv:g}": float(flat[order[min(int(np.searchsorted(cum, lv)), len(order) - 1)]])
            for lv in levels}


def contour_lines(fx: np.ndarray, fy: np.ndarray, dens: np.ndarray, level: float
                  ) -> list[list[list[float]]]:
    """The lines of ``dens`` (shape (nx, ny)) at ``level``, as lists of [x, y]."""
    import contourpy

    gen = contourpy.contour_generator(fx, fy, dens.T, line_type="Separate")
    return [np.asarray(seg).tolist() for seg in gen.lines(level)]


def _inside(cut: PlaneCut, gx: np.ndarray, gy: np.ndarray) -> np.ndarray:
    pts = np.column_stack([gx.ravel(), gy.ravel()])
    return cut.contains(pts).reshape(gx.shape)


def cell_fractions(halfplanes: np.ndarray, fx: np.ndarray, fy: np.ndarray) -> np.ndarray:
    """The area fraction of each cell of the grid (fx, fy) inside the half-planes: 1 or 0
    where all four corners agree, else the exact clipped area (polygon clipping)."""
    from eftsieve.limits.plane import clip_polygon, polygon_area

    nx, ny = np.meshgrid(fx, fy, indexing="ij")
    s = (np.stack([nx, ny], axis=-1) @ halfplanes[:, :2].T - halfplanes[:, 2]) if len(
        halfplanes) else np.ones(nx.shape + (1,))
    ok = s >= 0  # (nx, ny, m)
    corners = [ok[:-1, :-1], ok[1:, :-1], ok[:-1, 1:], ok[1:, 1:]]
    all_in = np.logical_and.reduce(corners).all(axis=-1)
    any_out = np.logical_and.reduce([~c for c in corners]).any(axis=-1)
    frac = all_in.astype(float)
    area = (fx[1] - fx[0]) * (fy[1] - fy[0])
    for i, j in zip(*np.nonzero(~all_in & ~any_out), strict=True):
        cell = np.array([[fx[i], fy[j]], [fx[i + 1], fy[j]], [fx[i + 1], fy[j + 1]],
                         [fx[i], fy[j + 1]]])
        frac[i, j] = polygon_area(clip_polygon(cell, halfplanes)) / area
    return frac


def scan_2d(table: str, names: tuple[str, str], x: np.ndarray, y: np.ndarray, q: np.ndarray,
            cut: PlaneCut) -> ScanResult:
    """A 2-D scan (q of shape (len(x), len(y))) against the cut of its plane.

    Each fine cell carries its density at the centre times the exact fraction of its area
    in the allowed part; the contours are traced on the fine nodes.
    """
    spline = _spline_2d(x, y, q)
    (fx, cx, hx), (fy, cy, hy) = _cells(x), _cells(y)
    cq = spline(cx, cy)
    q0 = float(cq.min())
    dens = np.exp(-0.5 * (cq - q0))
    w = np.full(dens.shape, hx * hy)
    inside, sure = cell_fractions(cut.allowed, fx, fy), cell_fractions(cut.sure, fx, fy)
    total = float(dens.sum())
    p, p_sure = (float((dens * m).sum() / total) for m in (inside, sure))
    trunc = dens * inside
    intervals, before = {}, {}
    for name, axis, other in ((names[0], cx, 1), (names[1], cy, 0)):
        intervals[name] = hpd_sets(axis, trunc.sum(axis=other))
        before[name] = hpd_sets(axis, dens.sum(axis=other))
    lv_after, lv_before = hpd_levels(trunc, w), hpd_levels(dens, w)
    ndens = np.exp(-0.5 * (spline(fx, fy) - q0))
    nx, ny = np.meshgrid(fx, fy, indexing="ij")
    ntrunc = ndens * _inside(cut, nx, ny)
    contours = {k: contour_lines(fx, fy, ntrunc, v) for k, v in lv_after.items()}
    contours_before = {k: contour_lines(fx, fy, ndens, v) for k, v in lv_before.items()}
    numerics = (f"q interpolated by a {'bicubic' if min(len(x), len(y)) >= 4 else 'bilinear'}"
                f" spline; midpoint rule on {len(cx)} x {len(cy)} cells ({REFINE}x finer than "
                "the scan), each weighted by the exact fraction of its area in the allowed "
                "part (error of order the fine spacing squared)")
    return ScanResult(table, names, p, p_sure, intervals, before,
                      flat_prior(names, np.array([x[0], y[0]]), np.array([x[-1], y[-1]])),
                      cut.method, numerics, contours, contours_before,
                      grid={"x": fx, "y": fy, "density": ndens, "inside": ntrunc > 0,
                            "levels": lv_after, "levels_before": lv_before}, cut=cut)
