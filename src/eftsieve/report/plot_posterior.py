"""A posterior on a region plot: highest-density contours and samples coloured by verdict.

The contours are the 68 % and 95 % highest-density regions of a lightly smoothed
weighted histogram (lines only, so the region's tints stay readable).  The samples (at
most :data:`~eftsieve.report.plot_base.MAX_SCATTER`, drawn in proportion to their
weights) are coloured by their verdict against the region (:mod:`eftsieve.check.verdicts`).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    BLUE,
    HIST_BINS,
    HPD_LEVELS,
    MAX_SCATTER,
    MIN_ESS_CONTOURS,
    VERDICT_COLOURS,
    hpd_levels,
    is_cone,
    sample_range,
    spread,
    tint,
)
from eftsieve.stats.ess import kish_ess

if TYPE_CHECKING:
    from matplotlib.axes import Axes

#: contour colour of the posterior (darker than the sample colours)
HPD_COLOUR = "#08306B"
#: code of samples without a verdict (drawn in one colour)
NO_VERDICT = -1


def verdict_text(code: int, region: Region) -> str:
    """Legend text of a verdict code."""
    from eftsieve.check.verdicts import VERDICT_NAMES

    if code == 1 and region.inner_facets and is_cone(region):
        return "fit samples: shell or marginal"
    if code == 1 and region.inner_facets and not any(
            "truncation_shift" in f.extra for f in region.facets):
        return "fit samples: marginal or undecided"
    return f"fit samples: {VERDICT_NAMES[code]}"


def verdict_codes(region: Region, x: np.ndarray, verdicts: Any,
                  classify_at: tuple[tuple[int, int], np.ndarray] | None) -> np.ndarray:
    """Verdict codes of plotted samples: given, else classified against the region at
    the plotted slice (points of a slice are embedded at its fixed coordinates), else
    :data:`NO_VERDICT` (axes in another convention, where the caller knows them)."""
    if verdicts is not None:
        codes = np.asarray(verdicts, dtype=int)
        if codes.shape != (len(x),) or not np.isin(codes, list(VERDICT_COLOURS)).all():
            raise ValueError(f"verdicts must be {len(x)} codes in {sorted(VERDICT_COLOURS)}")
        return codes
    if classify_at is None:
        return np.full(len(x), NO_VERDICT)
    from eftsieve.check.verdicts import classify
    from eftsieve.theories import get_theory

    ij, fixed = classify_at
    pts = np.tile(fixed, (len(x), 1))
    pts[:, list(ij)] = x
    try:
        band = get_theory(region.theory).marginal_band(region)
    except KeyError:
        from eftsieve.tolerances import MARGINAL_BAND

        band = MARGINAL_BAND
    return np.asarray(classify(pts, region, band).verdict, dtype=int)


def draw_posterior_2d(ax: Axes, x: np.ndarray, w: np.ndarray | None, codes: np.ndarray,
                      region: Region, contours: bool = True) -> tuple[bool, dict[int, str]]:
    """HPD contour lines and the verdict-coloured samples; returns (contours drawn,
    verdict code -> legend text of the verdicts drawn)."""
    present = _scatter(ax, x, w, codes, region)
    ess = kish_ess(w, len(x))
    if ess < MIN_ESS_CONTOURS or not contours:
        return False, present
    from scipy.ndimage import gaussian_filter

    central = sample_range(x, w, 0.998)
    rng_ = spread(central[:, 0], central[:, 1], 0.1)
    bins = int(np.clip(np.sqrt(ess) / 1.5, 15, HIST_BINS))
    h, xe, ye = np.histogram2d(x[:, 0], x[:, 1], bins=bins, range=rng_, weights=w)
    h = np.pad(gaussian_filter(h, 1.2), 1)
    xc = _centres(xe)
    yc = _centres(ye)
    levels = hpd_levels(h, HPD_LEVELS)
    if levels is None:
        return False, present
    cs = ax.contour(xc, yc, h.T, levels=levels, colors=HPD_COLOUR, linewidths=(1.0, 1.8),
                    zorder=4.5)
    cs.set_gid("posterior-hpd")
    return True, present


def _centres(edges: np.ndarray) -> np.ndarray:
    """Bin centres with one extra on each side (the padded histogram)."""
    step = edges[1] - edges[0]
    return np.r_[edges[0] - step / 2, (edges[1:] + edges[:-1]) / 2, edges[-1] + step / 2]


def _scatter(ax: Axes, x: np.ndarray, w: np.ndarray | None, codes: np.ndarray,
             region: Region) -> dict[int, str]:
    """Up to MAX_SCATTER points by weight, one scatter per verdict present."""
    n = len(x)
    size = min(n, MAX_SCATTER) if w is None else min(n, MAX_SCATTER, int(np.count_nonzero(w)))
    idx = np.arange(n)
    if size < n:
        p = None if w is None else w / w.sum()
        idx = np.random.default_rng(0).choice(n, size=size, replace=False, p=p)
    few = len(idx) < 200
    present: dict[int, str] = {}
    for code in sorted(set(codes[idx].tolist())):
        sel = idx[codes[idx] == code]
        colour = BLUE if code == NO_VERDICT else VERDICT_COLOURS[code]
        name = "samples" if code == NO_VERDICT else _gid_name(code)
        ax.scatter(x[sel, 0], x[sel, 1], s=9 if few else 4,
                   color=tint(colour, 0.8 if few else 0.45), linewidths=0, rasterized=True,
                   gid=f"posterior-{name}", zorder=2.2)
        present[code] = "fit samples" if code == NO_VERDICT else verdict_text(code, region)
    return present


def _gid_name(code: int) -> str:
    from eftsieve.check.verdicts import VERDICT_NAMES

    return VERDICT_NAMES[code]
