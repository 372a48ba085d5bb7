"""Figures of allowed regions, of posteriors, and of the two together.

Two kinds of figure are made here.

* :func:`region_figure` draws a region in the plane of two of its coordinates (or on a
  line, for a region of one coordinate): every facet's boundary line with its channel
  and family written along it, the excluded side of each facet tinted in the facet's
  colour and the union of the excluded points hatched, the allowed polygon, the band
  between the inner and the outer set where the numerics cannot decide, optional
  uncertainty bands of the boundaries, and a posterior's 68 % and 95 % highest-density
  contours over a light scatter of its samples.
* :func:`corner_figure` draws a corner plot of posterior samples (laid out by the
  ``corner`` package, in our colours), optionally a second sample set for a
  before/after comparison, and hatches the excluded part of every panel that is
  spanned by region coordinates.

Matplotlib is imported inside the functions and every figure is a bare
:class:`matplotlib.figure.Figure` on an Agg canvas, so nothing here touches pyplot's
global state.  The colours are the Okabe-Ito palette, which stays distinguishable under
the common colour-vision deficiencies; line styles change as well once the facet
colours repeat.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.io.atomic import atomic_write_with
from eftsieve.region.model import Region
from eftsieve.stats.ess import kish_ess

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["corner_figure", "region_figure", "save_corner", "save_region_plot"]

# ---- look ------------------------------------------------------------------------------
BLUE = "#0072B2"
VERMILION = "#D55E00"
ORANGE = "#E69F00"
SKY = "#56B4E9"
GREEN = "#009E73"
YELLOW = "#F0E442"
PURPLE = "#CC79A7"
GREY = "#7A7A7A"
#: Facet colours, cycled; the line style changes on every new cycle.
FACET_COLOURS = (VERMILION, PURPLE, ORANGE, SKY, GREEN)
FACET_STYLES = ("-", "--", "-.", ":")
#: Colours of the first and the second sample set of a corner plot.
SAMPLE_COLOURS = (BLUE, VERMILION)
EXCLUDED_HATCH = "///"
UNDECIDED_HATCH = "..."
#: Highest-density mass fractions drawn as contours.
HPD_LEVELS = (0.68, 0.95)
MAX_SCATTER = 2000
DEFAULT_DPI = 150

#: Most bins per axis of the 2-D posterior histogram (fewer for small samples).
_HIST_BINS = 60
_CORNER_BINS = 30
#: Below this effective sample size posteriors are shown as points, without contours.
_MIN_ESS_CONTOURS = 30.0
_LABEL_FRACTIONS = (0.5, 0.3, 0.7, 0.2, 0.8, 0.4, 0.6)
_ZERO = 1e-12


# ---- input checks ----------------------------------------------------------------------
def _check_weights(weights: Any, n: int) -> np.ndarray | None:
    """Validate sample weights: finite, non-negative, one per sample, positive sum."""
    if weights is None:
        return None
    w = np.asarray(weights, dtype=float)
    if w.shape != (n,):
        raise ValueError(f"weights must have shape ({n},), got {w.shape}")
    if not np.isfinite(w).all():
        raise ValueError("weights contain NaN or infinite values")
    if (w < 0).any() or w.sum() <= 0:
        raise ValueError("weights must be non-negative with a positive sum")
    return w


def _check_samples(samples: Any, weights: Any,
                   ncols: int) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Validate samples of shape (n, ncols) (or (n,) when ncols is 1) and their weights."""
    if samples is None:
        if weights is not None:
            raise ValueError("weights were given without samples")
        return None, None
    x = np.asarray(samples, dtype=float)
    if x.ndim == 1 and ncols == 1:
        x = x[:, None]
    if x.ndim != 2 or x.shape[1] != ncols or x.shape[0] == 0:
        raise ValueError(f"samples must have shape (n, {ncols}) with n >= 1, got {x.shape}")
    if not np.isfinite(x).all():
        raise ValueError("samples contain NaN or infinite values")
    return x, _check_weights(weights, x.shape[0])


def _sample_set(samples: Any, weights: Any, ncols: int,
                what: str = "samples") -> tuple[np.ndarray, np.ndarray | None]:
    """Like :func:`_check_samples` for a set that must be given."""
    if samples is None:
        raise ValueError(f"{what} must be given")
    x, w = _check_samples(samples, weights, ncols)
    if x is None:
        raise ValueError(f"{what} must be given")
    return x, w


def _check_coords(region: Region, coords: Sequence[int]) -> tuple[int, int]:
    """Two distinct coordinate indices of ``region``."""
    ij = tuple(int(c) for c in coords)
    if len(ij) != 2 or ij[0] == ij[1] or not all(0 <= c < region.dim for c in ij):
        raise ValueError(f"coords must be two distinct indices below {region.dim}, "
                         f"got {tuple(coords)}")
    return ij[0], ij[1]


def _check_bands(region: Region, bands: Mapping[int, float] | None) -> dict[int, float]:
    """Facet index -> offset uncertainty, checked."""
    out: dict[int, float] = {}
    for key, sigma in (bands or {}).items():
        k, s = int(key), float(sigma)
        if not 0 <= k < len(region.facets):
            raise ValueError(f"bands: no facet {key} (the region has {len(region.facets)})")
        if not np.isfinite(s) or s < 0:
            raise ValueError(f"bands: sigma of facet {key} must be finite and >= 0, got {sigma}")
        out[k] = s
    return out


def _check_limits(limits: Any, ndim: int) -> np.ndarray:
    """Plot limits as an array (ndim, 2) of increasing finite pairs."""
    lim = np.asarray(limits, dtype=float)
    if ndim == 1 and lim.shape == (2,):
        lim = lim[None]
    if lim.shape != (ndim, 2) or not np.isfinite(lim).all() or (lim[:, 1] <= lim[:, 0]).any():
        raise ValueError(f"limits must be {ndim} increasing finite (low, high) pairs, "
                         f"got {limits!r}")
    return lim


# ---- geometry --------------------------------------------------------------------------
@dataclass(frozen=True)
class _Plane:
    """Facets restricted to a plane (or line): unit rows ``a x >= b``.

    ``index`` holds the facet index of every row and ``scale`` the norm that each row
    was divided by (to convert offset uncertainties).
    """

    a: np.ndarray
    b: np.ndarray
    index: np.ndarray
    scale: np.ndarray


