"""A region of one coordinate on a line (:func:`eftsieve.report.plots.region_figure`).

Facet k is a vertical line at its bound with its label, the allowed interval a thick
bar near the bottom, the excluded rest hatched, the stretch between the inner and
outer bounds dotted, theory-uncertainty bands in one colour, and samples a step
histogram (gid ``posterior-hist``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.check.verdicts import VERDICT_NAMES
from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    EXCLUDED_HATCH,
    GREEN,
    GREY,
    ORANGE,
    UNDECIDED_HATCH,
    VERDICT_COLOURS,
    YELLOW,
    ZERO,
    Plane,
    axis_label,
    check_bands,
    check_limits,
    check_samples,
    facet_style,
    facet_text,
    interval,
    new_figure,
    region_arrays,
    restrict,
    sample_range,
    spread,
    tint,
    typical_box,
)
from eftsieve.report.plot_legend import (
    BAND_STYLES,
    between_labels,
    legend_handles,
    plot_title,
)
from eftsieve.report.plot_posterior import HPD_COLOUR, verdict_codes, verdict_text

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure


def _draw_facets_1d(ax: Axes, region: Region, plane: Plane, xlim: np.ndarray,
                    bands: dict[int, float]) -> None:
    """Vertical boundary lines, tinted excluded sides, labels and bands on a line."""
    trans = ax.get_xaxis_transform()
    for row, fi in enumerate(int(i) for i in plane.index):
        colour, style = facet_style(fi)
        v = plane.b[row] / plane.a[row, 0]
        ax.axvline(v, color=colour, ls=style, lw=1.5, gid=f"facet-{fi}", zorder=4)
        ax.text(v, 0.96, facet_text(region, fi), rotation=90, ha="right", va="top",
                fontsize=7.5, color=colour, transform=trans, clip_on=True,
                gid=f"facet-label-{fi}", zorder=6,
                bbox={"boxstyle": "round,pad=0.15", "facecolor": "white",
                      "edgecolor": "none", "alpha": 0.85})
        s = bands.get(fi, 0.0) / plane.scale[row]
        for k, bstyle in zip((1, 2), BAND_STYLES, strict=True):
            if s > 0:
                for edge in (v - k * s, v + k * s):
                    ax.axvline(edge, color=colour, ls=bstyle, lw=0.9,
                               gid=f"band-{fi}-{k}sigma", zorder=3)


def _draw_interval(ax: Axes, lo: float, hi: float, xlim: np.ndarray, *, y: float, gid: str,
                   **style: Any) -> None:
    """A horizontal bar over [lo, hi] clipped to the view, at axes height ``y``."""
    a, b = max(lo, xlim[0]), min(hi, xlim[1])
    if b >= a:
        ax.plot([a, b], [y, y], transform=ax.get_xaxis_transform(), gid=gid,
                solid_capstyle="butt", zorder=5, **style)


def _draw_sets_1d(ax: Axes, outer: Plane, inner: Plane | None, xlim: np.ndarray) -> bool:
    """Hatch the excluded union, mark the allowed interval and the undecided stretches;
    True if an undecided stretch was drawn."""
    lo, hi = interval(outer)
    spans = [(xlim[0], lo), (hi, xlim[1])] if lo <= hi else [(xlim[0], xlim[1])]
    for a, b in spans:
        if b > a:
            ax.axvspan(max(a, xlim[0]), min(b, xlim[1]), facecolor=tint(GREY, 0.10),
                       edgecolor=tint(GREY, 0.6), hatch=EXCLUDED_HATCH, linewidth=0,
                       gid="excluded", zorder=0.8)
    _draw_interval(ax, lo, hi, xlim, y=0.05, gid="allowed-boundary", color="black", lw=5)
    a, b = max(lo, xlim[0]), min(hi, xlim[1])
    if b > a:
        ax.axvspan(a, b, facecolor=tint(GREEN, 0.08), linewidth=0, gid="allowed", zorder=0.6)
    if inner is None or lo > hi:
        return False
    ilo, ihi = interval(inner)
    ilo, ihi = max(ilo, lo), min(ihi, hi)
    gaps = [(lo, ilo), (ihi, hi)] if ilo <= ihi else [(lo, hi)]
    drawn = False
    for a, b in gaps:
        a, b = max(a, xlim[0]), min(b, xlim[1])
        if b - a > 1e-3 * max(hi - lo, ZERO):   # visible: 0.1 % of the interval
            ax.axvspan(a, b, facecolor=tint(YELLOW, 0.45), edgecolor=tint(ORANGE, 0.7),
                       hatch=UNDECIDED_HATCH, linewidth=0, gid="undecided", zorder=0.7)
            drawn = True
    if ilo <= ihi and drawn:
        _draw_interval(ax, ilo, ihi, xlim, y=0.11, gid="inner-boundary", color="black",
                       lw=1.5, ls="--")
    return drawn


def _limits_1d(plane: Plane, x: np.ndarray | None, w: np.ndarray | None) -> np.ndarray:
    """Limits showing every bound and the samples' central 99 %."""
    vals = list(plane.b / plane.a[:, 0])
    if x is not None:
        vals += list(sample_range(x, w, 0.99)[0])
    vals_arr = np.array(vals, dtype=float)
    return spread(vals_arr.min(keepdims=True), vals_arr.max(keepdims=True), 0.25)[0]


