"""One plane of a region figure: the allowed set, the excluded rest, the facets with
labels kept clear of the posterior, the bands, the posterior and the legend.

Used by :func:`eftsieve.report.plots.region_figure` (slices of polyhedral regions) and
:mod:`eftsieve.report.plot_cone` (wedges and normalised slices of cones).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    GREEN,
    GREY,
    ORANGE,
    UNDECIDED_HATCH,
    YELLOW,
    ZERO,
    Plane,
    allowed_polygon,
    axis_label,
    boundary_edges,
    draw_excluded_union,
    facet_style,
    facet_text,
    is_cone,
    new_figure,
    polygon_area,
    ring_path,
    segment,
    tint,
)
from eftsieve.report.plot_legend import (
    BAND_STYLES,
    between_labels,
    legend_handles,
)
from eftsieve.report.plot_posterior import draw_posterior_2d, verdict_codes

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

#: regions with more facets in the plane (support-function regions) are drawn without
#: each facet's line and label: only the allowed set and its boundary
MAX_DRAWN_FACETS = 12
#: labels closer than this (axes fractions) to one already placed are pushed along
LABEL_GAP = 0.22
#: the set between inner and outer facets is drawn above this share of the allowed area
VISIBLE_SHARE = 1e-3


# ---- labels ----------------------------------------------------------------------------
def _to_axes(p: np.ndarray, box: np.ndarray) -> np.ndarray:
    return (p - box[:, 0]) / (box[:, 1] - box[:, 0])


def label_position(seg: np.ndarray, box: np.ndarray, avoid: np.ndarray,
                   taken: list[np.ndarray], prefer: float = 0.5) -> float:
    """Where along a segment (fraction t) to write its label: as far as possible (in
    axes fractions) from the points ``avoid`` (the posterior, the apex) and the labels
    already placed, staying away from the segment's ends."""
    ts = np.linspace(0.2, 0.8, 25)
    pts = _to_axes(seg[0] + ts[:, None] * (seg[1] - seg[0]), box)
    score = -0.02 * np.abs(ts - prefer)
    if len(avoid):
        o = np.array([_to_axes(a, box) for a in avoid]).reshape(-1, 2)
        score += np.minimum(np.linalg.norm(pts[:, None] - o[None], axis=2).min(axis=1), 0.25)
    if taken:
        near = np.linalg.norm(pts[:, None] - np.array(taken)[None], axis=2).min(axis=1)
        score -= np.where(near < LABEL_GAP, 1.0 + LABEL_GAP - near, 0.0)
    return float(ts[int(np.argmax(score))])


def _label_line(ax: Axes, seg: np.ndarray, normal: np.ndarray, box: np.ndarray, text: str,
                colour: str, t: float, gid: str) -> np.ndarray:
    """Write ``text`` along a line at fraction t, just off it on the excluded side;
    returns the label's position in axes fractions."""
    span = box[:, 1] - box[:, 0]
    d = seg[1] - seg[0]
    away = normal / span
    away = away / max(float(np.linalg.norm(away)), ZERO)
    pos = seg[0] + t * d - 0.03 * away * span
    angle = float(np.degrees(np.arctan2(d[1] / span[1], d[0] / span[0])))
    angle = angle - 180.0 if angle > 90.0 else (angle + 180.0 if angle <= -90.0 else angle)
    ax.text(pos[0], pos[1], text, rotation=angle, rotation_mode="anchor", ha="center",
            va="center", fontsize=7.5, color=colour, clip_on=True, gid=gid, zorder=6,
            bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none",
                  "alpha": 0.85})
    return np.asarray(_to_axes(pos, box))