def _restrict(normals: np.ndarray, offsets: np.ndarray, keep: Sequence[int],
              fixed: np.ndarray | None = None) -> _Plane:
    """Facets in the coordinates ``keep``.

    With ``fixed`` the other coordinates are set to ``fixed`` (a slice); without it only
    facets that do not involve the other coordinates are kept (they bound the
    projection rigorously).
    """
    others = [k for k in range(normals.shape[1]) if k not in keep]
    full = np.linalg.norm(normals, axis=1)
    sub = normals[:, list(keep)]
    b = offsets.astype(float).copy()
    rows = np.ones(len(b), dtype=bool)
    if others and fixed is not None:
        b = b - normals[:, others] @ fixed[others]
    elif others:
        rows = (np.abs(normals[:, others]) <= _ZERO * full[:, None]).all(axis=1)
    norms = np.linalg.norm(sub, axis=1)
    rows &= norms > _ZERO * np.maximum(full, np.finfo(float).tiny)
    idx = np.flatnonzero(rows)
    return _Plane(sub[idx] / norms[idx, None], b[idx] / norms[idx], idx, norms[idx])


def _box_polygon(box: np.ndarray) -> np.ndarray:
    """The corners of a box ((x0, x1), (y0, y1)), counter-clockwise."""
    (x0, x1), (y0, y1) = box
    return np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]], dtype=float)


def _clip(poly: np.ndarray, normal: np.ndarray, offset: float) -> np.ndarray:
    """The part of a convex polygon with ``normal . x >= offset`` (Sutherland-Hodgman)."""
    if len(poly) == 0:
        return poly
    out: list[np.ndarray] = []
    s = poly @ normal - offset
    for k in range(len(poly)):
        p, q, sp, sq = poly[k], poly[(k + 1) % len(poly)], s[k], s[(k + 1) % len(poly)]
        if sp >= 0:
            out.append(p)
        if sp * sq < 0:
            out.append(p + (q - p) * (sp / (sp - sq)))
    return np.array(out) if len(out) >= 3 else np.empty((0, 2))


def _allowed_polygon(plane: _Plane, box: np.ndarray) -> np.ndarray:
    """The allowed set inside the box, as polygon vertices (possibly none)."""
    poly = _box_polygon(box)
    for normal, offset in zip(plane.a, plane.b, strict=True):
        poly = _clip(poly, normal, offset)
    return poly


def _segment(normal: np.ndarray, offset: float, box: np.ndarray) -> np.ndarray | None:
    """The part of the line ``normal . x == offset`` inside the box (Liang-Barsky)."""
    base = normal * offset  # the point of the line nearest the origin (unit normal)
    direction = np.array([-normal[1], normal[0]])
    t0, t1 = -np.inf, np.inf
    for k in range(2):
        lo, hi = box[k]
        if abs(direction[k]) <= _ZERO:
            if not lo <= base[k] <= hi:
                return None
            continue
        ta, tb = sorted(((lo - base[k]) / direction[k], (hi - base[k]) / direction[k]))
        t0, t1 = max(t0, ta), min(t1, tb)
    if not t1 > t0:
        return None
    return np.array([base + t0 * direction, base + t1 * direction])


def _vertices(plane: _Plane) -> np.ndarray:
    """Pairwise intersections of the facet lines that satisfy every facet."""
    pts = []
    m = len(plane.b)
    for i in range(m):
        for j in range(i + 1, m):
            mat = plane.a[[i, j]]
            if abs(np.linalg.det(mat)) <= 1e-10:
                continue
            pts.append(np.linalg.solve(mat, plane.b[[i, j]]))
    if not pts:
        return np.empty((0, 2))
    p = np.array(pts)
    tol = 1e-9 * max(1.0, float(np.abs(p).max()))
    return p[(p @ plane.a.T - plane.b >= -tol).all(axis=1)]


def _interval(plane: _Plane) -> tuple[float, float]:
    """The allowed interval of unit rows ``+-x >= b`` on a line (bounds may be infinite)."""
    a, b = plane.a[:, 0], plane.b
    lo = float(np.max(b[a > 0], initial=-np.inf))
    hi = float(np.min(-b[a < 0], initial=np.inf))
    return lo, hi


def _ring_path(outer: np.ndarray, holes: Sequence[np.ndarray] = ()) -> Any:
    """A compound path: ``outer`` with the (reversed) ``holes`` cut out."""
    from matplotlib.path import Path as MplPath

    verts, codes = [], []
    for k, ring in enumerate([outer, *holes]):
        if len(ring) < 3:
            continue
        ring = ring if k == 0 else ring[::-1]
        verts.extend([*ring, ring[0]])
        codes.extend([MplPath.MOVETO] + [MplPath.LINETO] * (len(ring) - 1)
                     + [MplPath.CLOSEPOLY])
    return MplPath(np.array(verts, dtype=float), codes)


def _boundary_edges(poly: np.ndarray, plane: _Plane) -> np.ndarray:
    """The edges of ``poly`` that lie on a facet line, NaN-separated, shape (k, 2)."""
    if len(poly) == 0:
        return np.empty((0, 2))
    scale = max(1.0, float(np.abs(poly).max()))
    out = []
    for k in range(len(poly)):
        p, q = poly[k], poly[(k + 1) % len(poly)]
        margins = plane.a @ ((p + q) / 2) - plane.b
        if (np.abs(margins) <= 1e-9 * scale).any():
            out.extend([p, q, [np.nan, np.nan]])
    return np.array(out, dtype=float).reshape(-1, 2)


# ---- statistics ------------------------------------------------------------------------
def _wquantile(x: np.ndarray, q: Sequence[float], w: np.ndarray | None) -> np.ndarray:
    """Weighted quantiles of a 1-D array."""
    if w is None:
        return np.quantile(x, q)
    order = np.argsort(x)
    cw = np.cumsum(w[order])
    return np.interp(q, cw / cw[-1], x[order])


