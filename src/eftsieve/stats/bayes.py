"""Bayes factor of the positivity-truncated prior against the untruncated one.

For a truncation it equals P_posterior(inside) / P_prior(inside).  The prior probability
comes from the fit card's stated prior (independent uniform or normal factors), by Monte
Carlo (:func:`prior_probability`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.theories.base import CoordinateMap


@dataclass(frozen=True)
class BayesFactor:
    """Bayes factor of the truncated prior against the untruncated one.

    Attributes
    ----------
    value, error
        P_post(inside)/P_prior(inside) and its Monte-Carlo error (None when unavailable).
    p_prior, p_prior_err
        The prior probability inside and its error.
    reason
        Why it is unavailable, or how it was computed.
    """

    value: float | None
    error: float | None
    p_prior: float | None
    p_prior_err: float | None
    reason: str

    def to_dict(self) -> dict[str, Any]:
        return {"bayes_factor": self.value, "bayes_factor_err": self.error,
                "p_prior_inside": self.p_prior, "p_prior_inside_err": self.p_prior_err,
                "bayes_factor_note": self.reason}


def bayes_factor(p_post: float, p_post_err: float, p_prior: float | None,
                 p_prior_err: float | None, reason: str) -> BayesFactor:
    """B = P_post(inside) / P_prior(inside), with first-order error propagation."""
    if p_prior is None or p_prior_err is None:
        return BayesFactor(None, None, None, None, reason)
    if p_prior <= 0:
        return BayesFactor(None, None, p_prior, p_prior_err,
                           "the prior puts no probability inside the region")
    val = p_post / p_prior
    rel = math.hypot(p_post_err / p_post if p_post > 0 else 0.0, p_prior_err / p_prior)
    return BayesFactor(val, val * rel, p_prior, p_prior_err, reason)

def draw_prior(fit: Fit, cmap: CoordinateMap, n: int,
               rng: np.random.Generator) -> tuple[np.ndarray | None, str]:
    """n draws of the fit card's prior (independent factors) for the parameters that feed
    the region, or None with the reason why that is not possible."""
    if fit.prior is None:
        return None, "the fit card states no prior"
    used = (range(len(fit.names)) if cmap.jacobian is None
            else np.nonzero(np.abs(cmap.jacobian).sum(axis=0) > 0)[0])
    missing = [fit.names[i] for i in used if fit.names[i] not in fit.prior.kinds]
    if missing:
        return None, f"no prior stated for {', '.join(missing)}"
    x = np.zeros((n, len(fit.names)))
    for i in used:
        name = fit.names[i]
        lo, hi = fit.prior.params[name]
        x[:, i] = (rng.uniform(lo, hi, n) if fit.prior.kinds[name] == "uniform"
                   else rng.normal(lo, hi, n))
    return x, f"prior Monte Carlo, {n} draws"


def prior_probability(fit: Fit, region: Region, cmap: CoordinateMap,
                      seed: int, n: int = 1_000_000) -> tuple[float | None, float | None, str]:
    """P_prior(inside) for the fit card's stated prior."""
    x, why = draw_prior(fit, cmap, n, np.random.default_rng(seed + 3))
    if x is None:
        return None, None, why
    p = float(region.contains(cmap(x)).mean())
    return p, math.sqrt(max(p * (1 - p), 1.0 / n) / n), why
