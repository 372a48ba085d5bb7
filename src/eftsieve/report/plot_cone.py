"""Figures of positivity cones (regions whose settings carry ``cone_problem``).

Every facet of a cone reads ``normal . c >= 0``, so the picture is scale-invariant:

* two coefficients: a wedge through the origin, drawn by
  :func:`eftsieve.report.plots.region_figure` (the apex always in view; the shell
  between the outer and the verified inner cone dotted);
* three coefficients (:func:`cone_slice_figure`): the cone meets a plane that every one
  of its rays crosses once in a bounded polygon.  The plane is ``c_k = +-1`` for a
  coefficient c_k of one sign on the whole outer cone (checked on its extreme rays),
  else the gnomonic plane ``d . c = 1`` with d the normalised sum of the outer facet
  normals (d . c > 0 on every non-zero point of a pointed cone).  A fit's samples are
  moved along their rays onto the plane; samples on the far side of the plane are
  outside the cone and counted in the title;
* more coefficients: each pair's projection of the outer cone (a wedge, by the support
  function of :func:`eftsieve.report.plot_base.projection_plane`), here for one pair and
  in the corner plot for every pair.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    Plane,
    auto_limits,
    check_coords,
    check_limits,
    check_samples,
    region_arrays,
    restrict,
    sample_range,
    spread,
)
from eftsieve.report.plot_legend import plot_title
from eftsieve.report.plot_plane import draw_plane
from eftsieve.report.plot_project import projection_plane

if TYPE_CHECKING:
    from matplotlib.figure import Figure

#: rays with a component below this (relative) do not fix the sign of a coefficient
_RAY_TOL = 1e-9


@dataclass(frozen=True)
class ConeSlice:
    """A plane that every ray of a three-coefficient cone crosses once.

    Attributes
    ----------
    basis
        Orthonormal 3 x 3 matrix: columns 0 and 1 span the plane's axes, column 2 is
        the plane's normal direction d (the plane is ``d . c = 1``).
    names
        The axis labels (ratios along the rays).
    statement
        The normalisation in words, for the title.
    """

    basis: np.ndarray
    names: tuple[str, str]
    statement: str


def extreme_rays(normals: np.ndarray) -> np.ndarray:
    """Unit extreme rays of the 3-D cone {c : normals c >= 0}: cross products of pairs
    of facet normals that satisfy every facet (duplicates removed)."""
    a = normals / np.linalg.norm(normals, axis=1)[:, None]
    rays = []
    for i in range(len(a)):
        for j in range(i + 1, len(a)):
            r = np.cross(a[i], a[j])
            size = float(np.linalg.norm(r))
            if size <= 1e-9:
                continue
            r = r / size
            for cand in (r, -r):
                if (a @ cand >= -1e-9).all():
                    rays.append(cand)
    if not rays:
        return np.empty((0, 3))
    out: list[np.ndarray] = []
    for r in rays:
        if all(np.linalg.norm(r - q) > 1e-7 for q in out):
            out.append(r)
    return np.array(out)


def choose_slice(region: Region, coords: tuple[int, int]) -> ConeSlice:
    """The normalisation plane of a three-coefficient cone (see the module docstring)."""
    a, _ = region_arrays(region, False)
    rays = extreme_rays(a)
    names = region.coordinates
    others = [k for k in range(3) if k not in coords]
    order = others + [k for k in range(3) if k not in others]
    for k in order:
        if len(rays) and ((rays[:, k] > _RAY_TOL).all() or (rays[:, k] < -_RAY_TOL).all()):
            sign = 1.0 if rays[0, k] > 0 else -1.0
            free = [i for i in coords if i != k] if k not in coords else \
                [i for i in range(3) if i != k]
            basis = np.zeros((3, 3))
            basis[free[0], 0] = basis[free[1], 1] = 1.0
            basis[k, 2] = sign
            ratio = (f"{names[free[0]]} / |{names[k]}|", f"{names[free[1]]} / |{names[k]}|")
            return ConeSlice(basis, ratio, f"slice at {names[k]} = {sign:+g}")
    d = a.sum(axis=0)
    d = d / np.linalg.norm(d)
    e1 = np.eye(3)[coords[0]] - d[coords[0]] * d  # the first plotted axis, in the plane
    e1 = e1 / np.linalg.norm(e1)
    e2 = np.cross(d, e1)
    basis = np.column_stack([e1, e2, d])
    return ConeSlice(basis, ("u = e1.c / d.c", "v = e2.c / d.c"),
                     "gnomonic slice d.c = 1")


def basis_notes(sl: ConeSlice, names: Sequence[str]) -> list[str]:
    """The vectors of a gnomonic slice in words (none for a coefficient slice)."""
    if not sl.statement.startswith("gnomonic"):
        return []
    cols = ", ".join(names)
    return [f"{k} = ({', '.join(f'{0.0 if abs(v) < 5e-4 else v:.3f}' for v in sl.basis[:, j])})"
            f" in ({cols})"
            for j, k in ((2, "d"), (0, "e1"), (1, "e2"))]


def _sliced_region(region: Region, basis: np.ndarray) -> tuple[Plane, Plane | None]:
    """Outer and inner facets on the plane y_2 = 1 of the coordinates y = basis^T c."""
    fixed = np.array([0.0, 0.0, 1.0])
    a, b = region_arrays(region, False)
    outer = restrict(a @ basis, b, (0, 1), fixed)
    inner = None
    if region.inner_facets:
        ai, bi = region_arrays(region, True)
        inner = restrict(ai @ basis, bi, (0, 1), fixed)
    return outer, inner


def cone_slice_figure(region: Region, *, samples: Any = None, weights: Any = None,
                      coords: Sequence[int] = (0, 1), limits: Any = None,
                      title: str | None = None, verdicts: Any = None) -> Figure:
    """Draw a cone of three or more coefficients.

    Parameters
    ----------
    region
        A cone region (every offset 0).
    samples
        Optional samples of all the region's coefficients, shape (n, dim).
    weights
        Optional weights, shape (n,).
    coords
        Two coefficients: for three, the plane's axes when the normalisation is a
        coefficient (the third); for more, the pair whose projection is drawn.
    limits
        Axis limits on the plane; by default the slice polygon and the samples.
    title
        The title; by default theory, families and the normalisation.
    verdicts
        Optional verdict codes of the samples; by default classified here.

    Returns
    -------
    matplotlib.figure.Figure
        As :func:`eftsieve.report.plots.region_figure`.
    """
    ij = check_coords(region, coords)
    x, w = check_samples(samples, weights, region.dim)
    if region.dim > 3:
        return _projection_figure(region, ij, x, w, limits, title, verdicts)
    sl = choose_slice(region, ij)
    outer, inner = _sliced_region(region, sl.basis)
    extra = [sl.statement + " (every ray of the cone crosses it once)"]
    px, pw, codes = None, None, None
    if x is not None:
        codes = _classify(region, x, verdicts)
        y = x @ sl.basis
        front = y[:, 2] > 0
        px = y[front, :2] / y[front, 2:3]
        pw = None if w is None else w[front]
        codes = codes[front]
        extra.append("samples moved along their rays onto it (no contours)")
        extra.append(f"{int((~front).sum())} of {len(x)} samples lie behind it: outside "
                     "the cone, not drawn")
        if not front.any():
            px = pw = codes = None
    box = check_limits(limits, 2) if limits is not None else _slice_limits(outer, px, pw)
    return draw_plane(region, outer, inner, box, sl.names, px, pw, codes, {},
                      plot_title(region, title, extra), False, None, plain_axes=True,
                      notes=basis_notes(sl, region.coordinates), contours=False)


def _classify(region: Region, x: np.ndarray, verdicts: Any) -> np.ndarray:
    """Verdict codes of full-dimensional samples (given, or classified here)."""
    from eftsieve.report.plot_posterior import verdict_codes

    if verdicts is not None:
        return verdict_codes(region, x, verdicts, None)
    from eftsieve.check.verdicts import classify
    from eftsieve.theories import get_theory

    band = get_theory(region.theory).marginal_band(region)
    return np.asarray(classify(x, region, band).verdict, dtype=int)


def _slice_limits(outer: Plane, x: np.ndarray | None, w: np.ndarray | None) -> np.ndarray:
    """The slice polygon's vertices and the samples' central 90 %, at most three times
    the polygon's size (rays nearly parallel to the plane land far out)."""
    box = auto_limits(outer, None, None)
    if x is None:
        return box
    r = sample_range(x, w, 0.90)
    size = box[:, 1] - box[:, 0]
    lo = np.maximum(np.minimum(box[:, 0], r[:, 0]), box[:, 0] - size)
    hi = np.minimum(np.maximum(box[:, 1], r[:, 1]), box[:, 1] + size)
    return spread(lo, hi, 0.05)


def _projection_figure(region: Region, ij: tuple[int, int], x: np.ndarray | None,
                       w: np.ndarray | None, limits: Any, title: str | None,
                       verdicts: Any) -> Figure:
    """One pair's projection of the outer cone of four or more coefficients."""
    a, b = region_arrays(region, False)
    outer = projection_plane(a, b, ij)
    names = (region.coordinates[ij[0]], region.coordinates[ij[1]])
    px, codes = None, None
    if x is not None:
        codes = _classify(region, x, verdicts)
        px = x[:, list(ij)]
    lo, hi = (np.array([-1.0, -1.0]), np.array([1.0, 1.0])) if px is None \
        else _pair_range(px, w)
    box = check_limits(limits, 2) if limits is not None else spread(lo, hi, 0.05)
    extra = [f"projection of the outer cone on ({names[0]}, {names[1]}): outside it is "
             "excluded for every value of the other coefficients"]
    return draw_plane(region, outer, None, box, names, px, w, codes, {},
                      plot_title(region, title, extra), True, None, facet_lines=False)


def _pair_range(x: np.ndarray, w: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    r = sample_range(x, w, 0.99)
    return np.minimum(r[:, 0], 0.0), np.maximum(r[:, 1], 0.0)
