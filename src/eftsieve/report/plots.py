"""Figures of allowed regions, of posteriors, and of the two together.

* :func:`region_figure` draws a region in the plane of two of its coordinates (or on a
  line, :mod:`eftsieve.report.plot_line`, for one coordinate): the allowed set with its
  boundary, the excluded rest hatched, every facet's line with a label kept clear of
  the posterior, the set between the inner and the outer facets, optional
  theory-uncertainty bands of the boundaries, and a posterior's 68 % and 95 %
  highest-density contours over its samples coloured by verdict.  It zooms to the fit,
  or without one to the theory's documented window of typical values
  (:attr:`eftsieve.theories.base.Theory.typical_window`).  The title carries the
  region's kinematics (masses, scales, families).  Cone regions of three or more
  coordinates are drawn on a normalised slice (:mod:`eftsieve.report.plot_cone`).
* :func:`corner_figure` (:mod:`eftsieve.report.plot_corner`) draws a corner plot.

Matplotlib is imported inside the functions and every figure is a bare
:class:`matplotlib.figure.Figure` on an Agg canvas, so nothing here touches pyplot's
global state.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.io.atomic import atomic_write_with
from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    DEFAULT_DPI,
    Plane,
    PlotView,
    auto_limits,
    check_bands,
    check_coords,
    check_limits,
    check_samples,
    is_cone,
    pull_plane,
    region_arrays,
    restrict,
    spread,
    typical_box,
)
from eftsieve.report.plot_corner import corner_figure, save_corner
from eftsieve.report.plot_legend import plot_title
from eftsieve.report.plot_plane import draw_plane

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = ["corner_figure", "region_figure", "save_corner", "save_region_plot"]

#: a Chebyshev centre this far out (in units of its search box) means an unbounded region
_UNBOUNDED = 0.5


# ---- region figure ---------------------------------------------------------------------
def slice_point(region: Region, slice_at: Mapping[str, float] | None = None) -> np.ndarray:
    """Where a region of more than two coordinates is cut: the values in ``slice_at``;
    for the others the Chebyshev centre of a bounded region, else its point nearest the
    origin (where the facets of an unbounded region meet), else the origin."""
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
    elif not (b <= 0).all():
        from eftsieve.stats.tension import closest_point

        try:
            point = closest_point(np.zeros(region.dim), np.eye(region.dim), a, b)[0]
        except SolverError:
            pass
    for k, name in enumerate(region.coordinates):
        if name in given:
            point[k] = float(given[name])
    return point


def _limits(region: Region, outer: Plane, names: Sequence[str], x: np.ndarray | None,
            w: np.ndarray | None, cone: bool) -> np.ndarray:
    """The fit (with the vertices near it, and a cone's apex), else the typical window."""
    if x is None:
        window = typical_box(region, names)
        if window is not None:
            return window
        return auto_limits(outer, None, None)
    box = auto_limits(outer, x, w)
    if cone:  # the apex belongs in the picture
        lo, hi = np.minimum(box[:, 0], 0.0), np.maximum(box[:, 1], 0.0)
        box = spread(lo, hi, 0.05)
    return box


def region_figure(region: Region, *, samples: Any = None, weights: Any = None,
                  verdicts: Any = None, coords: Sequence[int] = (0, 1),
                  bands: Mapping[int, float] | None = None, limits: Any = None,
                  title: str | None = None, slice_at: Mapping[str, float] | None = None,
                  view: PlotView | None = None) -> Figure:
    """Draw a region in the plane of two of its coordinates.

    Parameters
    ----------
    region
        The region.  One coordinate: drawn on a line.  More than two: cut at
        ``slice_at`` (by name), else through its Chebyshev centre (bounded) or its point
        nearest the origin; a cone of three or more coordinates without ``slice_at`` is
        drawn on a normalised slice (:func:`eftsieve.report.plot_cone.cone_slice_figure`).
    samples
        Optional posterior samples of the two plotted coordinates, shape (n, 2) (in the
        fit's coordinates when ``view`` is given).
    weights
        Optional non-negative sample weights, shape (n,).
    verdicts
        Optional verdict codes of the samples (:mod:`eftsieve.check.verdicts`); by
        default classified against the region.
    coords
        The two region coordinates on the x and y axes.
    bands
        Facet index -> uncertainty of that facet's offset: 1- and 2-sigma bands.
    limits
        ``((xmin, xmax), (ymin, ymax))``; by default the fit's central 99 % with the
        vertices near it, or without a fit the theory's window of typical values.
    title
        The title; by default theory, convention, kinematics and the slice.
    slice_at
        Coordinate name -> value at which a region of more than two coordinates is cut.
    view
        Axes in the fit's convention (an exact affine map of the two coordinates).

    Returns
    -------
    matplotlib.figure.Figure
        Artists carry ``gid`` values: ``facet-<k>``, ``facet-label-<k>``, ``excluded``,
        ``allowed``, ``allowed-boundary``, ``undecided``, ``inner-boundary``,
        ``band-<k>-1sigma`` / ``-2sigma``, ``posterior-hpd`` and
        ``posterior-<verdict>``.

    Raises
    ------
    ValueError
        On samples or weights with NaN or infinite values, or inputs of the wrong shape.
    """
    if region.dim == 1:
        from eftsieve.report.plot_line import region_figure_1d

        return region_figure_1d(region, samples, weights, bands, limits, title, verdicts)
    if is_cone(region) and region.dim >= 3 and slice_at is None and view is None:
        from eftsieve.report.plot_cone import cone_slice_figure

        return cone_slice_figure(region, samples=samples, weights=weights, coords=coords,
                                 limits=limits, title=title, verdicts=verdicts)
    ij = check_coords(region, coords)
    x, w = check_samples(samples, weights, 2)
    band_map = check_bands(region, bands)
    fixed = slice_point(region, slice_at)
    outer = restrict(*region_arrays(region, False), ij, fixed)
    inner = restrict(*region_arrays(region, True), ij, fixed) if region.inner_facets else None
    names = view.names if view is not None else tuple(region.coordinates[k] for k in ij)
    if view is not None:
        if region.dim != 2:
            raise ValueError("a view in the fit's convention needs a two-coordinate region")
        outer = pull_plane(outer, view)
        inner = pull_plane(inner, view) if inner is not None else None
    cone = is_cone(region)
    box = (check_limits(limits, 2) if limits is not None
           else _limits(region, outer, names, x, w, cone))
    others = [f"{region.coordinates[k]}={fixed[k]:.4g}" for k in range(region.dim)
              if k not in ij]
    extra = [f"slice at {', '.join(others)}" if others else ""]
    return draw_plane(region, outer, inner, box, names, x, w, verdicts, band_map,
                      plot_title(region, title, extra, view), cone,
                      None if view is not None else (ij, fixed))



def save_region_plot(region: Region, path: str | Path, *, dpi: int = DEFAULT_DPI,
                     **kw: Any) -> Path:
    """Draw :func:`region_figure` and write it as a PNG, atomically; returns the path."""
    fig = region_figure(region, **kw)
    return atomic_write_with(path, lambda tmp: fig.savefig(tmp, format="png", dpi=dpi))