def region_figure_1d(region: Region, samples: Any, weights: Any,
                     bands: Mapping[int, float] | None, limits: Any,
                     title: str | None, verdicts: Any = None) -> Figure:
    """The one-coordinate version of :func:`region_figure`."""
    x, w = check_samples(samples, weights, 1)
    band_map = check_bands(region, bands)
    outer = restrict(*region_arrays(region, False), (0,))
    inner = restrict(*region_arrays(region, True), (0,)) if region.inner_facets else None
    window = typical_box(region, region.coordinates) if x is None else None
    xlim = (check_limits(limits, 1)[0] if limits is not None
            else window[0] if window is not None else _limits_1d(outer, x, w))
    fig = new_figure((8.0, 3.0), "constrained")
    ax = fig.add_subplot()
    _draw_facets_1d(ax, region, outer, xlim, band_map)
    between = _draw_sets_1d(ax, outer, inner, xlim)
    posterior = False
    present: dict[int, str] = {}
    if x is not None:
        central = sample_range(x, w, 0.998)
        lo, hi = spread(central[:, 0], central[:, 1], 0.05)[0]
        counts, edges = np.histogram(x[:, 0], bins=40, range=(lo, hi), weights=w)
        scale = 0.8 / max(float(counts.max()), ZERO)
        ax.stairs(scale * counts, edges, color=HPD_COLOUR, lw=1.4, gid="posterior-hist",
                  zorder=3)
        posterior = True
        codes = verdict_codes(region, x, verdicts, ((0, 0), np.zeros(1)))
        for code in sorted(set(codes.tolist())):   # the histogram split by verdict
            sel = codes == code
            part, _ = np.histogram(x[sel, 0], bins=edges, weights=None if w is None else w[sel])
            ax.stairs(scale * part, edges, fill=True, color=tint(VERDICT_COLOURS[code], 0.35),
                      gid=f"posterior-{VERDICT_NAMES[code]}", zorder=2.5)
            present[code] = verdict_text(code, region)
    ax.set_xlim(*xlim)
    ax.set_ylim(0.0, 1.0)
    ax.set_yticks([])
    ax.set_xlabel(axis_label(region, region.coordinates[0]))
    ax.set_title(plot_title(region, title), fontsize=9.5)
    labels = between_labels(region)
    ax.legend(handles=legend_handles(between=labels[0] if between else None,
                                     inner=labels[1] if between else None,
                                     bands=bool(band_map), posterior_hist=posterior,
                                     verdicts=present),
              loc="upper left",
              bbox_to_anchor=(1.01, 1.0), fontsize=7.5, frameon=False)
    return fig