# ---- layers ----------------------------------------------------------------------------
def _draw_band(ax: Axes, plane: Plane, row: int, sigma: float, box: np.ndarray,
               colour: str) -> bool:
    """The 1- and 2-sigma edges of one boundary's band, in the facet's colour with the
    line styles of :data:`BAND_STYLES` (lines, not fills: bands of several facets
    overlap without piling up tints); True if any edge is in view."""
    n, c, fi = plane.a[row], plane.b[row], int(plane.index[row])
    s = sigma / plane.scale[row]
    drawn = False
    for k, style in zip((1, 2), BAND_STYLES, strict=True):
        if s <= 0:
            break
        pts = [seg for seg in (segment(n, c - k * s, box), segment(n, c + k * s, box))
               if seg is not None]
        if not pts:
            continue
        xy = np.vstack([np.vstack([p, [np.nan, np.nan]]) for p in pts])
        ax.plot(xy[:, 0], xy[:, 1], color=colour, ls=style, lw=0.9,
                gid=f"band-{fi}-{k}sigma", zorder=3)
        drawn = True
    return drawn


def _draw_facets(ax: Axes, region: Region, plane: Plane, box: np.ndarray,
                 bands: dict[int, float], avoid: np.ndarray,
                 names: Sequence[str]) -> tuple[bool, list[Any]]:
    """Each facet's line and label (clear of ``avoid``) and optional bands.

    A cone's facets carry a short tag (F1, F2, ...) on the line and their inequality in
    the legend (a dual matrix names no channel).  Returns (any band drawn, the legend
    entries of the tagged facets)."""
    from matplotlib.lines import Line2D

    taken: list[np.ndarray] = []
    banded, tagged = False, []
    cone = is_cone(region)
    for row, fi in enumerate(int(i) for i in plane.index):
        colour, style = facet_style(fi)
        n, c = plane.a[row], plane.b[row]
        if fi in bands:
            banded |= _draw_band(ax, plane, row, bands[fi], box, colour)
        seg = segment(n, c, box)
        if seg is None:
            continue
        text = facet_text(region, fi, names)
        ax.plot(seg[:, 0], seg[:, 1], color=colour, ls=style, lw=1.4, gid=f"facet-{fi}",
                label=text, zorder=4)
        if cone:
            tagged.append(Line2D([], [], color=colour, ls=style, lw=1.4,
                                 label=f"F{fi + 1}: {text}"))
            text = f"F{fi + 1}"
        t = label_position(seg, box, avoid, taken, 0.7 if cone else 0.5)
        taken.append(_label_line(ax, seg, n, box, text, colour, t, f"facet-label-{fi}"))
    return banded, tagged


def _draw_sets(ax: Axes, outer: Plane, inner: Plane | None,
               box: np.ndarray) -> tuple[bool, float, bool]:
    """The allowed polygon, the hatched excluded rest and the set between the inner and
    outer facets (drawn when it is more than :data:`VISIBLE_SHARE` of the allowed area in
    view); returns (allowed drawn, between's share of that area, inner boundary drawn)."""
    from matplotlib.patches import PathPatch, Polygon

    allowed = allowed_polygon(outer, box)
    draw_excluded_union(ax, box, allowed, fill=0.10)
    if not len(allowed):
        return False, 0.0, False
    ax.add_patch(Polygon(allowed, closed=True, facecolor=tint(GREEN, 0.10), linewidth=0,
                         gid="allowed", zorder=0.6))
    edges = boundary_edges(allowed, outer)
    ax.plot(edges[:, 0], edges[:, 1], color="black", lw=2.2, gid="allowed-boundary",
            zorder=5, solid_capstyle="round")
    if inner is None:
        return True, 0.0, False
    core = allowed_polygon(inner, box)
    area_all, area_core = polygon_area(allowed), polygon_area(core)
    share = (area_all - area_core) / max(area_all, ZERO) if len(core) else 1.0
    between = share > VISIBLE_SHARE
    if between:
        ax.add_patch(PathPatch(ring_path(allowed, [core] if len(core) else []),
                               facecolor=tint(YELLOW, 0.40), edgecolor=tint(ORANGE, 0.7),
                               hatch=UNDECIDED_HATCH, linewidth=0, gid="undecided",
                               zorder=0.7))
    inner_line = False
    if len(core) and between:
        e = boundary_edges(core, inner)
        if len(e):
            ax.plot(e[:, 0], e[:, 1], color="black", lw=1.3, ls="--", gid="inner-boundary",
                    zorder=5)
            inner_line = True
    return True, max(share, 0.0), inner_line


