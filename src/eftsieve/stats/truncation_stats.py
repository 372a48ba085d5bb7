"""Statistics of a check under a theory-uncertainty model, beside the hard-edge ones.

- p_inside becomes E[P(satisfies every facet)] over the fit;
- the tension is per facet: with the facet's offset uncertain by sigma_j, the projection
  n_j . mean - b_j of the fit's mean has variance n_j C n_j + sigma_j^2 under the null,
  so p_j = Phi((n_j . mean - b_j)/sqrt(n_j C n_j + sigma_j^2)) (averaged over the posterior
  of cbar for ``power-counting``); the reported p-value is the Bonferroni bound
  min(1, m min_j p_j).  With sigma_j = 0 and one facet this is the hard chi-bar-squared
  p-value (1/2 chi^2_0 + 1/2 chi^2_1);
- the Bayes factor uses E[P] under the posterior and under the prior.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from scipy import special

from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.stats.accumulate import Accumulator
from eftsieve.stats.bayes import bayes_factor, draw_prior
from eftsieve.stats.truncation import FacetUncertainty, prob_satisfies
from eftsieve.theories.base import CoordinateMap


def facet_tension(mean: np.ndarray, cov: np.ndarray, region: Region,
                  fu: FacetUncertainty) -> tuple[float, float, int]:
    """Bonferroni-combined single-facet p-value, its one-sided sigma, and the facet."""
    a = np.array([f.normal for f in region.facets], dtype=float)
    b = np.array([f.offset for f in region.facets], dtype=float)
    gap = a @ mean - b
    var = np.einsum("ij,jk,ik->i", a, cov, a)
    scales = (fu.posterior.cbar_quantiles() if fu.posterior is not None else np.ones(1))
    p = np.zeros(len(b))
    for c in scales:
        p += special.ndtr(gap / np.sqrt(var + (c * fu.sigma) ** 2))  # norm.cdf
    p /= len(scales)
    j = int(np.argmin(p))
    p_b = min(1.0, len(b) * float(p[j]))
    sigma = float(-special.ndtri(p_b)) if p_b < 0.5 else 0.0
    return p_b, sigma, j


def prior_soft_probability(fit: Fit, region: Region, cmap: CoordinateMap,
                           fu: FacetUncertainty, seed: int,
                           n: int = 200_000) -> tuple[float | None, float | None, str]:
    """E_prior[P(satisfies)] by Monte Carlo over the fit card's prior."""
    x, why = draw_prior(fit, cmap, n, np.random.default_rng(seed + 5))
    if x is None:
        return None, None, why
    p = prob_satisfies(cmap(x), region, fu)
    return float(p.mean()), float(p.std() / math.sqrt(n)), why


def model_statistics(fit: Fit, region: Region, cmap: CoordinateMap, fu: FacetUncertainty,
                     acc: Accumulator, hard: dict[str, Any], seed: int) -> dict[str, Any]:
    """The model's p_inside, tension and Bayes factor, with the hard-edge values beside."""
    p, err = acc.p_soft()
    mean, cov = np.asarray(hard["mean_region"]), np.asarray(hard["cov_region"])
    tp, tsig, j = facet_tension(mean, cov, region, fu)
    pp, pe, why = prior_soft_probability(fit, region, cmap, fu, seed)
    bf = bayes_factor(p, err, pp, pe, why)
    return {"model": fu.to_dict(), "p_inside": p, "p_inside_err": err,
            "n_uncertain": int(acc.counts[3]), "tension_p": tp, "tension_sigma": tsig,
            "tension_facet": j, "bayes_factor": bf.value, "bayes_factor_err": bf.error,
            "bayes_factor_note": bf.reason,
            "thresholds": [fu.settings.p_low, fu.settings.p_high],
            "correlation": ("power-counting: one coefficient scale cbar shared by all facets "
                            "(marginalised), coefficients otherwise independent"
                            if fu.posterior is not None else
                            "fixed: independent Gaussian offsets"),
            "hard": {"p_inside": hard["p_inside"], "tension_p": hard["tension_p"],
                     "tension_sigma": hard["tension_sigma"],
                     "bayes_factor": hard["bayes_factor"]}}
