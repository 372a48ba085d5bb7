"""Corner plots of posterior samples, optionally against a region and a second set.

:func:`corner_figure` lays the panels out with the ``corner`` package, in our colours,
draws an optional second sample set for a comparison (the same likelihood without and
with positivity), and hatches the excluded part of every panel spanned by region
coordinates.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.io.atomic import atomic_write_with
from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    CORNER_BINS,
    DEFAULT_DPI,
    EXCLUDED_HATCH,
    GREY,
    HPD_LEVELS,
    MIN_ESS_CONTOURS,
    SAMPLE_COLOURS,
    Plane,
    allowed_polygon,
    boundary_edges,
    draw_excluded_union,
    new_figure,
    polygon_area,
    region_arrays,
    restrict,
    sample_range,
    sample_set,
    spread,
    tint,
)
from eftsieve.report.plot_project import projection_interval, projection_plane
from eftsieve.stats.ess import kish_ess

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = ["corner_figure", "save_corner"]


# ---- corner figure ---------------------------------------------------------------------
def _corner_ranges(sets: Sequence[tuple[np.ndarray, np.ndarray | None]]) -> np.ndarray:
    """Per column, a range covering every set's central 99 %."""
    r = np.array([sample_range(x, w, 0.99) for x, w in sets])
    return spread(r[:, :, 0].min(axis=0), r[:, :, 1].max(axis=0), 0.08)


def _corner_layer(fig: Figure, x: np.ndarray, w: np.ndarray | None, ranges: np.ndarray,
                  names: Sequence[str], colour: str, smooth: bool) -> None:
    """One sample set drawn by ``corner`` into ``fig`` (``smooth``: a Gaussian smoothing
    of one bin, only for sets without a hard edge)."""
    corner = _corner_package()
    contours = kish_ess(w, len(x)) >= MIN_ESS_CONTOURS
    corner.corner(x, bins=CORNER_BINS, weights=w, fig=fig, range=[tuple(r) for r in ranges],
                  color=colour, labels=list(names), smooth=1.0 if smooth else None,
                  levels=HPD_LEVELS,
                  plot_density=False, plot_contours=contours, fill_contours=contours,
                  no_fill_contours=True, plot_datapoints=not contours, quiet=True,
                  data_kwargs={"alpha": 0.6, "ms": 3.0},
                  contour_kwargs={"linewidths": 1.2},
                  contourf_kwargs={"colors": [tint(colour, 0.0), tint(colour, 0.14),
                                              tint(colour, 0.32)]}, max_n_ticks=3,
                  hist_kwargs={"density": True, "color": colour, "linewidth": 1.4},
                  label_kwargs={"fontsize": 10})


def _corner_package() -> Any:
    """The ``corner`` package, imported without its optional arviz support when arviz is
    not loaded yet.

    ``corner`` imports arviz (and with it xarray, pandas and scipy.stats: about 0.8 s of
    a check's run, issue 18) only for plotting arviz data sets, and carries on without it
    when that import fails; we pass numpy arrays, so the import is blocked for the
    moment ``corner`` loads (a ``None`` entry in ``sys.modules`` makes an import fail,
    as the import system documents) and the entry is removed right after.  Where arviz
    is already loaded (a NetCDF fit), corner is imported as usual.
    """
    import sys

    if "corner" in sys.modules or "arviz" in sys.modules:
        import corner

        return corner
    blocked = "corner.arviz_corner"
    sys.modules[blocked] = None  # type: ignore[assignment]
    try:
        import corner
    finally:
        if sys.modules.get(blocked, 0) is None:
            del sys.modules[blocked]
    return corner


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


def _corner_plane(ax: Axes, plane: Plane, box: np.ndarray) -> bool:
    """Hatch the excluded part of a 2-D panel and draw the boundary; True if an excluded
    part is in view."""
    if not len(plane.b):
        return False
    allowed = allowed_polygon(plane, box)
    full = float(np.prod(box[:, 1] - box[:, 0]))
    if len(allowed) and polygon_area(allowed) >= full * (1 - 1e-9):
        return False
    draw_excluded_union(ax, box, allowed, fill=0.18)
    edges = boundary_edges(allowed, plane)
    if len(edges):
        ax.plot(edges[:, 0], edges[:, 1], color="black", lw=1.3, gid="boundary", zorder=5)
    ax.set_xlim(*box[0])
    ax.set_ylim(*box[1])
    return True