def _spread(lo: np.ndarray, hi: np.ndarray, pad: float,
            unit: float | None = None) -> np.ndarray:
    """Limits (k, 2) from low and high values, widened by ``pad`` of the span.

    Column by column: a span that is zero, or only rounding noise (below 1e-9 of the
    column's size), is replaced by that size, or by ``unit`` (the natural size of the
    coordinates, e.g. 1e-3 for L_i^r) when larger, or by 1 for a column at zero.
    Columns of very different sizes (g2 ~ 1e-12 and g4 ~ 1e-25 GeV^-n) keep their own.
    """
    lo, hi = np.asarray(lo, dtype=float), np.asarray(hi, dtype=float)
    span = hi - lo
    size = np.maximum(np.abs(lo), np.abs(hi))
    if unit is not None:
        size = np.maximum(size, unit)
    fallback = np.where(size > 0, size, 1.0)
    span = np.where((span > 0) & (span > 1e-9 * size), span, fallback)
    mid = (lo + hi) / 2
    return np.column_stack([mid - span * (0.5 + pad), mid + span * (0.5 + pad)])


def _sample_range(x: np.ndarray, w: np.ndarray | None, mass: float) -> np.ndarray:
    """Per column, the central ``mass`` interval, shape (k, 2)."""
    q = [(1 - mass) / 2, (1 + mass) / 2]
    return np.array([_wquantile(x[:, k], q, w) for k in range(x.shape[1])])


def _hpd_levels(h: np.ndarray, fractions: Sequence[float]) -> list[float] | None:
    """Density levels enclosing the given mass fractions, increasing; None if degenerate."""
    flat = np.sort(h.ravel())[::-1]
    cum = np.cumsum(flat)
    if cum[-1] <= 0:
        return None
    cum /= cum[-1]
    levels = sorted(float(flat[min(int(np.searchsorted(cum, f)), len(flat) - 1)])
                    for f in fractions)
    ok = levels[0] > 0 and all(b > a for a, b in zip(levels, levels[1:], strict=False))
    return levels if ok and levels[-1] < flat[0] else None


def _auto_limits(plane: _Plane, x: np.ndarray | None, w: np.ndarray | None) -> np.ndarray:
    """Limits that show the region's vertices near the data and the samples' 99 % range."""
    pts: list[np.ndarray] = []
    if x is not None:
        rng_ = _sample_range(x, w, 0.99)
        pts = [rng_[:, 0], rng_[:, 1]]
    centre = (pts[0] + pts[1]) / 2 if pts else None
    anchors = _vertices(plane)
    if len(anchors) < 2 and len(plane.b):
        ref = centre if centre is not None else (
            anchors.mean(axis=0) if len(anchors) else np.zeros(2))
        proj = ref - (plane.a @ ref - plane.b)[:, None] * plane.a
        tol = 1e-9 * max(1.0, float(np.abs(proj).max()))
        feasible = proj[(proj @ plane.a.T - plane.b >= -tol).all(axis=1)]
        anchors = np.vstack([anchors, feasible if len(feasible) else proj])
    if centre is not None and len(anchors):
        reach = 3.0 * max(float(np.linalg.norm(pts[1] - pts[0])), _ZERO)
        dist = np.linalg.norm(anchors - centre, axis=1)
        anchors = anchors[(dist <= reach) | (dist == dist.min())]
    allpts = np.vstack([*pts, *anchors]) if (pts or len(anchors)) else np.zeros((1, 2))
    nonzero = np.abs(plane.b[plane.b != 0])
    unit = float(nonzero.max()) if nonzero.size else 1.0  # the size of the facet offsets
    return _spread(allpts.min(axis=0), allpts.max(axis=0), 0.2, min(unit, 1.0))


# ---- drawing helpers -------------------------------------------------------------------
def _new_figure(figsize: tuple[float, float], layout: Any = None) -> Figure:
    """A pyplot-free figure on an Agg canvas."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, layout=layout)
    FigureCanvasAgg(fig)
    return fig


def _facet_style(k: int) -> tuple[str, str]:
    """Colour and line style of facet ``k``."""
    n = len(FACET_COLOURS)
    return FACET_COLOURS[k % n], FACET_STYLES[(k // n) % len(FACET_STYLES)]


def _facet_text(region: Region, k: int) -> str:
    facet = region.facets[k]
    return f"{facet.channel} ({facet.family})"


def _tint(colour: str, alpha: float) -> tuple[float, float, float, float]:
    from matplotlib.colors import to_rgba

    return to_rgba(colour, alpha)


def _active_edge(allowed: np.ndarray, normal: np.ndarray, offset: float) -> np.ndarray | None:
    """The longest edge of the allowed polygon lying on the line, if any."""
    if len(allowed) == 0:
        return None
    on = np.abs(allowed @ normal - offset) <= 1e-9 * max(1.0, float(np.abs(allowed).max()))
    best, length = None, 0.0
    for k in range(len(allowed)):
        nxt = (k + 1) % len(allowed)
        size = float(np.linalg.norm(allowed[nxt] - allowed[k]))
        if on[k] and on[nxt] and size > length:
            best, length = allowed[[k, nxt]], size
    return best


def _label_line(ax: Axes, seg: np.ndarray, normal: np.ndarray, box: np.ndarray, text: str,
                colour: str, k: int, gid: str, active: np.ndarray | None = None) -> None:
    """Write ``text`` along a line, just off it on the excluded side.

    The label sits in the middle of the facet's stretch of the allowed boundary when
    that is long enough (those stretches do not overlap), else somewhere along the
    segment, and never near the ends of the segment where it would be cut off.
    """
    span = box[:, 1] - box[:, 0]
    d = seg[1] - seg[0]
    t = _LABEL_FRACTIONS[k % len(_LABEL_FRACTIONS)]
    if active is not None and np.linalg.norm((active[1] - active[0]) / span) >= 0.3:
        t = float((active.mean(axis=0) - seg[0]) @ d / (d @ d))
    t = min(max(t, 0.25), 0.75)
    away = normal / span  # the normal in axes-fraction units
    away = away / max(float(np.linalg.norm(away)), _ZERO)
    pos = seg[0] + t * d - 0.028 * away * span
    angle = float(np.degrees(np.arctan2(d[1], d[0])))
    angle = angle - 180.0 if angle > 90.0 else (angle + 180.0 if angle <= -90.0 else angle)
    ax.text(pos[0], pos[1], text, rotation=angle, rotation_mode="anchor",
            transform_rotates_text=True, ha="center", va="center", fontsize=7.5,
            color=colour, clip_on=True, gid=gid, zorder=6,
            bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none",
                  "alpha": 0.8})


def _draw_excluded_union(ax: Axes, box: np.ndarray, allowed: np.ndarray,
                         gid: str = "excluded", fill: float = 0.0) -> None:
    """Hatch the box minus the allowed polygon."""
    from matplotlib.patches import PathPatch

    holes = [allowed] if len(allowed) else []
    ax.add_patch(PathPatch(_ring_path(_box_polygon(box), holes), facecolor=_tint(GREY, fill),
                           edgecolor=_tint(GREY, 0.6), hatch=EXCLUDED_HATCH, linewidth=0,
                           gid=gid, zorder=0.8))


def _draw_band(ax: Axes, plane: _Plane, row: int, sigma: float, box: np.ndarray,
               colour: str) -> None:
    """1- and 2-sigma bands of one boundary, as translucent strips with dashed edges."""
    from matplotlib.patches import Polygon

    n, c, fi = plane.a[row], plane.b[row], int(plane.index[row])
    s = sigma / plane.scale[row]
    if s <= 0:
        return
    for k, alpha in ((2, 0.10), (1, 0.18)):
        strip = _clip(_clip(_box_polygon(box), n, c - k * s), -n, -(c + k * s))
        if len(strip):
            ax.add_patch(Polygon(strip, closed=True, facecolor=_tint(colour, alpha),
                                 linewidth=0, gid=f"band-{fi}-{k}sigma", zorder=1.5))
    for shift in (-s, s):
        seg = _segment(n, c + shift, box)
        if seg is not None:
            ax.plot(seg[:, 0], seg[:, 1], color=colour, lw=0.7, ls=(0, (4, 3)),
                    gid=f"band-{fi}-edge", zorder=2)


def _draw_facets(ax: Axes, region: Region, plane: _Plane, box: np.ndarray,
                 bands: dict[int, float]) -> None:
    """Each facet's boundary line, label, tinted excluded side and optional bands."""
    from matplotlib.patches import Polygon

    allowed = _allowed_polygon(plane, box)
    for row, fi in enumerate(int(i) for i in plane.index):
        colour, style = _facet_style(fi)
        n, c = plane.a[row], plane.b[row]
        excluded = _clip(_box_polygon(box), -n, -c)
        if len(excluded):
            ax.add_patch(Polygon(excluded, closed=True, facecolor=_tint(colour, 0.07),
                                 linewidth=0, gid=f"excluded-{fi}", zorder=0.5))
        if fi in bands:
            _draw_band(ax, plane, row, bands[fi], box, colour)
        seg = _segment(n, c, box)
        if seg is None:
            continue
        ax.plot(seg[:, 0], seg[:, 1], color=colour, ls=style, lw=1.5, gid=f"facet-{fi}",
                label=_facet_text(region, fi), zorder=4)
        _label_line(ax, seg, n, box, _facet_text(region, fi), colour, row,
                    f"facet-label-{fi}", _active_edge(allowed, n, c))


