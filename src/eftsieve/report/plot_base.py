"""Shared pieces of the figures of :mod:`eftsieve.report.plots`: the look (colours,
hatches, levels), input checks, the plane geometry of facets (restriction to a plane or
line, clipping, vertices) and sample statistics (weighted quantiles, limits, HPD levels).

Nothing here draws a whole figure; matplotlib is imported inside the functions.  The
colours are the Okabe-Ito palette, which stays distinguishable under the common
colour-vision deficiencies.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.region.model import Region

if TYPE_CHECKING:
    from matplotlib.figure import Figure

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
HIST_BINS = 60
CORNER_BINS = 30
#: Below this effective sample size posteriors are shown as points, without contours.
MIN_ESS_CONTOURS = 30.0
LABEL_FRACTIONS = (0.5, 0.3, 0.7, 0.2, 0.8, 0.4, 0.6)
ZERO = 1e-12


# ---- input checks ----------------------------------------------------------------------
def check_weights(weights: Any, n: int) -> np.ndarray | None:
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


def check_samples(samples: Any, weights: Any,
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
    return x, check_weights(weights, x.shape[0])


def sample_set(samples: Any, weights: Any, ncols: int,
                what: str = "samples") -> tuple[np.ndarray, np.ndarray | None]:
    """Like :func:`check_samples` for a set that must be given."""
    if samples is None:
        raise ValueError(f"{what} must be given")
    x, w = check_samples(samples, weights, ncols)
    if x is None:
        raise ValueError(f"{what} must be given")
    return x, w


def check_coords(region: Region, coords: Sequence[int]) -> tuple[int, int]:
    """Two distinct coordinate indices of ``region``."""
    ij = tuple(int(c) for c in coords)
    if len(ij) != 2 or ij[0] == ij[1] or not all(0 <= c < region.dim for c in ij):
        raise ValueError(f"coords must be two distinct indices below {region.dim}, "
                         f"got {tuple(coords)}")
    return ij[0], ij[1]


def check_bands(region: Region, bands: Mapping[int, float] | None) -> dict[int, float]:
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


def check_limits(limits: Any, ndim: int) -> np.ndarray:
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
class Plane:
    """Facets restricted to a plane (or line): unit rows ``a x >= b``.

    ``index`` holds the facet index of every row and ``scale`` the norm that each row
    was divided by (to convert offset uncertainties).
    """

    a: np.ndarray
    b: np.ndarray
    index: np.ndarray
    scale: np.ndarray


def restrict(normals: np.ndarray, offsets: np.ndarray, keep: Sequence[int],
              fixed: np.ndarray | None = None) -> Plane:
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
        rows = (np.abs(normals[:, others]) <= ZERO * full[:, None]).all(axis=1)
    norms = np.linalg.norm(sub, axis=1)
    rows &= norms > ZERO * np.maximum(full, np.finfo(float).tiny)
    idx = np.flatnonzero(rows)
    return Plane(sub[idx] / norms[idx, None], b[idx] / norms[idx], idx, norms[idx])


def box_polygon(box: np.ndarray) -> np.ndarray:
    """The corners of a box ((x0, x1), (y0, y1)), counter-clockwise."""
    (x0, x1), (y0, y1) = box
    return np.array([[x0, y0], [x1, y0], [x1, y1], [x0, y1]], dtype=float)


def clip(poly: np.ndarray, normal: np.ndarray, offset: float) -> np.ndarray:
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


def allowed_polygon(plane: Plane, box: np.ndarray) -> np.ndarray:
    """The allowed set inside the box, as polygon vertices (possibly none)."""
    poly = box_polygon(box)
    for normal, offset in zip(plane.a, plane.b, strict=True):
        poly = clip(poly, normal, offset)
    return poly


def segment(normal: np.ndarray, offset: float, box: np.ndarray) -> np.ndarray | None:
    """The part of the line ``normal . x == offset`` inside the box (Liang-Barsky)."""
    base = normal * offset  # the point of the line nearest the origin (unit normal)
    direction = np.array([-normal[1], normal[0]])
    t0, t1 = -np.inf, np.inf
    for k in range(2):
        lo, hi = box[k]
        if abs(direction[k]) <= ZERO:
            if not lo <= base[k] <= hi:
                return None
            continue
        ta, tb = sorted(((lo - base[k]) / direction[k], (hi - base[k]) / direction[k]))
        t0, t1 = max(t0, ta), min(t1, tb)
    if not t1 > t0:
        return None
    return np.array([base + t0 * direction, base + t1 * direction])


def vertices(plane: Plane) -> np.ndarray:
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


def interval(plane: Plane) -> tuple[float, float]:
    """The allowed interval of unit rows ``+-x >= b`` on a line (bounds may be infinite)."""
    a, b = plane.a[:, 0], plane.b
    lo = float(np.max(b[a > 0], initial=-np.inf))
    hi = float(np.min(-b[a < 0], initial=np.inf))
    return lo, hi


def ring_path(outer: np.ndarray, holes: Sequence[np.ndarray] = ()) -> Any:
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


def boundary_edges(poly: np.ndarray, plane: Plane) -> np.ndarray:
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
def wquantile(x: np.ndarray, q: Sequence[float], w: np.ndarray | None) -> np.ndarray:
    """Weighted quantiles of a 1-D array."""
    if w is None:
        return np.quantile(x, q)
    order = np.argsort(x)
    cw = np.cumsum(w[order])
    return np.interp(q, cw / cw[-1], x[order])


def spread(lo: np.ndarray, hi: np.ndarray, pad: float,
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


def sample_range(x: np.ndarray, w: np.ndarray | None, mass: float) -> np.ndarray:
    """Per column, the central ``mass`` interval, shape (k, 2)."""
    q = [(1 - mass) / 2, (1 + mass) / 2]
    return np.array([wquantile(x[:, k], q, w) for k in range(x.shape[1])])


def hpd_levels(h: np.ndarray, fractions: Sequence[float]) -> list[float] | None:
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


def auto_limits(plane: Plane, x: np.ndarray | None, w: np.ndarray | None) -> np.ndarray:
    """Limits that show the region's vertices near the data and the samples' 99 % range."""
    pts: list[np.ndarray] = []
    if x is not None:
        rng_ = sample_range(x, w, 0.99)
        pts = [rng_[:, 0], rng_[:, 1]]
    centre = (pts[0] + pts[1]) / 2 if pts else None
    anchors = vertices(plane)
    if len(anchors) < 2 and len(plane.b):
        ref = centre if centre is not None else (
            anchors.mean(axis=0) if len(anchors) else np.zeros(2))
        proj = ref - (plane.a @ ref - plane.b)[:, None] * plane.a
        tol = 1e-9 * max(1.0, float(np.abs(proj).max()))
        feasible = proj[(proj @ plane.a.T - plane.b >= -tol).all(axis=1)]
        anchors = np.vstack([anchors, feasible if len(feasible) else proj])
    if centre is not None and len(anchors):
        reach = 3.0 * max(float(np.linalg.norm(pts[1] - pts[0])), ZERO)
        dist = np.linalg.norm(anchors - centre, axis=1)
        anchors = anchors[(dist <= reach) | (dist == dist.min())]
    allpts = np.vstack([*pts, *anchors]) if (pts or len(anchors)) else np.zeros((1, 2))
    nonzero = np.abs(plane.b[plane.b != 0])
    unit = float(nonzero.max()) if nonzero.size else 1.0  # the size of the facet offsets
    return spread(allpts.min(axis=0), allpts.max(axis=0), 0.2, min(unit, 1.0))


# ---- drawing helpers -------------------------------------------------------------------
def new_figure(figsize: tuple[float, float], layout: Any = None) -> Figure:
    """A pyplot-free figure on an Agg canvas."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, layout=layout)
    FigureCanvasAgg(fig)
    return fig


