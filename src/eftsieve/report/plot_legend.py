"""Legends and titles of the region figures: what was drawn, and nothing else.

The theory-uncertainty band of a facet is drawn as its edges in the facet's colour,
dashed at 1 sigma and dotted at 2 sigma (:data:`BAND_STYLES`), so the legend's two
entries match every band drawn and overlapping bands add no tints.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from eftsieve.fit.conventions import NONE
from eftsieve.region.model import Region
from eftsieve.report.plot_base import (
    BLUE,
    EXCLUDED_HATCH,
    GREEN,
    GREY,
    ORANGE,
    UNDECIDED_HATCH,
    VERDICT_COLOURS,
    YELLOW,
    PlotView,
    is_cone,
    kinematics_line,
    tint,
)
from eftsieve.report.plot_posterior import HPD_COLOUR

#: line styles of the 1- and 2-sigma edges of a theory-uncertainty band (drawn in the
#: facet's colour)
BAND_STYLES = ("--", ":")


def between_labels(region: Region) -> tuple[str, str]:
    """Legend labels of the set between the inner and outer facets, and of the inner
    boundary: a truncation allowance (facets with ``truncation_shift``), a cone's shell
    (outer minus the verified inner cone), or the order of a sum-rule problem."""
    if any("truncation_shift" in f.extra for f in region.facets):
        return ("uncertain (within the truncation allowance)",
                "inner set (the bounds without the allowance)")
    if is_cone(region):
        return ("shell: outer cone minus verified inner cone\n(settled by exact solves)",
                "inner cone (verified)")
    return "numerically undecided", "inner set (positive spectra, to the order)"


def legend_handles(*, between: str | None = None, inner: str | None = None,
                   bands: bool = False, posterior: bool = False, posterior_hist: bool = False,
                   verdicts: Mapping[int, str] | None = None,
                   allowed_label: str = "allowed") -> list[Any]:
    """Proxy artists for what was drawn, and nothing else."""
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    handles: list[Any] = [
        Patch(facecolor=tint(GREEN, 0.15), edgecolor="black", label=allowed_label),
        Patch(facecolor=tint(GREY, 0.10), edgecolor=tint(GREY, 0.8), hatch=EXCLUDED_HATCH,
              label="excluded")]
    if between:
        handles.append(Patch(facecolor=tint(YELLOW, 0.40), edgecolor=tint(ORANGE, 0.8),
                             hatch=UNDECIDED_HATCH, label=between))
    if inner:
        handles.append(Line2D([], [], color="black", ls="--", label=inner))
    if bands:
        handles += [Line2D([], [], color=GREY, ls=BAND_STYLES[0], lw=0.9,
                           label="boundary \u00b11\u03c3 (theory uncertainty),\n"
                                 "in the facet's colour"),
                    Line2D([], [], color=GREY, ls=BAND_STYLES[1], lw=0.9,
                           label="boundary \u00b12\u03c3")]
    if posterior:
        handles.append(Line2D([], [], color=HPD_COLOUR, lw=1.4, label="fit: 68% / 95% HPD"))
    if posterior_hist:
        handles.append(Line2D([], [], color=HPD_COLOUR, lw=1.4, label="fit (histogram)"))
    for code, text in (verdicts or {}).items():
        handles.append(Line2D([], [], color=VERDICT_COLOURS.get(code, BLUE), marker="o", ls="none",
                              ms=4, label=text))
    return handles


def plot_title(region: Region, title: str | None, extra: Sequence[str] = (),
               view: PlotView | None = None) -> str:
    """Theory and convention, the kinematics line, then ``extra`` lines."""
    if title is not None:
        return title
    conv = view.convention if view is not None and view.convention else (
        region.convention.get("name") if isinstance(region.convention, dict) else None)
    what = "allowed cone" if is_cone(region) else "allowed region"
    proj = region.settings.get("projection") if isinstance(region.settings, dict) else None
    if proj:
        what = f"projection of the allowed cone, {len(proj['free'])} others free"
    head = f"{region.theory}: {what}" + (f" ({conv})" if conv and conv != NONE else "")
    return "\n".join([head, kinematics_line(region), *[e for e in extra if e]])