def _draw_sets(ax: Axes, outer: _Plane, inner: _Plane | None, box: np.ndarray) -> bool:
    """The allowed polygon, the excluded union and the undecided band; True if allowed."""
    from matplotlib.patches import PathPatch, Polygon

    allowed = _allowed_polygon(outer, box)
    _draw_excluded_union(ax, box, allowed)
    if len(allowed):
        ax.add_patch(Polygon(allowed, closed=True, facecolor=_tint(GREEN, 0.08),
                             linewidth=0, gid="allowed", zorder=0.6))
        edges = _boundary_edges(allowed, outer)
        ax.plot(edges[:, 0], edges[:, 1], color="black", lw=2.2, gid="allowed-boundary",
                zorder=5, solid_capstyle="round")
    if inner is not None and len(allowed):
        core = _allowed_polygon(inner, box)
        holes = [core] if len(core) else []
        ax.add_patch(PathPatch(_ring_path(allowed, holes), facecolor=_tint(YELLOW, 0.45),
                               edgecolor=_tint(ORANGE, 0.7), hatch=UNDECIDED_HATCH,
                               linewidth=0, gid="undecided", zorder=0.7))
        if len(core):
            edges = _boundary_edges(core, inner)
            ax.plot(edges[:, 0], edges[:, 1], color="black", lw=1.3, ls="--",
                    gid="inner-boundary", zorder=5)
    return bool(len(allowed))


def _draw_posterior_2d(ax: Axes, x: np.ndarray, w: np.ndarray | None) -> bool:
    """HPD contours of a smoothed weighted histogram and a light scatter; True if contours."""
    from scipy.ndimage import gaussian_filter

    central = _sample_range(x, w, 0.998)
    rng_ = _spread(central[:, 0], central[:, 1], 0.1)
    bins = int(np.clip(np.sqrt(kish_ess(w, len(x))) / 1.5, 15, _HIST_BINS))
    h, xe, ye = np.histogram2d(x[:, 0], x[:, 1], bins=bins, range=rng_, weights=w)
    h = np.pad(gaussian_filter(h, 1.2), 1)
    xc = np.r_[xe[0] - (xe[1] - xe[0]) / 2, (xe[1:] + xe[:-1]) / 2, xe[-1] + (xe[1] - xe[0]) / 2]
    yc = np.r_[ye[0] - (ye[1] - ye[0]) / 2, (ye[1:] + ye[:-1]) / 2, ye[-1] + (ye[1] - ye[0]) / 2]
    _scatter(ax, x, w)
    levels = _hpd_levels(h, HPD_LEVELS)
    if levels is None or kish_ess(w, len(x)) < _MIN_ESS_CONTOURS:
        return False
    ax.contourf(xc, yc, h.T, levels=[*levels, float(h.max()) * (1 + 1e-9)],
                colors=[_tint(BLUE, 0.18), _tint(BLUE, 0.38)], zorder=2.5)
    cs = ax.contour(xc, yc, h.T, levels=levels, colors=BLUE, linewidths=(1.0, 1.6),
                    zorder=2.6)
    cs.set_gid("posterior-hpd")
    return True


def _scatter(ax: Axes, x: np.ndarray, w: np.ndarray | None) -> None:
    """Up to :data:`MAX_SCATTER` points, drawn in proportion to their weights."""
    n = len(x)
    size = min(n, MAX_SCATTER) if w is None else min(n, MAX_SCATTER, int(np.count_nonzero(w)))
    if size < n:
        p = None if w is None else w / w.sum()
        x = x[np.random.default_rng(0).choice(n, size=size, replace=False, p=p)]
    few = len(x) < 200
    ax.scatter(x[:, 0], x[:, 1], s=9 if few else 3, color=_tint(BLUE, 0.7 if few else 0.25),
               linewidths=0,
               rasterized=True, gid="posterior-samples", zorder=2.2)