def facet_style(k: int) -> tuple[str, str]:
    """Colour and line style of facet ``k``."""
    n = len(FACET_COLOURS)
    return FACET_COLOURS[k % n], FACET_STYLES[(k // n) % len(FACET_STYLES)]


def facet_text(region: Region, k: int, names: Sequence[str] | None = None) -> str:
    """A facet's label: its channel and family; for a cone, its inequality (normal
    scaled to a largest entry of 1) and family, since every cone facet is a dual matrix."""
    facet = region.facets[k]
    if not is_cone(region):
        return f"{facet.channel} ({facet.family})"
    shown = names if names is not None and len(names) == region.dim else region.coordinates
    return f"{short_inequality(facet.normal, shown)} ({facet.family})"


def short_inequality(normal: Sequence[float], names: Sequence[str]) -> str:
    """``fT0 + 0.5 fT1 >= 0`` with the largest |coefficient| 1 (3 significant digits)."""
    n = np.asarray(normal, dtype=float)
    n = n / max(float(np.abs(n).max()), ZERO)
    terms = []
    for c, name in zip(n, names, strict=True):
        if abs(c) < 5e-4:
            continue
        mag = "" if abs(abs(c) - 1) < 5e-4 else f"{abs(c):.3g} "
        terms.append(("-" if c < 0 else "+", f"{mag}{name}"))
    text = " ".join(f"{s} {v}" for s, v in terms).lstrip("+ ")
    return ("-" + text[2:] if text.startswith("- ") else text) + " \u2265 0"


def tint(colour: str, alpha: float) -> tuple[float, float, float, float]:
    from matplotlib.colors import to_rgba

    return to_rgba(colour, alpha)


def region_arrays(region: Region, inner: bool) -> tuple[np.ndarray, np.ndarray]:
    facets = region.inner_facets if inner else region.facets
    a = np.array([f.normal for f in facets], dtype=float).reshape(len(facets), region.dim)
    return a, np.array([f.offset for f in facets], dtype=float)



def draw_excluded_union(ax: Any, box: np.ndarray, allowed: np.ndarray,
                         gid: str = "excluded", fill: float = 0.0) -> None:
    """Hatch the box minus the allowed polygon."""
    from matplotlib.patches import PathPatch

    holes = [allowed] if len(allowed) else []
    ax.add_patch(PathPatch(ring_path(box_polygon(box), holes), facecolor=tint(GREY, fill),
                           edgecolor=tint(GREY, 0.6), hatch=EXCLUDED_HATCH, linewidth=0,
                           gid=gid, zorder=0.8))


# ---- labels: kinematics, units, verdicts ---------------------------------------------------
#: plot symbols of the kinematic keys that theories share (others print as their key)
KINEMATIC_SYMBOLS = {"pion_mass_mev": r"$M_\pi$", "kaon_mass_mev": r"$M_K$",
                     "eta_mass_mev": r"$M_\eta$", "mu_mev": r"$\mu$", "fpi_mev": r"$F_\pi$",
                     "heavy_scale_mev": r"$\Lambda$"}
#: verdict code (:mod:`eftsieve.check.verdicts`) -> sample colour
VERDICT_COLOURS = {0: BLUE, 1: "#222222", 2: VERMILION, 3: PURPLE}
#: the window of a cone region without a fit: the apex at the centre (scale-invariant)
CONE_WINDOW = (-1.0, 1.0)


def is_cone(region: Region) -> bool:
    """A region of a multi-field positivity cone (its settings carry ``cone_problem``)."""
    return "cone_problem" in region.settings


def kinematics_line(region: Region) -> str:
    """``M_pi = 139.57 MeV, mu = 770 MeV; family second-derivative`` from the theory's
    :meth:`~eftsieve.theories.base.Theory.region_kinematics` (whatever it has)."""
    from eftsieve.numbers import fmt_num
    from eftsieve.theories import get_theory

    try:
        kin = get_theory(region.theory).region_kinematics(region)
    except KeyError:  # a region of a theory this version does not know
        kin = {"families": sorted({f.family for f in region.facets})}
    parts = []
    order = list(KINEMATIC_SYMBOLS)
    keys = sorted(kin, key=lambda k: order.index(k) if k in order else len(order))
    for key in keys:
        val = kin[key]
        if key.endswith("_mev"):
            vals = val if isinstance(val, (list, tuple)) else [val]
            sym = KINEMATIC_SYMBOLS.get(key, key[:-4])
            parts.append(f"{sym} = {', '.join(fmt_num(v, 5) for v in vals)} MeV")
    if "order" in kin:
        parts.append(f"order {kin['order']}")
    fams = list(kin.get("families", []))
    label = "family" if len(fams) == 1 else "families"
    lines, line = [], ""
    for part in parts:   # at most about 70 characters a line
        if line and len(line) + len(part) > 70:
            lines.append(line + ",")
            line = part
        else:
            line = f"{line}, {part}" if line else part
    fam = f"{label} {', '.join(fams)}" if fams else ""
    if line and fam and len(line) + len(fam) < 70:
        return "\n".join([*lines, f"{line}; {fam}"])
    return "\n".join(x for x in [*lines, line, fam] if x)


def axis_label(region: Region, name: str) -> str:
    """A coordinate name with its unit (the theory's ``coordinate_unit``)."""
    from eftsieve.theories import get_theory

    try:
        unit = get_theory(region.theory).coordinate_unit
    except KeyError:
        unit = None
    if unit is None:
        return name
    return f"{name} (dimensionless)" if unit == "1" else f"{name} [{unit}]"


def typical_box(region: Region, names: Sequence[str]) -> np.ndarray | None:
    """The theory's window of typical values for ``names`` (k, 2), or None if it has none
    for one of them; a cone's window is :data:`CONE_WINDOW` about the apex."""
    from eftsieve.theories import get_theory

    if is_cone(region):
        return np.array([CONE_WINDOW] * len(names), dtype=float)
    try:
        window = get_theory(region.theory).typical_window
    except KeyError:
        return None
    if not all(n in window for n in names):
        return None
    return np.array([window[n] for n in names], dtype=float)


@dataclass(frozen=True)
class PlotView:
    """Axes in the fit's own convention: region coordinates y = jacobian x + shift of
    the fit's coordinates x (an exact affine map, square and invertible on the plane).

    Attributes
    ----------
    names
        The fit's parameter names on the x and y axes.
    jacobian
        The 2 x 2 Jacobian of the region's plotted coordinates in the fit's.
    shift
        The shift (2,).
    convention
        The fit's convention name, for the title.
    """

    names: tuple[str, str]
    jacobian: np.ndarray
    shift: np.ndarray
    convention: str = ""


def pull_plane(plane: Plane, view: PlotView) -> Plane:
    """Facet rows ``a y >= b`` in region coordinates as unit rows in the fit's."""
    a2 = plane.a @ view.jacobian
    b2 = plane.b - plane.a @ view.shift
    n = np.linalg.norm(a2, axis=1)
    return Plane(a2 / n[:, None], b2 / n, plane.index, plane.scale * n)


def polygon_area(poly: np.ndarray) -> float:
    """Shoelace area of a polygon (0 for fewer than three vertices)."""
    if len(poly) < 3:
        return 0.0
    x, y = poly[:, 0], poly[:, 1]
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
