"""The refit by importance sampling from a truncated Laplace approximation.

The target is the refit's posterior  pi(x) ~ prior(x) * 1[x in R] * L(x)  (or, with a
theory-uncertainty model, a smooth P(x) in place of the indicator).  Write its smooth
part as  s(x) = log L(x) + sum of the normal prior factors;  the uniform prior factors
and the region are linear constraints  A x >= b.

1. **Laplace step.**  Maximise s(x) over the uniform prior box (Nelder-Mead, started at the
   Chebyshev centre of region x box and at random points of the box), and take the
   curvature at the highest maximum by central finite differences: C = (-H)^{-1}, or
   (-H + D)^{-1} where a direction is flat, D adding a weak precision 1/w_i^2 for a box of
   half-width w_i (common practice).  Separated maxima of comparable height mean that one
   Gaussian cannot cover the posterior: the importance sample is then refused.
2. **Exact truncated proposal.**  q(x) = N(x; m, lambda C) restricted to  A x >= b,  drawn
   exactly and i.i.d. by the minimax-tilting sampler (Botev, J. R. Stat. Soc. B 79 (2017)
   125, arXiv:1603.04166; :func:`eftsieve.stats.tmvn.sample_truncated_normal`), for
   inflations lambda = 1, then 2 if the first is poor.
3. **Self-normalised weights.**  w = exp(s(x) - log N(x; m, lambda C)) on the draws (the
   truncation constant of q cancels), with Kish's effective sample size
   ESS = (sum w)^2 / sum w^2  (Kish, Survey Sampling, 1965).

The draws are independent, so the ESS is a plain count, with no autocorrelation time.
The result is accepted only when ESS / N >= :data:`MIN_ESS_FRACTION`, no single draw
carries more than :data:`MAX_WEIGHT_SHARE` of the total weight, and the Pareto k-hat of
the weights' tail is at most :data:`MAX_PARETO_K` (Vehtari et al., "Pareto smoothed
importance sampling", arXiv:1507.02646).  Otherwise the function
returns None with the reason, and the caller runs the MCMC refit instead.  For a Gaussian
likelihood the weights are constant and ESS = N: this is the exact sampler.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

#: accept the importance sample only above this ESS / N
MIN_ESS_FRACTION = 0.1
#: ... and only if no draw holds more than this share of the total weight
MAX_WEIGHT_SHARE = 0.01
#: ... and only if the weights' tail is lighter than a generalised Pareto of this shape
#: (Vehtari, Simpson, Gelman, Yao & Gabry, arXiv:1507.02646, Sec. 3: k-hat > 0.7 makes
#: the importance estimate unreliable)
MAX_PARETO_K = 0.7
#: proposal covariance inflations tried in turn
INFLATIONS = (1.0, 2.0)
#: maxima farther apart than this (in the proposal's sigma) count as separate modes ...
SEPARATE_MODES_SIGMA = 6.0
#: ... when the lower one is within this many units of log-density of the highest
COMPARABLE_LOG_HEIGHT = 12.0
#: random starting points of the search for maxima, besides the given one
EXTRA_STARTS = 7


@dataclass(frozen=True)
class ImportanceSample:
    """Weighted i.i.d. draws of the refit posterior.

    Attributes
    ----------
    x, weights
        Draws (n, p) and self-normalised weights (sum 1).
    ess
        Kish's effective sample size.
    inflation
        The proposal covariance factor lambda used.
    mode, cov
        The Laplace centre and covariance (before inflation).
    max_share
        The largest single weight.
    pareto_k
        The Pareto k-hat of the weights (:func:`pareto_khat`).
    """

    x: np.ndarray
    weights: np.ndarray
    ess: float
    inflation: float
    mode: np.ndarray
    cov: np.ndarray
    max_share: float
    pareto_k: float

    def to_dict(self) -> dict[str, Any]:
        return {"sampler": "importance sampling, truncated Laplace proposal",
                "n_draws": int(len(self.x)), "ess": self.ess,
                "ess_fraction": self.ess / max(len(self.x), 1),
                "inflation": self.inflation, "max_weight_share": self.max_share,
                "pareto_k": self.pareto_k,
                "laplace_mode": self.mode.tolist()}


def kish_ess(w: np.ndarray) -> float:
    """(sum w)^2 / sum w^2."""
    s = float(w.sum())
    return s * s / float((w * w).sum()) if s > 0 else 0.0


def _gpd_shape(x: np.ndarray) -> float:
    """Shape k of a generalised Pareto fitted to sorted positive exceedances ``x``: the
    empirical-Bayes estimate of Zhang & Stephens (Technometrics 51 (2009) 316), with the
    weakly informative prior of arXiv:1507.02646 (App. C): k <- (n k + 5) / (n + 10)."""
    n = len(x)
    m = 30 + int(math.sqrt(n))
    theta = 1.0 - np.sqrt(m / (np.arange(1, m + 1) - 0.5))
    theta = theta / (3.0 * x[int(n / 4 + 0.5) - 1]) + 1.0 / x[-1]
    k = np.log1p(-np.outer(theta, x)).mean(axis=1)
    profile = n * (np.log(-theta / k) - k - 1.0)
    with np.errstate(over="ignore"):  # exp -> inf gives a weight of 0, as it should
        w = 1.0 / np.exp(profile - profile[:, None]).sum(axis=1)
    keep = w >= 10 * np.finfo(float).eps
    theta, w = theta[keep], w[keep] / w[keep].sum()
    k_hat = float(np.log1p(-(theta @ w) * x).mean())
    return (n * k_hat + 5.0) / (n + 10.0)


def pareto_khat(logw: np.ndarray) -> float:
    """The Pareto k-hat of importance log-weights (arXiv:1507.02646, Sec. 3): a
    generalised Pareto fitted to the M = ceil(min(N/5, 3 sqrt N)) largest weights in
    excess of the next one.  Below 0.5 the estimate has finite variance; above 0.7 it is
    unreliable."""
    lw = np.asarray(logw, dtype=float)
    lw = lw - lw.max()
    n = len(lw)
    m = int(math.ceil(min(n / 5.0, 3.0 * math.sqrt(n))))
    order = np.sort(lw)
    cut = max(order[-m - 1], math.log(np.finfo(float).tiny))
    tail = order[order > cut]
    if len(tail) <= 4:
        return math.inf
    return _gpd_shape(np.exp(tail) - math.exp(cut))


def _hessian(f: Callable[[np.ndarray], np.ndarray], x: np.ndarray, steps: np.ndarray
             ) -> np.ndarray:
    """Central finite-difference Hessian of a vectorised scalar function."""
    k = len(x)
    e = np.diag(steps)
    pts = [x]
    for i in range(k):
        for j in range(i, k):
            for si, sj in ((1, 1), (1, -1), (-1, 1), (-1, -1)):
                pts.append(x + si * e[i] + sj * e[j])
    vals = f(np.array(pts))
    h = np.empty((k, k))
    it = iter(vals[1:])
    for i in range(k):
        for j in range(i, k):
            pp, pm, mp, mm = next(it), next(it), next(it), next(it)
            h[i, j] = h[j, i] = (pp - pm - mp + mm) / (4 * steps[i] * steps[j])
    return h


def _maximise(smooth: Callable[[np.ndarray], np.ndarray], x0: np.ndarray,
              bounds: list[tuple[float | None, float | None]]) -> tuple[np.ndarray, float]:
    from scipy.optimize import minimize

    def neg(x: np.ndarray) -> float:
        v = float(smooth(x[None, :])[0])
        return -v if math.isfinite(v) else 1e300

    # Nelder-Mead: robust where the log-density is -inf (a line search there stops early)
    k = len(x0)
    res = minimize(neg, x0, method="Nelder-Mead", bounds=bounds,
                   options={"xatol": 1e-9, "fatol": 1e-12, "maxiter": 4000 * k,
                            "maxfev": 8000 * k})
    m = np.asarray(res.x, dtype=float)
    return m, float(smooth(m[None, :])[0]) if res.success else -math.inf


def laplace(smooth: Callable[[np.ndarray], np.ndarray], starts: np.ndarray,
            box: list[tuple[float, float]], uniform: np.ndarray
            ) -> tuple[np.ndarray, np.ndarray] | str:
    """The maximum of ``smooth`` in the box and the proposal covariance (module doc), or
    why there is none: no finite maximum, a curvature that is not negative, or several
    separated maxima of comparable height (one Gaussian cannot cover them)."""
    lo, hi = np.array(box, dtype=float).T
    width = hi - lo
    bounds = [(a, b) if u else (None, None) for a, b, u in zip(lo, hi, uniform, strict=True)]
    found = [_maximise(smooth, x, bounds) for x in starts]
    found = [(m, v) for m, v in found if math.isfinite(v)]
    if not found:
        return "no finite maximum of the log-posterior"
    m, top = max(found, key=lambda mv: mv[1])
    steps = 1e-4 * width
    prec = -_hessian(smooth, m, steps)
    prec = 0.5 * (prec + prec.T)
    if np.linalg.eigvalsh(prec).min() <= 0:
        # a flat or convex direction: a weak precision from the box keeps q proper
        prec = prec + np.diag(1.0 / (width / 2) ** 2)
        if np.linalg.eigvalsh(prec).min() <= 0:
            return "the curvature at the maximum is not negative"
    cov = np.linalg.inv(prec)
    cov = 0.5 * (cov + cov.T)
    chol = np.linalg.cholesky(cov)
    for mk, vk in found:
        d = float(np.linalg.norm(np.linalg.solve(chol, mk - m)))
        if d > SEPARATE_MODES_SIGMA and vk > top - COMPARABLE_LOG_HEIGHT:
            return (f"several separated maxima of the log-posterior ({d:.1f} sigma apart, "
                    f"heights {top:.4g} and {vk:.4g})")
    return m, cov


def _log_normal(x: np.ndarray, m: np.ndarray, cov: np.ndarray) -> np.ndarray:
    chol = np.linalg.cholesky(cov)
    z = np.linalg.solve(chol, (x - m).T)
    return -0.5 * (z * z).sum(axis=0) - np.log(np.diag(chol)).sum()


def importance_refit(smooth: Callable[[np.ndarray], np.ndarray], a: np.ndarray,
                     b: np.ndarray, box: list[tuple[float, float]], uniform: np.ndarray,
                     x0: np.ndarray, n: int, rng: np.random.Generator
                     ) -> tuple[ImportanceSample | None, str]:
    """Weighted draws of  exp(smooth(x)) 1[a x >= b]  (module doc), or None and why.

    Parameters
    ----------
    smooth
        Vectorised log density without the linear constraints (the log-likelihood, the
        normal prior factors, and a soft truncation if there is one).
    a, b
        The linear constraints in the fit's coordinates (region facets and the uniform
        prior box rows).
    box, uniform
        The prior box and which of its sides are uniform priors (hard edges).
    x0
        A point inside every constraint (the Chebyshev centre).
    n
        Draws to make.
    """
    from eftsieve.errors import EftsieveError
    from eftsieve.stats.tmvn import sample_truncated_normal

    lo, hi = np.array(box, dtype=float).T
    starts = np.vstack([x0, lo + (hi - lo) * rng.random((EXTRA_STARTS, len(x0)))])
    lap = laplace(smooth, starts, box, uniform)
    if isinstance(lap, str):
        return None, lap
    m, cov = lap
    why = ""
    for lam in INFLATIONS:
        try:
            if len(b):
                draws = sample_truncated_normal(m, lam * cov, a, b, n, rng=rng).samples
            else:  # no constraint at all (normal priors, no region)
                draws = m + rng.standard_normal((n, len(m))) @ np.linalg.cholesky(lam * cov).T
        except EftsieveError as err:
            return None, f"the truncated proposal failed: {err}"
        logw = smooth(draws) - _log_normal(draws, m, lam * cov)
        ok = np.isfinite(logw)
        if not ok.all():
            draws, logw = draws[ok], logw[ok]
        if not len(draws):
            why = "every proposal has zero posterior density"
            continue
        w = np.exp(logw - logw.max())
        w /= w.sum()
        ess, share, khat = kish_ess(w), float(w.max()), pareto_khat(logw)
        if ess / n >= MIN_ESS_FRACTION and share <= MAX_WEIGHT_SHARE and khat <= MAX_PARETO_K:
            return ImportanceSample(draws, w, ess, lam, m, cov, share, khat), ""
        why = (f"weights too uneven at inflation {lam:g}: ESS/N = {ess / n:.3g}, "
               f"largest weight share {share:.3g}, Pareto k-hat {khat:.2f}")
    return None, why


#: at most this many importance draws (the budget is steps x walkers, as for the MCMC)
MAX_DRAWS = 1_000_000


def refit_by_importance(fit: Any, region: Any, cmap: Any,
                        loglike: Callable[[np.ndarray], np.ndarray], settings: Any,
                        label: str, box: list[tuple[float, float]], x0: np.ndarray,
                        before: Any = None,
                        soft: Callable[[np.ndarray], np.ndarray] | None = None
                        ) -> tuple[Any, str]:
    """The refit as an :class:`~eftsieve.impose.core.ImposeResult` of weighted i.i.d.
    draws, or (None, why) when the importance sample is refused (module doc).

    The budget is the MCMC's: ``settings.n_samples x settings.walkers`` posterior
    evaluations (at most :data:`MAX_DRAWS`).  ``box`` is the prior's support and ``x0``
    a point inside region x box (:func:`eftsieve.impose.refit.start_point`).
    """
    from eftsieve.impose.core import ImposeResult, with_moments

    if not cmap.is_affine:
        return None, "the coordinate map is not affine"
    names = list(fit.names)
    kinds = [fit.prior.kinds[n] for n in names]
    pars = np.array([fit.prior.params[n] for n in names], dtype=float)
    uniform = np.array([k == "uniform" for k in kinds])
    lo, hi = np.array(box).T
    k = len(names)
    rows = [np.eye(k)[uniform], -np.eye(k)[uniform]]
    rhs = [lo[uniform], -hi[uniform]]
    if soft is None:
        a_fit, b_fit = cmap.pull_back(*region.arrays())
        rows.insert(0, a_fit)
        rhs.insert(0, b_fit)
    a, b = np.vstack(rows), np.concatenate(rhs)

    def smooth(x: np.ndarray) -> np.ndarray:
        out = np.zeros(len(x))
        for i in np.flatnonzero(~uniform):
            out += -0.5 * ((x[:, i] - pars[i, 0]) / pars[i, 1]) ** 2
        if soft is not None:
            out = out + soft(x)
        ok = np.isfinite(out)
        res = np.full(len(x), -np.inf)
        if ok.any():
            res[ok] = out[ok] + loglike(x[ok])
        return res

    n = int(min(MAX_DRAWS, settings.n_samples * settings.walkers))
    rng = np.random.default_rng(settings.seed)
    sample, why = importance_refit(smooth, a, b, box, uniform, x0, n, rng)
    if sample is None:
        return None, why
    # like with like: the same prior, data and likelihood without the region
    n_box = int(uniform.sum())
    a_free = np.vstack([np.eye(k)[uniform], -np.eye(k)[uniform]])
    b_free = np.concatenate([lo[uniform], -hi[uniform]])
    smooth_free = smooth if soft is None else _without(smooth, soft)
    free, why_free = importance_refit(smooth_free, a_free if n_box else np.zeros((0, k)),
                                      b_free, box, uniform, x0, n, rng)
    if free is None:
        return None, f"without positivity: {why_free}"
    a_reg, b_reg = cmap.pull_back(*region.arrays())
    inside = ((free.x @ a_reg.T - b_reg) >= 0).all(axis=1)
    p_in = float(free.weights[inside].sum())
    p_err = float(np.sqrt(max(p_in * (1 - p_in), 1.0 / free.ess) / max(free.ess, 1.0)))
    figures = {"mode": "refit", "n_samples": int(len(sample.x)), "ess": float(sample.ess),
               "ess_per_parameter": {nm: float(sample.ess) for nm in names},
               "acceptance": None, "tau": {}, "converged": True, "n_steps": None,
               "walkers": None, "discard": 0, "thin": 1, "likelihood": label,
               "convergence_rule": f"importance sampling: ESS/N >= {MIN_ESS_FRACTION:g}, no "
                                   f"weight above {MAX_WEIGHT_SHARE:g} of the total, "
                                   f"Pareto k-hat <= {MAX_PARETO_K:g}, both samples",
               "comparison": "the same prior, data and likelihood without positivity "
                             "(a second importance sample of the same size)",
               "converged_without_positivity": True,
               "ess_without_positivity": float(free.ess),
               "p_inside_before": p_in, "p_inside_before_err": p_err, **sample.to_dict()}
    from eftsieve.impose.core import moments

    if before is not None:
        figures["card"] = moments(before[0], before[1], fit.names)
    res = ImposeResult("refit", fit.names, sample.x, sample.weights, free.x, free.weights,
                       figures)
    return with_moments(res, np.arange(len(sample.x))), ""


def _without(smooth: Callable[[np.ndarray], np.ndarray],
             soft: Callable[[np.ndarray], np.ndarray]) -> Callable[[np.ndarray], np.ndarray]:
    """``smooth`` without the soft truncation's log P(x)."""
    def free(x: np.ndarray) -> np.ndarray:
        out = smooth(x) - soft(x)
        return np.where(np.isfinite(out), out, -np.inf)
    return free
