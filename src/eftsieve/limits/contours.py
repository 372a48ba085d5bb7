"""Published two-coefficient contours against a region: the fraction of their area that
positivity allows, and the truncated contour.

A contour (a closed list of points in the plane of two coefficients, the others at
zero) is clipped exactly by the half-planes of the allowed part of its plane
(:func:`eftsieve.limits.plane.clip_polygon`); areas by the shoelace formula.  The area
fraction is a statement about the plane's area (a flat measure in the two
coefficients), not a probability.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.limits.plane import PlaneCut, clip_polygon, polygon_area


@dataclass(frozen=True)
class ContourResult:
    """One published contour and the part of it positivity allows.

    Attributes
    ----------
    table, label
        The table and the contour's own label (its qualifiers, e.g. ``CL: 95%``).
    coefficients
        (x, y).
    area
        The published contour's area (in the coefficients' units squared).
    fraction_inside
        The fraction of that area that positivity cannot exclude; ``fraction_sure`` the
        fraction it certainly allows.
    points, truncated
        The published polygon and the clipped one (lists of [x, y]).
    method
        How the allowed part of the plane was decided.
    """

    table: str
    label: str
    coefficients: tuple[str, str]
    area: float
    fraction_inside: float
    fraction_sure: float
    points: list[list[float]]
    truncated: list[list[float]]
    method: str
    cut: PlaneCut | None = field(default=None, repr=False)

    def to_dict(self) -> dict[str, Any]:
        return {"table": self.table, "label": self.label,
                "coefficients": list(self.coefficients), "area": self.area,
                "fraction_inside": self.fraction_inside, "fraction_sure": self.fraction_sure,
                "points": self.points, "truncated": self.truncated, "method": self.method,
                "allowed_part": None if self.cut is None else self.cut.to_dict()}


def contour_fraction(table: str, label: str, names: tuple[str, str], poly: np.ndarray,
                     cut: PlaneCut) -> ContourResult:
    """Clip one contour by the allowed part of its plane."""
    poly = np.asarray(poly, dtype=float)
    if len(poly) > 1 and np.allclose(poly[0], poly[-1]):
        poly = poly[:-1]
    area = polygon_area(poly)
    clipped = clip_polygon(poly, cut.allowed)
    sure = clip_polygon(poly, cut.sure)
    frac = polygon_area(clipped) / area if area > 0 else 0.0
    frac_sure = polygon_area(sure) / area if area > 0 else 0.0
    return ContourResult(table, label, names, area, float(frac), float(frac_sure),
                         poly.tolist(), clipped.tolist(), cut.method, cut)