def _corner_line(ax: Axes, lo: float, hi: float, xlim: np.ndarray) -> bool:
    """Hatch the excluded part of a 1-D panel (outside [lo, hi]) and mark the bounds;
    True if an excluded part is in view."""
    if lo <= xlim[0] and hi >= xlim[1]:
        return False
    spans = [(xlim[0], lo), (hi, xlim[1])] if lo <= hi else [(xlim[0], xlim[1])]
    for a, b in spans:
        a, b = max(a, xlim[0]), min(b, xlim[1])
        if b > a:
            ax.axvspan(a, b, facecolor=tint(GREY, 0.18), edgecolor=tint(GREY, 0.6),
                       hatch=EXCLUDED_HATCH, linewidth=0, gid="excluded", zorder=0.8)
    for v in (lo, hi):
        if lo <= hi and xlim[0] <= v <= xlim[1]:
            ax.axvline(v, color="black", lw=1.3, gid="boundary", zorder=5)
    ax.set_xlim(*xlim)
    return True


def _corner_region(axes: np.ndarray, region: Region, columns: dict[int, int],
                   ranges: np.ndarray) -> bool:
    """Region overlays on every panel spanned by region coordinates; True if any
    excluded part is in view.  A region of one or two coordinates is drawn as it is;
    for more, each panel shows the projection onto its coordinates (outside it is
    excluded whatever the other coordinates are)."""
    normals, offsets = region_arrays(region, False)
    inv = {col: k for k, col in columns.items()}
    drawn = False
    for r in range(axes.shape[0]):
        for c in range(r + 1):
            if c not in inv or r not in inv:
                continue
            if r == c:
                lo, hi = projection_interval(normals, offsets, inv[c])
                drawn |= _corner_line(axes[r, c], lo, hi, ranges[c])
            elif region.dim == 2:
                plane = restrict(normals, offsets, (inv[c], inv[r]))
                drawn |= _corner_plane(axes[r, c], plane, ranges[[c, r]])
            else:
                plane = projection_plane(normals, offsets, (inv[c], inv[r]))
                shown = _corner_plane(axes[r, c], plane, ranges[[c, r]])
                if not len(plane.b):  # no bound at all: say so rather than stay silent
                    axes[r, c].text(0.03, 0.03, "no bound on this pair alone\n"
                                    "(projection of the region)", fontsize=6.5,
                                    color=GREY, transform=axes[r, c].transAxes,
                                    gid="no-bound-note", zorder=6)
                drawn |= shown
    return drawn


def _truncated(region: Region, columns: dict[int, int], x: np.ndarray) -> bool:
    """Whether a sample set has a hard edge on the region's boundary (it was truncated
    by it), which smoothing would blur: every point satisfies every facet, and for some
    facet the nearest points sit within :data:`EDGE_FRACTION` of the set's spread along
    its normal.  A set inside the region but far from its boundary has no edge there."""
    if len(columns) != region.dim:
        return False
    y = x[:, [columns[k] for k in range(region.dim)]]
    margins = region.margins(y)
    if not (margins >= 0).all():
        return False
    a, _ = region.arrays()
    spread_along = np.std(y @ a.T, axis=0)
    return bool((margins.min(axis=0) <= EDGE_FRACTION * spread_along).any())


#: a set lies on a facet when its nearest point is this close (in units of its spread)
EDGE_FRACTION = 0.05


def _corner_legend(fig: Figure, axes: np.ndarray, labels: Sequence[str] | None,
                   region: bool) -> None:
    """Legend of the sample sets (when two) and of the excluded shading."""
    from matplotlib.patches import Patch

    handles: list[Any] = []
    if labels is not None:
        handles += [Patch(facecolor=tint(c, 0.35), edgecolor=c, label=str(t))
                    for c, t in zip(SAMPLE_COLOURS, labels, strict=True)]
    if region:
        handles.append(Patch(facecolor=tint(GREY, 0.18), edgecolor=tint(GREY, 0.8),
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
    sets = [sample_set(samples, weights, k)]
    if overlay is not None:
        sets.append(sample_set(overlay, overlay_weights, k, "overlay"))
        if len(labels) != 2:
            raise ValueError(f"labels must be two texts, got {labels!r}")
    elif overlay_weights is not None:
        raise ValueError("overlay_weights were given without overlay")
    if any(len(s[0]) < max(k, 2) for s in sets):
        raise ValueError(f"need at least max(2, {k}) samples in every set")
    columns = _region_columns(region, names, region_coords) if region is not None else {}
    ranges = _corner_ranges(sets)
    smooth = [region is None or not _truncated(region, columns, xs) for xs, _ in sets]
    dim = 1.0 + 2.0 * k + 0.1 * (k - 1) + 0.4
    fig = new_figure((dim * (1.7 if k == 1 else 1.0), dim))
    for (xs, ws), colour, sm in zip(sets, SAMPLE_COLOURS, smooth, strict=False):
        _corner_layer(fig, xs, ws, ranges, names, colour, sm)
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