def _between_labels(region: Region) -> tuple[str, str]:
    """Legend labels of the set between the inner and outer facets, and of the inner set:
    a truncation allowance (facets that carry ``truncation_shift``) or the order of a
    sum-rule problem."""
    if any("truncation_shift" in f.extra for f in region.facets):
        return ("uncertain (within the truncation allowance)",
                "inner set (the bounds without the allowance)")
    return "numerically undecided", "inner set (positive spectra, to the order)"


def _legend_handles(*, inner: bool, bands: bool, posterior: str | None,
                    labels: tuple[str, str] = ("numerically undecided",
                                               "inner set (positive spectra, to the order)"),
                    ) -> list[Any]:
    """Proxy artists for the region figure legend.

    ``posterior`` is ``"hpd"`` (contours), ``"points"`` (scatter only), ``"hist"`` or None;
    ``labels`` name the set between the inner and outer facets and the inner set.
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    handles: list[Any] = [
        Patch(facecolor=_tint(GREEN, 0.15), edgecolor="black", label="allowed"),
        Patch(facecolor="white", edgecolor=_tint(GREY, 0.8), hatch=EXCLUDED_HATCH,
              label="excluded"),
    ]
    if inner:
        handles += [Patch(facecolor=_tint(YELLOW, 0.45), edgecolor=_tint(ORANGE, 0.8),
                          hatch=UNDECIDED_HATCH, label=labels[0]),
                    Line2D([], [], color="black", ls="--", label=labels[1])]
    if bands:
        handles.append(Patch(facecolor=_tint(GREY, 0.25), label="boundary 1\u03c3 / 2\u03c3 band"))
    if posterior == "hpd":
        handles.append(Patch(facecolor=_tint(BLUE, 0.3), edgecolor=BLUE,
                             label="posterior 68% / 95% HPD"))
    elif posterior == "points":
        handles.append(Line2D([], [], color=_tint(BLUE, 0.6), marker="o", ls="none", ms=3,
                              label="posterior samples"))
    elif posterior == "hist":
        handles.append(Line2D([], [], color=BLUE, label="posterior (histogram)"))
    return handles


def _title(region: Region, title: str | None, suffix: str = "") -> str:
    if title is not None:
        return title
    conv = region.convention.get("name") if isinstance(region.convention, dict) else None
    return f"{region.theory}: allowed region" + (f" ({conv})" if conv else "") + suffix


# ---- region figure ---------------------------------------------------------------------
#: regions with more facets in the plane (support-function regions) are drawn without
#: each facet's line, label and tint: only the allowed set and its boundary
MAX_DRAWN_FACETS = 12
#: a Chebyshev centre this far out (in units of its search box) means an unbounded region
_UNBOUNDED = 0.5


def _slice_point(region: Region, ij: tuple[int, int],
                 slice_at: Mapping[str, float] | None = None) -> np.ndarray:
    """Where a region of more than two coordinates is cut.

    The values given in ``slice_at`` (by coordinate name); for the others, the Chebyshev
    centre of a bounded region, else (an unbounded region, whose centre runs off to the
    search box) the region's point nearest the origin: that is where the facets of
    regions such as chpt-su3's, which meet near the origin, can be seen.
    """
    point = np.zeros(region.dim)
    if region.dim <= 2:
        return point
    given = dict(slice_at or {})
    unknown = sorted(set(given) - set(region.coordinates))
    if unknown:
        raise ValueError(f"slice_at names {unknown}, not coordinates of the region "
                         f"{list(region.coordinates)}")
    box = 1e3
    a, b = region.arrays()
    try:
        centre: np.ndarray | None = region.chebyshev_center(box)[0]
    except SolverError:
        centre = None
    if centre is not None and np.abs(centre).max() < _UNBOUNDED * box:
        point = centre
    elif not (b <= 0).all():  # unbounded, and the origin is outside: its nearest point
        from eftsieve.stats.tension import closest_point

        try:
            point = closest_point(np.zeros(region.dim), np.eye(region.dim), a, b)[0]
        except SolverError:
            pass
    for k, name in enumerate(region.coordinates):
        if name in given:
            point[k] = float(given[name])
    return point


def _region_arrays(region: Region, inner: bool) -> tuple[np.ndarray, np.ndarray]:
    facets = region.inner_facets if inner else region.facets
    a = np.array([f.normal for f in facets], dtype=float).reshape(len(facets), region.dim)
    return a, np.array([f.offset for f in facets], dtype=float)


def region_figure(region: Region, *, samples: Any = None, weights: Any = None,
                  coords: Sequence[int] = (0, 1), bands: Mapping[int, float] | None = None,
                  limits: Any = None, title: str | None = None,
                  slice_at: Mapping[str, float] | None = None) -> Figure:
    """Draw a region in the plane of two of its coordinates.

    Parameters
    ----------
    region
        The region.  A region of one coordinate is drawn on a line (see Notes); a
        region of more than two is cut at ``slice_at`` for the coordinates it names, else
        through its Chebyshev centre (bounded regions) or its point nearest the origin
        (unbounded ones), and the title says where.
    samples
        Optional posterior samples of the two plotted coordinates, shape (n, 2) (or
        (n,) for a one-coordinate region).  Drawn as 68 % and 95 % highest-density
        contours of a lightly smoothed weighted histogram, over a scatter of at most
        2000 points.
    weights
        Optional non-negative sample weights, shape (n,).
    coords
        The two region coordinates on the x and y axes.
    bands
        Facet index -> uncertainty of that facet's offset; draws the 1- and 2-sigma
        bands of the boundary as translucent strips with dashed edges.
    limits
        ``((xmin, xmax), (ymin, ymax))`` (``(xmin, xmax)`` on a line); by default
        chosen to show the region's vertices near the data and the samples' central
        99 %.
    title
        The title; by default the theory and the convention.
    slice_at
        Coordinate name -> value at which a region of more than two coordinates is
        cut (the other coordinates as above).

    Returns
    -------
    matplotlib.figure.Figure
        Artists carry ``gid`` values: ``facet-<k>`` (boundary line of facet k),
        ``facet-label-<k>``, ``excluded-<k>`` (tinted excluded side), ``excluded``
        (hatched union), ``allowed`` and ``allowed-boundary``, ``undecided`` and
        ``inner-boundary`` (with inner facets), ``band-<k>-1sigma`` / ``-2sigma``,
        ``posterior-hpd`` and ``posterior-samples``.

    Raises
    ------
    ValueError
        On samples or weights with NaN or infinite values, or inputs of the wrong shape.

    Notes
    -----
    On a line, facet k is a vertical line at its bound, the allowed interval is a thick
    bar near the bottom, and samples are a step histogram (gid ``posterior-hist``).
    """
    if region.dim == 1:
        return _region_figure_1d(region, samples, weights, bands, limits, title)
    ij = _check_coords(region, coords)
    x, w = _check_samples(samples, weights, 2)
    band_map = _check_bands(region, bands)
    fixed = _slice_point(region, ij, slice_at)
    outer = _restrict(*_region_arrays(region, False), ij, fixed)
    inner = (_restrict(*_region_arrays(region, True), ij, fixed)
             if region.inner_facets else None)
    box = _check_limits(limits, 2) if limits is not None else _auto_limits(outer, x, w)
    fig = _new_figure((6.4, 5.4), "constrained")
    ax = fig.add_subplot()
    note = ""
    if len(outer.index) <= MAX_DRAWN_FACETS or band_map:
        _draw_facets(ax, region, outer, box, band_map)
    else:  # support-function regions: dozens of facets; their envelope is the boundary
        note = f"{len(outer.index)} facets, drawn as the boundary of the allowed set"
    if not _draw_sets(ax, outer, inner, box):
        ax.text(0.5, 0.5, "no allowed point in view", transform=ax.transAxes, ha="center",
                va="center", fontsize=9, color=GREY, gid="empty-note")
    posterior = None
    if x is not None:
        posterior = "hpd" if _draw_posterior_2d(ax, x, w) else "points"
    _finish_plane(ax, region, ij, fixed, box, title, note)
    ax.legend(handles=_legend_handles(inner=inner is not None, bands=bool(band_map),
                                      posterior=posterior, labels=_between_labels(region)),
              loc="best", fontsize=7.5,
              framealpha=0.9)
    return fig


def _finish_plane(ax: Axes, region: Region, ij: tuple[int, int], fixed: np.ndarray,
                  box: np.ndarray, title: str | None, note: str = "") -> None:
    """Limits, axis labels, title (with the slice and ``note``, if any) and grid."""
    others = [k for k in range(region.dim) if k not in ij]
    where = ", ".join(f"{region.coordinates[k]}={fixed[k]:.4g}" for k in others)
    parts = ([f"slice at {where}"] if where else []) + ([note] if note else [])
    ax.set_xlim(*box[0])
    ax.set_ylim(*box[1])
    ax.set_xlabel(region.coordinates[ij[0]])
    ax.set_ylabel(region.coordinates[ij[1]])
    ax.set_title(_title(region, title, "\n" + "; ".join(parts) if parts else ""), fontsize=10)
    ax.grid(True, color="#DDDDDD", lw=0.5, zorder=0)


def _draw_facets_1d(ax: Axes, region: Region, plane: _Plane, xlim: np.ndarray,
                    bands: dict[int, float]) -> None:
    """Vertical boundary lines, tinted excluded sides, labels and bands on a line."""
    trans = ax.get_xaxis_transform()
    for row, fi in enumerate(int(i) for i in plane.index):
        colour, style = _facet_style(fi)
        v = plane.b[row] / plane.a[row, 0]
        ax.axvline(v, color=colour, ls=style, lw=1.5, gid=f"facet-{fi}", zorder=4)
        side = (xlim[0], v) if plane.a[row, 0] > 0 else (v, xlim[1])
        if side[1] > side[0]:
            ax.axvspan(*side, facecolor=_tint(colour, 0.07), linewidth=0,
                       gid=f"excluded-{fi}", zorder=0.5)
        ax.text(v, 0.96, _facet_text(region, fi), rotation=90, ha="right", va="top",
                fontsize=7.5, color=colour, transform=trans, clip_on=True,
                gid=f"facet-label-{fi}", zorder=6)
        s = bands.get(fi, 0.0) / plane.scale[row]
        for k, alpha in ((2, 0.10), (1, 0.18)):
            if s > 0:
                ax.axvspan(v - k * s, v + k * s, facecolor=_tint(colour, alpha), linewidth=0,
                           gid=f"band-{fi}-{k}sigma", zorder=1.5)


def _draw_interval(ax: Axes, lo: float, hi: float, xlim: np.ndarray, *, y: float, gid: str,
                   **style: Any) -> None:
    """A horizontal bar over [lo, hi] clipped to the view, at axes height ``y``."""
    a, b = max(lo, xlim[0]), min(hi, xlim[1])
    if b >= a:
        ax.plot([a, b], [y, y], transform=ax.get_xaxis_transform(), gid=gid,
                solid_capstyle="butt", zorder=5, **style)


def _draw_sets_1d(ax: Axes, outer: _Plane, inner: _Plane | None, xlim: np.ndarray) -> None:
    """Hatch the excluded union, mark the allowed interval and the undecided stretches."""
    lo, hi = _interval(outer)
    spans = [(xlim[0], lo), (hi, xlim[1])] if lo <= hi else [(xlim[0], xlim[1])]
    for a, b in spans:
        if b > a:
            ax.axvspan(max(a, xlim[0]), min(b, xlim[1]), facecolor="none",
                       edgecolor=_tint(GREY, 0.6), hatch=EXCLUDED_HATCH, linewidth=0,
                       gid="excluded", zorder=0.8)
    _draw_interval(ax, lo, hi, xlim, y=0.05, gid="allowed-boundary", color="black", lw=5)
    a, b = max(lo, xlim[0]), min(hi, xlim[1])
    if b > a:
        ax.axvspan(a, b, facecolor=_tint(GREEN, 0.08), linewidth=0, gid="allowed", zorder=0.6)
    if inner is None or lo > hi:
        return
    ilo, ihi = _interval(inner)
    ilo, ihi = max(ilo, lo), min(ihi, hi)
    gaps = [(lo, ilo), (ihi, hi)] if ilo <= ihi else [(lo, hi)]
    for a, b in gaps:
        a, b = max(a, xlim[0]), min(b, xlim[1])
        if b > a:
            ax.axvspan(a, b, facecolor=_tint(YELLOW, 0.45), edgecolor=_tint(ORANGE, 0.7),
                       hatch=UNDECIDED_HATCH, linewidth=0, gid="undecided", zorder=0.7)
    if ilo <= ihi:
        _draw_interval(ax, ilo, ihi, xlim, y=0.11, gid="inner-boundary", color="black",
                       lw=1.5, ls="--")


def _limits_1d(plane: _Plane, x: np.ndarray | None, w: np.ndarray | None) -> np.ndarray:
    """Limits showing every bound and the samples' central 99 %."""
    vals = list(plane.b / plane.a[:, 0])
    if x is not None:
        vals += list(_sample_range(x, w, 0.99)[0])
    vals_arr = np.array(vals, dtype=float)
    return _spread(vals_arr.min(keepdims=True), vals_arr.max(keepdims=True), 0.25)[0]


