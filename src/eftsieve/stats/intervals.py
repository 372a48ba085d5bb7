"""Per-parameter summaries of a (weighted) sample, ready to quote in a paper: mean,
standard deviation, central 68% and 95% intervals, and the covariance.

Use :func:`posterior_summary` on the samples that ``impose`` returns.  Quantiles of a
weighted sample follow the inverse of the weighted empirical distribution function
(Hyndman & Fan, Am. Stat. 50 (1996) 361, definition 1 extended to weights).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

#: the central intervals quoted, as probability contents (one and two Gaussian sigma,
#: rounded as usual: common practice)
LEVELS = (0.68, 0.95)


def weighted_quantile(x: np.ndarray, q: np.ndarray, weights: np.ndarray | None = None
                      ) -> np.ndarray:
    """Quantiles ``q`` of the sample ``x`` (1-D) with optional non-negative weights: the
    smallest x whose weighted empirical CDF reaches q."""
    x = np.asarray(x, dtype=float)
    w = np.ones_like(x) if weights is None else np.asarray(weights, dtype=float)
    order = np.argsort(x, kind="stable")
    cdf = np.cumsum(w[order])
    cdf /= cdf[-1]
    idx = np.searchsorted(cdf, np.asarray(q, dtype=float), side="left")
    return x[order][np.minimum(idx, len(x) - 1)]


@dataclass(frozen=True)
class ParameterSummary:
    """One parameter's summary.

    Attributes
    ----------
    name
        The parameter.
    mean, std
        Weighted mean and standard deviation.
    intervals
        Probability content -> (low, high) central interval.
    """

    name: str
    mean: float
    std: float
    intervals: dict[float, tuple[float, float]]

    def to_dict(self) -> dict[str, Any]:
        return {"mean": self.mean, "std": self.std,
                **{f"interval_{round(100 * c)}": list(v) for c, v in self.intervals.items()}}


@dataclass(frozen=True)
class PosteriorSummary:
    """Every parameter's summary and the covariance.

    Attributes
    ----------
    parameters
        One :class:`ParameterSummary` per parameter, in order.
    covariance
        The weighted covariance matrix.
    ess
        Kish's effective sample size of the weights.
    """

    parameters: tuple[ParameterSummary, ...]
    covariance: np.ndarray
    ess: float

    def to_dict(self) -> dict[str, Any]:
        return {"parameters": {p.name: p.to_dict() for p in self.parameters},
                "names": [p.name for p in self.parameters],
                "covariance": self.covariance.tolist(), "ess": self.ess}


def posterior_summary(samples: np.ndarray, names: tuple[str, ...],
                      weights: np.ndarray | None = None) -> PosteriorSummary:
    """Mean, sd, 68%/95% central intervals and covariance of a weighted sample (n, p)."""
    x = np.asarray(samples, dtype=float)
    w = np.ones(len(x)) if weights is None else np.asarray(weights, dtype=float)
    wn = w / w.sum()
    mean = wn @ x
    cov = np.atleast_2d(np.cov(x, rowvar=False, aweights=w, ddof=0))
    params = []
    for j, name in enumerate(names):
        iv = {}
        for c in LEVELS:
            lo, hi = weighted_quantile(x[:, j], np.array([(1 - c) / 2, (1 + c) / 2]), w)
            iv[c] = (float(lo), float(hi))
        params.append(ParameterSummary(name, float(mean[j]), float(np.sqrt(cov[j, j])), iv))
    return PosteriorSummary(tuple(params), cov, float(w.sum() ** 2 / (w @ w)))
