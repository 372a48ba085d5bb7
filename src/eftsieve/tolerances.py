"""Numerical tolerances, defined once and by name.

Every comparison against a bound or a matrix property uses one of these.  They are
recorded in region files and reports so that a verdict can be reproduced.
"""

from __future__ import annotations

#: Relative asymmetry allowed in a covariance, |C - C^T| / max|C|.
SYMMETRY_TOL = 1e-10
#: Smallest eigenvalue allowed in a covariance, relative to the largest (negative side).
PSD_TOL = 1e-10
#: Default marginal band: a point within this distance of a facet (in the region's
#: coordinates, Euclidean distance along the facet normal) is ``marginal``.
MARGINAL_BAND = 1e-3
#: The default band for coordinates of order 1e-3 (l_i^r, L_i^r): the same relative width.
SMALL_COORDINATE_BAND = 1e-6
#: Feasibility tolerance of LP/QP solves, relative.
FEASIBILITY_TOL = 1e-8
#: Relative tolerance used when reducing facets to the irredundant set.
REDUNDANCY_TOL = 1e-9
#: Effective-sample-size floor below which `impose --mode reweight` refuses.
MIN_ESS = 400.0
#: Tension QP: largest relative violation of a facet by the QP's solution.
QP_FEASIBILITY_TOL = 1e-6
#: Tension QP: largest relative KKT stationarity residual of a verified solution.
KKT_TOL = 1e-5
#: Tension QP: most negative multiplier accepted as zero (dual feasibility).
DUAL_SIGN_TOL = 1e-7
#: Relative slack below which a facet counts as active at a point (tension cones).
ACTIVE_TOL = 1e-7
#: Relative slack below which a vertex candidate lies on a facet (tangent cones).
VERTEX_TOL = 1e-9
#: Positivity cones: a dual matrix Z is accepted as a certificate when its smallest
#: eigenvalue is above -CONE_CERT_TOL times its largest (the deficit is then absorbed
#: exactly into the facet, see eftsieve.bounds.cones.facet_from_dual).
CONE_CERT_TOL = 1e-6
#: Positivity cones: a membership solve whose verified margin (relative) is within this
#: band of zero is not a verdict (``marginal``, boundary within the solver's accuracy).
CONE_BOUNDARY_TOL = 1e-7

# --- the fit verdict (docs/verdict.md) --------------------------------------------------
#: A fit is in ``tension`` from this one-sided Gaussian-equivalent significance on: the
#: tension test's sigma, or p_inside below the matching tail probability Phi(-2) = 0.0228
#: (two sigma, common practice).
VERDICT_TENSION_SIGMA = 2.0
#: A fit is ``excluded`` from this significance on (three sigma, common practice):
#: tension sigma >= 3, or p_inside below Phi(-3) = 1.35e-3.
VERDICT_EXCLUDED_SIGMA = 3.0
#: A Mahalanobis distance below this (relative to 1) is the solver's zero: the mean is
#: inside and no distance is printed.
MAHALANOBIS_ZERO = 1e-6
#: Warn on the console when p_inside before a truncation is below this: the truncated
#: result is then driven by the bounds, not by the data.
TINY_P_INSIDE = 1e-6

# --- published limits against a region (eftsieve.limits) -------------------------------
#: Relative width at which an endpoint of a line's (or a slice's) allowed part, settled by
#: bisection with the exact cone membership, counts as settled.
LIMITS_SETTLE_RTOL = 1e-7
#: An outer facet whose unit normal has a component below this along a line (or a plane)
#: does not cut it (dropping an outer facet only enlarges the outer set; cone facets carry
#: solver noise of about 1e-8 in components that are zero).  Inner facets are all kept.
LIMITS_PARALLEL_TOL = 1e-6
#: A point whose smallest outer-facet margin, relative to its norm, is below this and that
#: the exact test leaves undecided lies on the region's boundary (within solver accuracy).
LIMITS_BOUNDARY_RTOL = 1e-6