def _region_figure_1d(region: Region, samples: Any, weights: Any,
                      bands: Mapping[int, float] | None, limits: Any,
                      title: str | None) -> Figure:
    """The one-coordinate version of :func:`region_figure`."""
    x, w = _check_samples(samples, weights, 1)
    band_map = _check_bands(region, bands)
    outer = _restrict(*_region_arrays(region, False), (0,))
    inner = _restrict(*_region_arrays(region, True), (0,)) if region.inner_facets else None
    xlim = _check_limits(limits, 1)[0] if limits is not None else _limits_1d(outer, x, w)
    fig = _new_figure((8.0, 3.0), "constrained")
    ax = fig.add_subplot()
    _draw_facets_1d(ax, region, outer, xlim, band_map)
    _draw_sets_1d(ax, outer, inner, xlim)
    posterior = None
    if x is not None:
        central = _sample_range(x, w, 0.998)
        lo, hi = _spread(central[:, 0], central[:, 1], 0.05)[0]
        counts, edges = np.histogram(x[:, 0], bins=40, range=(lo, hi), weights=w)
        ax.stairs(0.8 * counts / max(float(counts.max()), _ZERO), edges, color=BLUE, lw=1.4,
                  gid="posterior-hist", zorder=3)
        posterior = "hist"
    ax.set_xlim(*xlim)
    ax.set_ylim(0.0, 1.0)
    ax.set_yticks([])
    ax.set_xlabel(region.coordinates[0])
    ax.set_title(_title(region, title), fontsize=10)
    ax.legend(handles=_legend_handles(inner=inner is not None, bands=bool(band_map),
                                      posterior=posterior, labels=_between_labels(region)),
              loc="upper left",
              bbox_to_anchor=(1.01, 1.0), fontsize=7.5, frameon=False)
    return fig