def draw_plane(region: Region, outer: Plane, inner: Plane | None, box: np.ndarray,
               names: Sequence[str], x: np.ndarray | None, w: np.ndarray | None,
               verdicts: Any, bands: dict[int, float], title: str, apex: bool,
               classify_at: tuple[tuple[int, int], np.ndarray] | None, *,
               plain_axes: bool = False, facet_lines: bool = True,
               notes: Sequence[str] = (), contours: bool = True) -> Figure:
    """The figure of one plane: sets, facets, posterior, labels and legend
    (``plain_axes``: the axis names are written as given, without units;
    ``facet_lines``: False when the rows of ``outer`` are not the region's facets, e.g.
    a projection, whose boundary alone is drawn; ``notes``: lines of text at the end
    of the legend; ``contours``: False where HPD contours of the plotted points would
    not be the fit's, e.g. samples moved along rays onto a slice)."""
    fig = new_figure((8.6, 5.4), "constrained")
    ax = fig.add_subplot()
    avoid = [np.zeros((1, 2))] if apex else []
    codes = None
    if x is not None:
        codes = verdict_codes(region, x, verdicts, classify_at)
        avoid.append(_avoid_points(x))
    banded, tagged = False, list[Any]()
    if not facet_lines:
        pass
    elif len(outer.index) <= MAX_DRAWN_FACETS or bands:
        banded, tagged = _draw_facets(ax, region, outer, box, bands,
                              np.vstack(avoid) if avoid else np.empty((0, 2)), names)
    else:
        title += f"\n{len(outer.index)} facets, drawn as the boundary of the allowed set"
    drawn, share, inner_line = _draw_sets(ax, outer, inner, box)
    between = share > VISIBLE_SHARE
    if not drawn:
        ax.text(0.5, 0.5, "no allowed point in view", transform=ax.transAxes, ha="center",
                va="center", fontsize=9, color=GREY, gid="empty-note")
    hpd, present = False, dict[int, str]()
    if x is not None and codes is not None:
        hpd, present = draw_posterior_2d(ax, x, w, codes, region, contours)
    ax.set_xlim(*box[0])
    ax.set_ylim(*box[1])
    ax.set_xlabel(names[0] if plain_axes else axis_label(region, names[0]))
    ax.set_ylabel(names[1] if plain_axes else axis_label(region, names[1]))
    ax.set_title(title, fontsize=9.5)
    ax.grid(True, color="#DDDDDD", lw=0.5, zorder=0)
    labels = between_labels(region)
    handles = legend_handles(between=labels[0] if between else None,
                             inner=labels[1] if inner_line else None, bands=banded,
                             posterior=hpd, verdicts=present,
                             allowed_label=_allowed_label(region, inner, share))
    from matplotlib.lines import Line2D

    handles += tagged + [Line2D([], [], ls="none", label=note) for note in notes]
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7.5,
              frameon=False, borderaxespad=0.0)
    return fig


def _allowed_label(region: Region, inner: Plane | None, share: float) -> str:
    """``allowed``; for a cone, whether its inner cone fills it in view."""
    if not is_cone(region):
        return "allowed"
    if inner is not None and share <= 1e-9:
        return "allowed: outer cone = verified inner cone"
    if inner is not None and share <= VISIBLE_SHARE:
        return f"allowed: outer cone\n(shell: {share:.1g} of it, too thin to see)"
    return "allowed (outer cone)"


def _avoid_points(x: np.ndarray, n: int = 400) -> np.ndarray:
    """Up to ``n`` evenly spaced samples, for keeping labels off the posterior."""
    step = max(1, len(x) // n)
    return np.asarray(x[::step])


