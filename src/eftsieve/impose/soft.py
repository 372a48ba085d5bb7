"""Soft truncation: the prior times P(satisfies the bounds) instead of the hard indicator.

Used by ``impose`` with a theory-uncertainty model (:mod:`eftsieve.stats.truncation`):

``reweight``
    Each sample's weight is multiplied by P(x); nothing is dropped.
``exact``
    I.i.d. samples of N(mean, cov) P(x) by accept-reject from N(mean, cov) with
    acceptance probability P(x) <= 1 (exact; its efficiency is E[P]).  Refused when the
    acceptance would fall below 1e-4.
``refit``
    log P(x) is added to the log prior (:func:`log_soft_indicator`).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from eftsieve.errors import InputError, SamplingError
from eftsieve.fit.model import Fit
from eftsieve.impose.core import ImposeResult, ImposeSettings, with_moments
from eftsieve.region.model import Region
from eftsieve.stats.ess import kish_ess
from eftsieve.stats.gaussian import draw, psd_factor
from eftsieve.stats.truncation import FacetUncertainty, prob_satisfies
from eftsieve.theories.base import CoordinateMap

MIN_ACCEPTANCE = 1e-4


def soft_reweight(fit: Fit, region: Region, cmap: CoordinateMap, settings: ImposeSettings,
                  fu: FacetUncertainty) -> ImposeResult:
    """Multiply the posterior weights by P(x); every row is kept and accounted for."""
    if fit.samples is None:
        raise InputError(fit.source, "samples", "mode 'reweight' needs posterior samples",
                         "use --mode exact for a Gaussian summary")
    chunk = fit.samples.read_all()
    p = prob_satisfies(cmap(chunk.values), region, fu)
    w0 = np.ones(len(p)) if chunk.weights is None else chunk.weights
    w = w0 * p
    if w.sum() <= 0:
        raise SamplingError("every sample has zero probability of satisfying the bounds",
                            "check the model's sigmas or use --mode refit")
    ess = kish_ess(w, len(w))
    if ess < settings.min_ess:
        raise SamplingError(f"only {ess:.0f} effective samples remain after soft truncation",
                            "use --mode refit with a likelihood")
    summary = {"mode": "reweight", "truncation": "soft", "n_read": int(len(w)),
               "n_samples": int(len(w)), "n_dropped": 0, "ess": ess,
               "ess_before": kish_ess(chunk.weights, len(w)), "acceptance": None, "tau": None,
               "p_inside_before": float((w0 * p).sum() / w0.sum())}
    res = ImposeResult("reweight", fit.names, chunk.values, w, chunk.values, chunk.weights,
                       summary)
    return with_moments(res, chunk.rows)


def soft_exact(fit: Fit, region: Region, cmap: CoordinateMap, settings: ImposeSettings,
               fu: FacetUncertainty) -> ImposeResult:
    """I.i.d. draws of N(mean, cov) P(x) by accept-reject (acceptance P(x))."""
    if fit.mean is None or fit.cov is None:
        raise InputError(fit.source, "mean", "mode 'exact' needs a Gaussian summary", "")
    rng = np.random.default_rng(settings.seed)
    factor = psd_factor(fit.cov)
    kept: list[np.ndarray] = []
    n_prop, n_acc, batch = 0, 0, max(4 * settings.n_samples, 10_000)
    while n_acc < settings.n_samples:
        x = draw(fit.mean, factor, batch, rng)
        acc = rng.random(batch) < prob_satisfies(cmap(x), region, fu)
        kept.append(x[acc])
        n_prop += batch
        n_acc += int(acc.sum())
        if n_prop >= 200_000 and n_acc / n_prop < MIN_ACCEPTANCE:
            raise SamplingError(f"soft-truncation acceptance {n_acc / n_prop:.2g} is below "
                                f"{MIN_ACCEPTANCE:g}", "use hard truncation or --mode refit")
    samples = np.concatenate(kept)[: settings.n_samples]
    rate = n_acc / n_prop
    before = draw(fit.mean, factor, settings.n_samples, rng)
    summary = {"mode": "exact", "truncation": "soft", "n_samples": int(len(samples)),
               "ess": float(len(samples)), "acceptance": rate, "n_proposed": n_prop,
               "tau": None, "p_inside_before": rate,
               "p_inside_before_err": float(np.sqrt(rate * (1 - rate) / n_prop)),
               "normalisation_method": "accept-reject acceptance (E[P] under the Gaussian)"}
    res = ImposeResult("exact", fit.names, samples, None, before, None, summary)
    return with_moments(res, np.arange(len(samples)))


def log_soft_indicator(region: Region, cmap: CoordinateMap,
                       fu: FacetUncertainty) -> Callable[[np.ndarray], np.ndarray]:
    """x -> log P(x satisfies every facet), for the refit's log prior."""
    def logp(x: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore"):
            return np.log(prob_satisfies(cmap(x), region, fu))
    return logp