def save_region_plot(region: Region, path: str | Path, *, dpi: int = DEFAULT_DPI,
                     **kw: Any) -> Path:
    """Draw :func:`region_figure` and write it as a PNG, atomically.

    Parameters
    ----------
    region
        The region.
    path
        The output file.
    dpi
        Resolution of the PNG.
    **kw
        Passed to :func:`region_figure`.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    fig = region_figure(region, **kw)
    return atomic_write_with(path, lambda tmp: fig.savefig(tmp, format="png", dpi=dpi))


# ---- corner figure ---------------------------------------------------------------------
def _corner_ranges(sets: Sequence[tuple[np.ndarray, np.ndarray | None]]) -> np.ndarray:
    """Per column, a range covering every set's central 99 %."""
    r = np.array([_sample_range(x, w, 0.99) for x, w in sets])
    return _spread(r[:, :, 0].min(axis=0), r[:, :, 1].max(axis=0), 0.08)


def _corner_layer(fig: Figure, x: np.ndarray, w: np.ndarray | None, ranges: np.ndarray,
                  names: Sequence[str], colour: str) -> None:
    """One sample set drawn by ``corner`` into ``fig``."""
    import corner

    contours = kish_ess(w, len(x)) >= _MIN_ESS_CONTOURS
    corner.corner(x, bins=_CORNER_BINS, weights=w, fig=fig, range=[tuple(r) for r in ranges],
                  color=colour, labels=list(names), smooth=1.0, levels=HPD_LEVELS,
                  plot_density=False, plot_contours=contours, fill_contours=contours,
                  no_fill_contours=True, plot_datapoints=not contours, quiet=True,
                  data_kwargs={"alpha": 0.6, "ms": 3.0},
                  contour_kwargs={"linewidths": 1.2},
                  contourf_kwargs={"colors": [_tint(colour, 0.0), _tint(colour, 0.14),
                                              _tint(colour, 0.32)]}, max_n_ticks=4,
                  hist_kwargs={"density": True, "color": colour, "linewidth": 1.4},
                  label_kwargs={"fontsize": 10})


def _fix_diagonal(axes: np.ndarray) -> None:
    """Let every 1-D panel show all of its histograms (corner keeps the last one's)."""
    for k in range(axes.shape[0]):
        ax = axes[k, k]
        tops = [float(np.nanmax(p.get_path().vertices[:, 1])) for p in ax.patches]
        if tops and max(tops) > 0:
            ax.set_ylim(0.0, 1.1 * max(tops))


def _region_columns(region: Region, names: Sequence[str],
                    region_coords: Mapping[int, int] | None) -> dict[int, int]:
    """Region coordinate index -> sample column, checked (by name when not given)."""
    if region_coords is None:
        missing = [c for c in region.coordinates if c not in names]
        if missing:
            raise ValueError(f"region coordinates {missing} are not among the sample names; "
                             "pass region_coords")
        return {k: list(names).index(c) for k, c in enumerate(region.coordinates)}
    out = {int(k): int(v) for k, v in region_coords.items()}
    if (not all(0 <= k < region.dim for k in out) or len(set(out.values())) != len(out)
            or not all(0 <= v < len(names) for v in out.values())):
        raise ValueError(f"region_coords must map distinct region indices below {region.dim} "
                         f"to distinct columns below {len(names)}, got {dict(region_coords)}")
    return out


def _corner_plane(ax: Axes, plane: _Plane, box: np.ndarray) -> bool:
    """Hatch the excluded part of a 2-D panel and draw the boundary; True if anything."""
    if not len(plane.b):
        return False
    allowed = _allowed_polygon(plane, box)
    _draw_excluded_union(ax, box, allowed, fill=0.18)
    edges = _boundary_edges(allowed, plane)
    if len(edges):
        ax.plot(edges[:, 0], edges[:, 1], color="black", lw=1.3, gid="boundary", zorder=5)
    ax.set_xlim(*box[0])
    ax.set_ylim(*box[1])
    return True


