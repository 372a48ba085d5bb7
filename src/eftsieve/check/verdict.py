"""The fit verdict: one word of our own and the sentence that says why.

A check ends in one of ``consistent``, ``tension``, ``excluded`` or (with a
theory-uncertainty model on) ``uncertain``.  The thresholds are named in
:mod:`eftsieve.tolerances` and documented in docs/verdict.md:

* the tension test's one-sided Gaussian-equivalent significance Z (chi-bar-squared
  p-value of the minimal Mahalanobis distance, :mod:`eftsieve.stats.tension`), and
* p_inside, the probability of the fit inside the region, compared with the one-sided
  Gaussian tail Phi(-Z) at the same thresholds;

``tension`` from Z >= :data:`~eftsieve.tolerances.VERDICT_TENSION_SIGMA` (or p_inside <
Phi(-2)), ``excluded`` from Z >= :data:`~eftsieve.tolerances.VERDICT_EXCLUDED_SIGMA` (or
p_inside < Phi(-3)); the worse of the two decides.  ``uncertain``: the verdict with hard
facets and the verdict under the theory-uncertainty model differ.

:func:`facet_violations` gives the per-facet table: the signed distance of the mean to
each facet in standard deviations of the fit along its normal (positive inside), and
the probability that the facet is violated (exact, Phi(-d), for a Gaussian through an
affine map; else the weighted fraction of a uniform subsample of the rows).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.check.verdicts import INSIDE, OUTSIDE
from eftsieve.numbers import fmt_num, fmt_pct, fmt_prob, fmt_sigma
from eftsieve.region.model import Region
from eftsieve.stats.tension import Tension
from eftsieve.tolerances import (
    MAHALANOBIS_ZERO,
    VERDICT_EXCLUDED_SIGMA,
    VERDICT_TENSION_SIGMA,
)

#: the fit verdicts, from best to worst
LABELS = ("consistent", "uncertain", "tension", "excluded")


@dataclass(frozen=True)
class FacetViolation:
    """How one facet fares against the fit.

    Attributes
    ----------
    index
        The facet's index in the region.
    label, family, channel, inequality
        Its certificate label (family / channel at the kinematic point), its bound family,
        its channel and its inequality.
    distance_sigma
        (a.mean - b) / sqrt(a cov a^T): the signed distance of the fit's mean to the facet
        in standard deviations along its normal; positive inside, +-inf when the fit has
        no spread along the normal.
    p_violate, p_violate_err
        The probability (or weighted row fraction) that violates the facet, and its error.
    method
        ``exact`` (Gaussian through an affine map) or ``rows`` (subsample fraction).
    numerical
        Whether the facet is a solver's certificate (it carries one in its ``extra``), so
        that its channel describes the certificate, not a scattering channel: sentences
        then name the facet by its inequality.
    """

    index: int
    label: str
    family: str
    channel: str
    inequality: str
    distance_sigma: float
    p_violate: float
    p_violate_err: float
    method: str
    numerical: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "label": self.label, "family": self.family,
                "channel": self.channel, "inequality": self.inequality,
                "distance_sigma": _json_float(self.distance_sigma),
                "p_violate": self.p_violate, "p_violate_err": self.p_violate_err,
                "method": self.method}


@dataclass(frozen=True)
class FitVerdict:
    """The fit verdict with its reason.

    Attributes
    ----------
    label
        ``consistent``, ``tension``, ``excluded`` or ``uncertain``.
    reason
        One sentence that says why, with the figures as printed everywhere else.
    p_inside_text
        p_inside as written for people: a value with its error, or a bound
        (``> 1 - 1.5e-05 at 95%``) when every row is inside.
    tension_text
        The tension as written for people (never solver noise; infinite ones say why).
    mean_inside
        Whether the fit's mean is inside the region.
    facets
        Every facet, most violated first.
    thresholds
        The thresholds the label was decided with.
    p_inside_upper
        The upper end of p_inside that the thresholds are applied to
        (:func:`p_inside_upper`); None where it was not computed.
    """

    label: str
    reason: str
    p_inside_text: str
    tension_text: str
    mean_inside: bool
    facets: tuple[FacetViolation, ...] = ()
    thresholds: dict[str, float] = field(default_factory=dict)
    p_inside_upper: float | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"label": self.label, "reason": self.reason,
                "p_inside_text": self.p_inside_text, "tension_text": self.tension_text,
                "mean_inside": self.mean_inside, "thresholds": dict(self.thresholds),
                "p_inside_upper": self.p_inside_upper}


_ERFC = np.frompyfunc(math.erfc, 1, 1)


def normal_sf(x: Any) -> np.ndarray:
    """The standard normal tail P(Z > x) = erfc(x / sqrt 2) / 2 (scipy.stats.norm.sf), for
    the few values per fit that need it, without the import cost of scipy.stats or
    scipy.special (about 0.4 s each, a large part of a small check; issue 18)."""
    return np.asarray(_ERFC(np.asarray(x, dtype=float) / math.sqrt(2.0)), dtype=float) / 2.0


def thresholds() -> dict[str, float]:
    """The documented thresholds (significances and the matching p_inside tails)."""
    return {"tension_sigma": VERDICT_TENSION_SIGMA, "excluded_sigma": VERDICT_EXCLUDED_SIGMA,
            "tension_p_inside": float(normal_sf(VERDICT_TENSION_SIGMA)),
            "excluded_p_inside": float(normal_sf(VERDICT_EXCLUDED_SIGMA))}


def classify_fit(sigma: float, p_inside: float) -> str:
    """``consistent``, ``tension`` or ``excluded`` from a tension significance and p_inside
    (pass the upper end of p_inside, :func:`p_inside_upper`, so that a label rests on more
    than the sampling error)."""
    th = thresholds()
    if sigma >= VERDICT_EXCLUDED_SIGMA or p_inside < th["excluded_p_inside"]:
        return "excluded"
    if sigma >= VERDICT_TENSION_SIGMA or p_inside < th["tension_p_inside"]:
        return "tension"
    return "consistent"


#: p_inside's error bars that the thresholds allow for: the label compares p + 2 err (a
#: one-sided 97.7% upper end for a Gaussian error; common practice) with them
P_INSIDE_ERR_SIGMA = 2.0


def p_inside_upper(p: float, err: float, ess: float) -> float:
    """The upper end of p_inside that the verdict's thresholds are applied to:
    ``p + 2 err``, and for p = 0 at least the rule-of-three bound 3/n at 95% that
    :func:`p_inside_text` prints (Hanley & Lippman-Hand, JAMA 249 (1983) 1743).

    A p_inside whose point estimate is below a threshold but whose error bar reaches
    past it (a sample fraction from few rows, or a Gaussian probability corrected by
    sampled shell solves) does not decide the label on its own."""
    up = p + P_INSIDE_ERR_SIGMA * max(err, 0.0) if math.isfinite(err) else 1.0
    if p <= 0.0:
        up = max(up, 3.0 / max(ess, 1.0))
    return float(min(max(up, p), 1.0))


def _json_float(x: float) -> float | str:
    return x if math.isfinite(x) else ("inf" if x > 0 else "-inf")


def facet_violations(region: Region, mean: np.ndarray, cov: np.ndarray, exact: bool,
                     rows: np.ndarray | None = None, weights: np.ndarray | None = None
                     ) -> tuple[FacetViolation, ...]:
    """The per-facet table, most violated first (ties: the nearest facet first).

    ``exact``: the fit is a Gaussian in region coordinates (mean, cov), so P(violate) =
    Phi(-d); else the weighted fraction of ``rows`` (region coordinates) outside each
    facet, with the binomial error of Kish's effective size.
    """
    a, b = region.arrays()
    spread = np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", a, cov, a), 0.0))
    gap = a @ mean - b
    with np.errstate(divide="ignore", invalid="ignore"):
        dist = np.where(spread > 0, gap / np.where(spread > 0, spread, 1.0),
                        np.where(gap >= 0, np.inf, -np.inf))
    if exact or rows is None or len(rows) == 0:
        p = normal_sf(dist)
        err = np.zeros_like(p)
        method = "exact"
    else:
        w = np.ones(len(rows)) if weights is None else np.asarray(weights, dtype=float)
        out = (region.margins(rows) < 0).astype(float)
        p = (w @ out) / w.sum()
        ess = w.sum() ** 2 / (w @ w)
        err = np.sqrt(p * (1 - p) / ess)
        method = "rows"
    facets = tuple(FacetViolation(i, f.label(), f.family, f.channel,
                                  f.inequality(region.coordinates),
                                  float(dist[i]), float(p[i]), float(err[i]), method,
                                  "certificate" in f.extra)
                   for i, f in enumerate(region.facets))
    return tuple(sorted(facets, key=lambda v: (-v.p_violate, v.distance_sigma)))


#: a numerical facet's inequality longer than this is named by its index in sentences
SENTENCE_INEQUALITY = 80


def short_name(v: FacetViolation) -> str:
    """``the pi0 pi0 facet (second-derivative)``; a solver's facet by its inequality,
    ``the extremal facet fT7 (+ 15 terms below 1e-06 of the largest) >= 0`` (or its index
    when the inequality is long)."""
    if v.numerical:
        what = v.inequality if len(v.inequality) <= SENTENCE_INEQUALITY else str(v.index)
        return f"the {v.family} facet {what}"
    return f"the {v.channel} facet ({v.family})" if v.channel else f"facet {v.index} ({v.family})"


def p_inside_text(p: float, err: float, ess: float) -> str:
    """p_inside for people; exactly 0 or 1 become bounds by the rule of three at 95%
    (Hanley & Lippman-Hand, JAMA 249 (1983) 1743: 1 - p < 3/n when none of n fail)."""
    if p >= 1.0:
        return f"> 1 - {fmt_num(3.0 / max(ess, 1.0), 2)} at 95%"
    if p <= 0.0:
        return f"< {fmt_num(3.0 / max(ess, 1.0), 2)} at 95%"
    if err <= 1e-6 * min(p, 1.0 - p):  # an error below the digits shown is not printed
        return fmt_prob(p)
    return f"{fmt_prob(p)} +- {fmt_num(err, 2)}"


def p_inside_clause(ptext: str) -> str:
    """``p_inside = 0.447`` or, for a bound, ``p_inside > 1 - 0.00015 at 95%``."""
    return f"p_inside {ptext}" if ptext[:1] in "<>" else f"p_inside = {ptext}"


def tension_text(ten: Tension, facets: tuple[FacetViolation, ...]) -> str:
    """The tension for people: none (with the distance inside), finite, or infinite and why."""
    if ten.mahalanobis_min <= MAHALANOBIS_ZERO:
        return "none (p = 1; the mean is inside)"

    if math.isinf(ten.sigma):
        if any(math.isinf(v.distance_sigma) for v in facets):
            return ("infinite: the fit has no spread along a violated facet's normal "
                    "(degenerate covariance), so its mean is outside with certainty")
        return (f"infinite: the p-value underflows (Mahalanobis distance "
                f"{fmt_num(ten.mahalanobis_min)}, p < 1e-300)")
    if ten.sigma <= 0.0:
        return (f"not significant (p = {fmt_prob(ten.p_value)}; the mean is "
                f"{fmt_num(ten.mahalanobis_min, 2)} sigma (Mahalanobis) from the region)")
    return f"{fmt_sigma(ten.sigma)} (p = {fmt_prob(ten.p_value)})"


def mean_in_shell(region: Region, mean: np.ndarray) -> tuple[int, str] | None:
    """For a cone region with an exact solver (:mod:`eftsieve.check.shell`) whose outer
    facets hold the mean while its inner facets do not: the mean's exact verdict and its
    status line (one solve); None otherwise.  The facet distances and the tension are
    computed against the outer facets, so without this a mean outside the cone but
    inside every outer facet would be called inside."""
    from eftsieve.check.shell import has_shell_solver, shell_solver

    x = np.atleast_2d(np.asarray(mean, dtype=float))
    if not has_shell_solver(region) or not np.isfinite(x).all() or not region.facets:
        return None
    if not np.all(region.margins(x) >= 0):
        return None
    if region.inner_facets and np.all(region.margins(x, inner=True) > 0):
        return None
    solver = shell_solver(region)
    if solver is None:
        return None
    codes, statuses, _ = solver.decide(x, np.zeros(1, dtype=np.int64))
    return int(codes[0]), str(statuses[0])


def _reason(label: str, mean_inside: bool, facets: tuple[FacetViolation, ...],
            p_inside: float, ptext: str, exact_mean: tuple[int, str] | None = None) -> str:
    if not facets:
        return "the region has no facets"
    if exact_mean is not None and exact_mean[0] != INSIDE:
        what = "outside the cone" if exact_mean[0] == OUTSIDE else \
            "on the cone's boundary to the solver's accuracy"
        return (f"the mean lies inside every outer facet but {what} (exact solve: "
                f"{exact_mean[1]}); {p_inside_clause(ptext)}")
    if mean_inside:
        near = min(facets, key=lambda v: v.distance_sigma)
        return (f"the mean lies {fmt_sigma(near.distance_sigma)} inside the nearest facet, "
                f"{short_name(near)}; {p_inside_clause(ptext)}")
    worst = min(facets, key=lambda v: v.distance_sigma)
    n_out = sum(v.distance_sigma < 0 for v in facets)
    more = f" and {n_out - 1} other facet(s)" if n_out > 1 else ""
    return (f"the mean lies {fmt_sigma(worst.distance_sigma)} outside {short_name(worst)}"
            f"{more}; {fmt_pct(worst.p_violate)} of the probability violates it, "
            f"{p_inside_clause(ptext)}")


def more_solves(shell: Any) -> str:
    """What more shell solves would do: decide more points, unless most of the solves run
    so far ended on the cone's boundary within the solver's accuracy (a fit whose
    coordinates lie on a face of the cone, where no solve proves a point inside or out)."""
    from eftsieve.bounds.cone_region import BOUNDARY_REASON, mostly_undecided

    on_edge = sum(n for r, n in shell.reasons if r == BOUNDARY_REASON)
    if mostly_undecided(on_edge, shell.n_solves):
        return (f"{on_edge} of the {shell.n_solves} exact shell solves ended on the cone's "
                "boundary within the solver's accuracy, which more solves do not settle: the "
                "fit's coordinates may lie on a face of the cone (docs/verdict.md)")
    return f"raise --shell-solves (now {shell.budget} per partition) to decide more"


def fit_verdict(region: Region, mean: np.ndarray, cov: np.ndarray, ten: Tension,
                p_inside: float, p_inside_err: float, ess: float, *, exact: bool,
                rows: np.ndarray | None = None, weights: np.ndarray | None = None,
                model: dict[str, Any] | None = None, shell: Any = None) -> FitVerdict:
    """The fit verdict of a check (``model``: the statistics under a theory-uncertainty
    model, with its ``tension_sigma`` and ``p_inside``, or None; ``shell``: the check's
    :class:`eftsieve.check.shell.ShellSummary`, whose points left marginal p_inside counts
    as inside: when the verdict with them outside differs, the label is ``uncertain``)."""
    facets = facet_violations(region, mean, cov, exact, rows, weights)
    mean_inside = bool(np.all(region.margins(np.atleast_2d(mean)) >= 0))
    exact_mean = mean_in_shell(region, mean) if mean_inside else None
    ptext = p_inside_text(p_inside, p_inside_err, ess)
    upper = p_inside_upper(p_inside, p_inside_err, ess)
    label = classify_fit(ten.sigma, upper)
    reason = _reason(label, mean_inside, facets, p_inside, ptext, exact_mean)
    by_point = classify_fit(ten.sigma, p_inside)
    if by_point != label:
        th = thresholds()["excluded_p_inside" if by_point == "excluded" else "tension_p_inside"]
        reason += (f"; p_inside is below the {by_point} threshold {fmt_prob(th)} but its "
                   f"upper end p + 2 err = {fmt_prob(upper)} is not, so the label is {label}")
    ttext = tension_text(ten, facets)
    if exact_mean is not None and exact_mean[0] != INSIDE:
        mean_inside = False
        if ten.mahalanobis_min <= MAHALANOBIS_ZERO:
            ttext = ("not computed against the cone itself: the mean is inside every outer "
                     "facet (distance 0 to them, a lower bound) but not inside the cone")
    undecided = getattr(shell, "marginal_fraction", 0.0) or 0.0
    if undecided > 0 and label != "uncertain":
        low = max(p_inside - undecided, 0.0)
        worst = classify_fit(ten.sigma, p_inside_upper(low, p_inside_err, ess))
        if worst != label:
            reason = (f"{label} if the {shell.n_marginal} shell points left undecided are "
                      f"inside the cone, {worst} if they are outside (p_inside between "
                      f"{fmt_prob(low)} and {fmt_prob(p_inside)}); {more_solves(shell)}; "
                      f"{reason}")
            label = "uncertain"
    if model is not None and label != "uncertain":
        soft = classify_fit(float(model["tension_sigma"]), p_inside_upper(
            float(model["p_inside"]), float(model.get("p_inside_err") or 0.0), ess))
        if soft != label:
            reason = (f"{label} with hard facets but {soft} within the theory uncertainty "
                      f"of the bounds; {reason}")
            label = "uncertain"
        else:
            reason += "; the same under the theory-uncertainty model"
    return FitVerdict(label, reason, ptext, ttext, mean_inside, facets, thresholds(), upper)
