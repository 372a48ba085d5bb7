"""Positivity imposed as a prior truncation: the ``reweight`` and ``exact`` modes.

``reweight``
    For posterior samples: keep the samples inside the region with their weights.  The
    truncated posterior is the posterior times the indicator of the region, so this is
    exact; the effective sample size (Kish) of what is kept must exceed a stated floor,
    otherwise :class:`~eftsieve.errors.SamplingError` points to ``refit``.
``exact``
    For a Gaussian summary: i.i.d. draws from the Gaussian truncated to the polyhedral
    region, by minimax exponential tilting (Botev, J. R. Stat. Soc. B 79 (2017) 125,
    arXiv:1603.04166; see :mod:`eftsieve.stats.tmvn`), with the normalising probability
    and its error.

``refit`` lives in :mod:`eftsieve.impose.refit`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from eftsieve.errors import InputError, SamplingError
from eftsieve.fit.model import Fit
from eftsieve.region.model import Region
from eftsieve.stats.ess import kish_ess
from eftsieve.stats.gaussian import draw, psd_factor
from eftsieve.stats.intervals import PosteriorSummary, posterior_summary
from eftsieve.theories.base import CoordinateMap
from eftsieve.tolerances import MIN_ESS, TINY_P_INSIDE

MODES = ("reweight", "exact", "refit")


@dataclass(frozen=True)
class ImposeSettings:
    """Settings of an impose run.

    Attributes
    ----------
    mode
        ``reweight``, ``exact`` or ``refit`` (None: chosen from the fit).
    n_samples
        Samples to draw (exact) or steps per walker (refit).
    walkers
        emcee walkers (refit).
    seed
        Seed of every random number used.
    min_ess
        Effective-sample-size floor of ``reweight``.
    progress
        Show a progress bar (refit).
    sampler
        Refit sampler: ``auto`` (importance sampling from a truncated Laplace proposal,
        :mod:`eftsieve.impose.importance`, and the MCMC when its weights are refused),
        ``importance`` (no fallback) or ``mcmc`` (emcee only).
    """

    mode: str | None = None
    n_samples: int = 20_000
    walkers: int = 32
    seed: int = 0
    min_ess: float = MIN_ESS
    progress: bool = True
    sampler: str = "auto"

    def to_dict(self) -> dict[str, Any]:
        return {"mode": self.mode, "n_samples": self.n_samples, "walkers": self.walkers,
                "seed": self.seed, "min_ess": self.min_ess, "sampler": self.sampler}


@dataclass(frozen=True)
class ImposeResult:
    """The re-sampled fit.

    Attributes
    ----------
    mode
        The mode used.
    names
        Parameter names (the fit's, in its own conventions).
    samples, weights
        The new samples (n, p) and weights (None if unweighted).
    before_samples, before_weights
        The fit's own samples (or draws of its Gaussian), for comparisons.
    figures
        Mode-specific figures: ``n_samples``, ``ess``, ``acceptance``, ``tau``,
        ``p_inside_before``, moments before and after, ... (summary.json)
    rows
        For ``reweight``, the original row index of each kept sample; else a draw index.
    """

    mode: str
    names: tuple[str, ...]
    samples: np.ndarray
    weights: np.ndarray | None
    before_samples: np.ndarray
    before_weights: np.ndarray | None
    figures: dict[str, Any] = field(default_factory=dict)
    rows: np.ndarray | None = None

    def to_dict(self) -> dict[str, Any]:
        return {**self.figures, "posterior": self.posterior.to_dict()}

    @cached_property
    def posterior(self) -> PosteriorSummary:
        """Per parameter: truncated mean, sd, 68%/95% intervals; and the covariance."""
        return posterior_summary(self.samples, self.names, self.weights)

    @property
    def converged(self) -> bool:
        """False only for a refit whose chain is not converged by the stated rule."""
        return bool(self.figures.get("converged", True))

    @property
    def driven_by_bounds(self) -> bool:
        """p_inside before the truncation is below :data:`~eftsieve.tolerances.TINY_P_INSIDE`:
        the truncated result is then set by the bounds, not by the data."""
        p = self.figures.get("p_inside_before")
        return p is not None and float(p) < TINY_P_INSIDE

    def summary(self) -> str:
        """A few lines: the mode, the sample count and each parameter before -> after."""
        f = self.figures
        lines = [f"imposed positivity ({self.mode}): {f.get('n_samples', len(self.samples))} "
                 f"samples, ESS {f.get('ess', float('nan')):.4g}"]
        before, after = f.get("before", {}), f.get("after", {})
        for n in self.names:
            if n in before and n in after:
                b, a = before[n], after[n]
                lines.append(f"  {n}: {b['mean']:.4g} +- {b['std']:.3g}  ->  "
                             f"{a['mean']:.4g} +- {a['std']:.3g}")
        return "\n".join(lines)

    def __repr__(self) -> str:
        return (f"ImposeResult(mode={self.mode!r}, n={len(self.samples)}, "
                f"names={list(self.names)!r})")


def choose_mode(fit: Fit, requested: str | None, has_likelihood: bool) -> str:
    """The mode: as requested, else ``exact`` for a Gaussian and ``reweight`` for samples."""
    if requested is not None:
        if requested not in MODES:
            raise InputError(None, "--mode", f"unknown mode '{requested}'",
                             f"use one of {', '.join(MODES)}")
        if requested == "exact" and not fit.is_gaussian:
            raise InputError(fit.source, "mean", "mode 'exact' needs a Gaussian summary",
                             "use --mode reweight for samples, or refit")
        if requested == "reweight" and fit.is_gaussian:
            raise InputError(fit.source, "samples", "mode 'reweight' needs posterior samples",
                             "use --mode exact for a Gaussian summary")
        if requested == "refit" and not has_likelihood:
            raise InputError(None, "--data/--likelihood", "mode 'refit' needs a likelihood",
                             "give --data obs.yaml or --likelihood module:function")
        return requested
    if has_likelihood:
        return "refit"
    return "exact" if fit.is_gaussian else "reweight"


def moments(x: np.ndarray, w: np.ndarray | None, names: tuple[str, ...]) -> dict[str, Any]:
    """Weighted mean and standard deviation of each parameter."""
    ww = np.ones(len(x)) if w is None else w
    mean = ww @ x / ww.sum()
    var = ww @ (x - mean) ** 2 / ww.sum()
    return {n: {"mean": float(m), "std": float(np.sqrt(v))}
            for n, m, v in zip(names, mean, var, strict=True)}


def truncated_mean_tau(x: np.ndarray, w: np.ndarray | None, keep: np.ndarray
                       ) -> tuple[float | None, int]:
    """The largest integrated autocorrelation time of the truncated means, in row order.

    For each parameter, the batch-means variance of sum_kept w x / sum_kept w
    (:func:`eftsieve.stats.accumulate.ratio_batch_variance`) over its variance for independent
    draws, sum_kept w^2 (x - mean)^2 / (sum_kept w)^2 (constant columns are skipped).
    Returns (tau, number of batches); tau is None when there are too few rows for batch
    means or nothing is kept.
    """
    from eftsieve.stats.accumulate import ratio_batch_variance, run_sums

    wk = (np.ones(len(x)) if w is None else np.asarray(w, dtype=float)) * keep
    total = float(wk.sum())
    if not total > 0:
        return None, 0
    den = run_sums(wk)
    taus, k = [], 0
    for col in np.asarray(x, dtype=float).T:
        var, k, _ = ratio_batch_variance(run_sums(wk * col), den, len(x))
        mean = float(wk @ col) / total
        iid = float((wk * wk) @ (col - mean) ** 2) / total**2
        if not math.isfinite(var):
            return None, k  # too few rows for batch means
        if iid > 0:  # a constant column has no error to inflate
            taus.append(var / iid)
    return (max(taus) if taus else None), k


def significant_tau(tau: float | None, n_batches: int) -> float:
    """tau where it exceeds 1 by more than twice the noise of a k-batch estimate.

    A batch-means variance from k batches has a relative error of about sqrt(2/(k - 1));
    a tau within two of those of 1 (as for independent rows) counts as 1, so that noise
    does not shrink the effective sample size.
    """
    if tau is None or n_batches < 2:
        return 1.0
    return tau if tau > 1.0 + 2.0 * math.sqrt(2.0 / (n_batches - 1)) else 1.0


def reweight(fit: Fit, region: Region, cmap: CoordinateMap,
             settings: ImposeSettings) -> ImposeResult:
    """Keep the posterior samples inside the region (every row read is accounted for)."""
    if fit.samples is None:
        raise InputError(fit.source, "samples", "mode 'reweight' needs posterior samples",
                         "use --mode exact for a Gaussian summary")
    chunk = fit.samples.read_all()
    y = cmap(chunk.values)
    keep = region.contains(y)
    w = chunk.weights
    if w is not None and w.sum() <= 0:
        raise InputError(fit.samples.path, fit.samples.weight_column, "all weights are zero",
                         "give at least one positive weight")
    ess_before = kish_ess(w, len(y))
    kw = None if w is None else w[keep]
    ess = kish_ess(kw, int(keep.sum()))
    wt = np.ones(len(y)) if w is None else w
    p_in = float(wt[keep].sum() / wt.sum())
    tau, n_batches = truncated_mean_tau(chunk.values, w, keep)
    # correlated input rows (an MCMC chain in draw order) carry fewer independent draws
    ess_corr = ess / significant_tau(tau, n_batches) if tau is not None else None
    usable = ess if ess_corr is None else min(ess, ess_corr)
    if usable < settings.min_ess:
        corr = "" if ess_corr is None or ess_corr >= ess else (
            f", {ess_corr:.0f} after the autocorrelation of the rows (tau = {tau:.3g})")
        raise SamplingError(
            f"only {ess:.0f} effective samples remain inside the region{corr} (of "
            f"{ess_before:.0f}; P(inside) = {p_in:.3g}), below the floor {settings.min_ess:g}",
            "use --mode refit with a likelihood (--data or --likelihood) to sample the "
            "truncated posterior directly")
    summary = {"mode": "reweight", "n_read": int(len(y)), "n_samples": int(keep.sum()),
               "n_dropped": int((~keep).sum()), "ess": ess, "ess_before": ess_before,
               "ess_autocorr": ess_corr, "tau_rows": tau, "acceptance": float(keep.mean()),
               "tau": None, "p_inside_before": p_in,
               "kept_rows": "original row indices are in samples.parquet column 'row'"}
    res = ImposeResult("reweight", fit.names, chunk.values[keep], kw, chunk.values, w, summary)
    return with_moments(res, chunk.rows[keep])


def exact(fit: Fit, region: Region, cmap: CoordinateMap,
          settings: ImposeSettings) -> ImposeResult:
    """I.i.d. draws from the fit's Gaussian truncated to the region (minimax tilting)."""
    from eftsieve.stats.tmvn import sample_truncated_normal

    if not cmap.is_affine:
        raise InputError(fit.source, "parameters", "exact mode needs an affine map from the "
                         "fit's conventions to the region's", "use --mode refit")
    if fit.mean is None or fit.cov is None:
        raise InputError(fit.source, "mean", "mode 'exact' needs a Gaussian summary",
                         "use --mode reweight for samples, or refit")
    from eftsieve.errors import SolverError
    from eftsieve.stats.gaussian import reduce_to_subspace, whitening

    a, b = cmap.pull_back(*region.arrays())
    rng = np.random.default_rng(settings.seed)
    w = whitening(fit.cov)
    if w.shape[1] == len(fit.mean):
        try:
            ts = sample_truncated_normal(fit.mean, fit.cov, a, b, settings.n_samples,
                                         rng=rng)
        except SolverError as err:
            # the tilting optimisation fails on some many-facet regions (e.g. a mean on
            # the boundary of a positivity cone with 18 coordinates): plain rejection from the
            # Gaussian is exact too, when the probability inside is not tiny
            ts = rejection_sample(fit.mean, fit.cov, a, b, settings.n_samples, rng,
                                  reason=str(err))
        samples = ts.samples
    else:  # a singular covariance: truncate the Gaussian on its subspace
        g, h, unreachable = reduce_to_subspace(fit.mean, w, a, b)
        if unreachable or not len(h) or w.shape[1] == 0:
            raise SamplingError("the fit's covariance is singular and the region leaves "
                                "nothing to truncate on its subspace (probability 0 or 1)",
                                "give the full covariance, or check the fit without impose")
        ts = sample_truncated_normal(np.zeros(w.shape[1]), np.eye(w.shape[1]), g, h,
                                     settings.n_samples, rng=rng)
        samples = fit.mean + ts.samples @ w.T
    before = draw(fit.mean, psd_factor(fit.cov), settings.n_samples, rng)
    prob = ts.probability
    summary = {"mode": "exact", "n_samples": int(len(samples)), "ess": float(len(samples)),
               "acceptance": ts.acceptance_rate, "n_proposed": ts.n_proposed, "tau": None,
               "p_inside_before": prob.probability, "p_inside_before_err": prob.std_error,
               "normalisation_method": prob.method}
    res = ImposeResult("exact", fit.names, samples, None, before, None, summary)
    return with_moments(res, np.arange(len(samples)))


#: proposals of the plain-rejection fall-back (2e7 x d doubles in batches of 1e6)
REJECTION_MAX_PROPOSALS = 20_000_000


def rejection_sample(mean: np.ndarray, cov: np.ndarray, a: np.ndarray, b: np.ndarray,
                     n: int, rng: np.random.Generator, reason: str = "",
                     max_proposals: int = REJECTION_MAX_PROPOSALS) -> Any:
    """I.i.d. draws of N(mean, cov) restricted to ``a x >= b`` by plain rejection (exact:
    every kept draw is a draw of the truncated law; common practice), with P(inside) as
    the kept fraction and its binomial standard error.  SamplingError when fewer than n
    draws are kept within ``max_proposals``."""
    from eftsieve.stats.tmvn import PolytopeProbability, TruncatedSample

    factor = psd_factor(cov)
    parts, kept, proposed = [], 0, 0
    while kept < n and proposed < max_proposals:
        size = int(min(1_000_000, max_proposals - proposed))
        x = draw(mean, factor, size, rng)
        ok = (x @ a.T >= b).all(axis=1)
        parts.append(x[ok])
        kept, proposed = kept + int(ok.sum()), proposed + size
    if kept < n:
        raise SamplingError(f"the exact sampler failed ({reason}) and plain rejection kept "
                            f"{kept} of {proposed} draws, fewer than the {n} asked",
                            "use --mode refit, or ask for fewer samples")
    p = kept / proposed
    prob = PolytopeProbability(p, math.sqrt(p * (1 - p) / proposed), proposed,
                               f"plain rejection (the minimax tilting failed: {reason})",
                               math.log(p))
    samples = np.concatenate(parts)[:n]
    samples.setflags(write=False)
    return TruncatedSample(samples, p, proposed, prob)


def with_moments(res: ImposeResult, rows: np.ndarray) -> ImposeResult:
    """Attach the moments before and after, and the row indices."""
    s = dict(res.figures)
    s["before"] = moments(res.before_samples, res.before_weights, res.names)
    s["after"] = moments(res.samples, res.weights, res.names)
    return ImposeResult(res.mode, res.names, res.samples, res.weights, res.before_samples,
                        res.before_weights, s, rows)