def _corner_line(ax: Axes, plane: _Plane, xlim: np.ndarray) -> bool:
    """Hatch the excluded part of a 1-D panel and mark the bounds; True if anything."""
    if not len(plane.b):
        return False
    lo, hi = _interval(plane)
    spans = [(xlim[0], lo), (hi, xlim[1])] if lo <= hi else [(xlim[0], xlim[1])]
    for a, b in spans:
        a, b = max(a, xlim[0]), min(b, xlim[1])
        if b > a:
            ax.axvspan(a, b, facecolor=_tint(GREY, 0.18), edgecolor=_tint(GREY, 0.6),
                       hatch=EXCLUDED_HATCH, linewidth=0, gid="excluded", zorder=0.8)
    for v in (lo, hi):
        if lo <= hi and xlim[0] <= v <= xlim[1]:
            ax.axvline(v, color="black", lw=1.3, gid="boundary", zorder=5)
    ax.set_xlim(*xlim)
    return True


def _corner_region(axes: np.ndarray, region: Region, columns: dict[int, int],
                   ranges: np.ndarray) -> bool:
    """Region overlays on every panel spanned by region coordinates; True if any."""
    normals, offsets = _region_arrays(region, False)
    inv = {col: k for k, col in columns.items()}
    drawn = False
    for r in range(axes.shape[0]):
        for c in range(r + 1):
            if c not in inv or r not in inv:
                continue
            if r == c:
                plane = _restrict(normals, offsets, (inv[c],))
                drawn |= _corner_line(axes[r, c], plane, ranges[c])
            else:
                plane = _restrict(normals, offsets, (inv[c], inv[r]))
                drawn |= _corner_plane(axes[r, c], plane, ranges[[c, r]])
    return drawn


def _corner_legend(fig: Figure, axes: np.ndarray, labels: Sequence[str] | None,
                   region: bool) -> None:
    """Legend of the sample sets (when two) and of the excluded shading."""
    from matplotlib.patches import Patch

    handles: list[Any] = []
    if labels is not None:
        handles += [Patch(facecolor=_tint(c, 0.35), edgecolor=c, label=str(t))
                    for c, t in zip(SAMPLE_COLOURS, labels, strict=True)]
    if region:
        handles.append(Patch(facecolor=_tint(GREY, 0.18), edgecolor=_tint(GREY, 0.8),
                             hatch=EXCLUDED_HATCH, label="excluded by the bounds"))
    if not handles:
        return
    if axes.shape[0] == 1:
        fig.subplots_adjust(right=0.58)
        fig.legend(handles=handles, loc="center left", bbox_to_anchor=(0.6, 0.55),
                   fontsize=8, frameon=False)
    else:
        fig.legend(handles=handles, loc="upper right", bbox_to_anchor=(0.97, 0.97),
                   fontsize=9, frameon=False)


def corner_figure(samples: Any, names: Sequence[str], *, weights: Any = None,
                  region: Region | None = None, region_coords: Mapping[int, int] | None = None,
                  overlay: Any = None, overlay_weights: Any = None,
                  labels: Sequence[str] = ("before", "after")) -> Figure:
    """Draw a corner plot of samples, optionally against a region and a second set.

    Parameters
    ----------
    samples
        Samples, shape (n, k) (or (n,) for one parameter), NaN-free.
    names
        The k parameter names (axis labels).
    weights
        Optional non-negative weights, shape (n,).
    region
        Optional region whose coordinates are among the sample columns.  Every 2-D
        panel of two region coordinates hatches the points excluded by the facets that
        involve only those two coordinates (a rigorous statement about the pair), with
        the boundary in black; 1-D panels do the same for facets of one coordinate.
    region_coords
        Region coordinate index -> sample column, e.g. ``{0: 0, 1: 1}``; by default the
        region's coordinate names are looked up in ``names``.
    overlay
        Optional second sample set (e.g. after imposing the bounds) of the same
        columns, drawn in a second colour with a legend.
    overlay_weights
        Optional weights of ``overlay``.
    labels
        Legend texts of ``samples`` and ``overlay``.

    Returns
    -------
    matplotlib.figure.Figure
        A figure of k x k axes (the upper triangle hidden).  Region artists carry the
        gids ``excluded`` and ``boundary``.

    Raises
    ------
    ValueError
        On NaN or infinite values, shapes that do not match ``names``, fewer samples
        than parameters, or an invalid ``region_coords``.
    """
    k = len(names)
    if k == 0:
        raise ValueError("names must not be empty")
    sets = [_sample_set(samples, weights, k)]
    if overlay is not None:
        sets.append(_sample_set(overlay, overlay_weights, k, "overlay"))
        if len(labels) != 2:
            raise ValueError(f"labels must be two texts, got {labels!r}")
    elif overlay_weights is not None:
        raise ValueError("overlay_weights were given without overlay")
    if any(len(s[0]) < max(k, 2) for s in sets):
        raise ValueError(f"need at least max(2, {k}) samples in every set")
    columns = _region_columns(region, names, region_coords) if region is not None else {}
    ranges = _corner_ranges(sets)
    dim = 1.0 + 2.0 * k + 0.1 * (k - 1) + 0.4
    fig = _new_figure((dim * (1.7 if k == 1 else 1.0), dim))
    for (xs, ws), colour in zip(sets, SAMPLE_COLOURS, strict=False):
        _corner_layer(fig, xs, ws, ranges, names, colour)
    axes = np.array(fig.axes).reshape(k, k)
    _fix_diagonal(axes)
    drawn = _corner_region(axes, region, columns, ranges) if region is not None else False
    _corner_legend(fig, axes, labels if overlay is not None else None, drawn)
    return fig


def save_corner(path: str | Path, samples: Any, names: Sequence[str], *,
                dpi: int = DEFAULT_DPI, **kw: Any) -> Path:
    """Draw :func:`corner_figure` and write it as a PNG, atomically.

    Parameters
    ----------
    path
        The output file.
    samples, names
        As for :func:`corner_figure`.
    dpi
        Resolution of the PNG.
    **kw
        Passed to :func:`corner_figure`.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    fig = corner_figure(samples, names, **kw)
    return atomic_write_with(path, lambda tmp: fig.savefig(tmp, format="png", dpi=dpi))
