"""Theory uncertainty of the bounds: truncation-aware verdicts and soft truncation.

A one-loop bound is known only to the order of its expansion.  Each facet's offset b_j
gets an uncertainty, and the hard indicator 1[x in region] becomes the probability
P(x satisfies every facet).  Models (``--theory-uncertainty``):

``none``
    Hard edges; every result is exactly the hard-edge one.
``fixed``
    A user-stated sigma per bound family, in the units of the facet's offset; the
    offsets' errors are independent Gaussians, so P(x) = prod_j Phi(m_j(x)/sigma_j), with
    m_j = n_j . x - b_j.
``power-counting``
    The Bayesian model of EFT truncation errors of Furnstahl, Klco, Phillips &
    Wesolowski, "Quantifying truncation errors in effective field theory", Phys. Rev. C 92
    (2015) 024005, arXiv:1506.01343, in its conjugate form (normal coefficients with a
    scaled-inverse-chi-squared prior on their variance, as in Melendez, Furnstahl,
    Phillips, Pratola & Wesolowski, arXiv:1904.10581, Sec. II):

    - expansion parameter Q_j = M_pi max(1, sqrt|s_j|, sqrt|t_j|) / Lambda_b at facet j's
      kinematic point (s, t in units of M_pi^2), breakdown scale Lambda_b (default
      4 pi F_pi, naive dimensional analysis, Manohar & Georgi, Nucl. Phys. B234 (1984) 189;
      common practice);
    - the amplitude at that point is y_ref sum_n c_n Q^n with y_ref = |T_LO| and the
      known c_2 = T_NLO/(y_ref Q^2) (chiral orders step by Q^2), evaluated at the facet
      point nearest the origin in (lbar1, lbar2), lbar3 = lbar4 = 0;
    - c_n ~ N(0, cbar^2) i.i.d., cbar^2 ~ ScaledInvChi2(nu0, tau0^2) (default nu0 = 1,
      tau0 = 1: coefficients of natural size, common practice); the posterior is
      ScaledInvChi2(nu0 + 1, (nu0 tau0^2 + c_2^2)/(nu0 + 1));
    - the bound's relative truncation error is the sum of the omitted orders,
      delta b_j = |b_j| sum_{m>=1} c Q_j^(2m), with standard deviation
      cbar |b_j| Q_j^2 / sqrt(1 - Q_j^4);
    - the facets share cbar (one learned scale for all) and have independent
      coefficients otherwise, so P(x) = E_cbar[prod_j Phi(m_j(x)/sigma_j(cbar))], the
      expectation by quantile quadrature over the posterior of cbar^2.

Verdicts become probabilities: ``inside`` when P >= p_high, ``outside`` when
P <= p_low, ``uncertain`` in between (defaults 0.05 and 0.95).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from eftsieve.errors import InputError
from eftsieve.region.model import Region

MODELS = ("none", "fixed", "power-counting")
N_QUANTILES = 48
ROWS_PER_BLOCK = 200_000


@dataclass(frozen=True)
class UncertaintySettings:
    """How the facets' offsets are uncertain.

    Attributes
    ----------
    model
        ``none``, ``fixed`` or ``power-counting``.
    sigma_by_family
        For ``fixed``: sigma of each family's offsets.
    breakdown_mev
        Lambda_b of ``power-counting`` (None: 4 pi F_pi of the region).
    nu0, tau0
        The scaled-inverse-chi-squared prior of cbar^2.
    p_low, p_high
        Thresholds of the ``uncertain`` verdict.
    """

    model: str = "none"
    sigma_by_family: dict[str, float] = field(default_factory=dict)
    breakdown_mev: float | None = None
    nu0: float = 1.0
    tau0: float = 1.0
    p_low: float = 0.05
    p_high: float = 0.95

    def __post_init__(self) -> None:
        if self.model not in MODELS:
            raise InputError(None, "--theory-uncertainty", f"unknown model '{self.model}'",
                             f"use one of {', '.join(MODELS)}")
        if not 0 <= self.p_low < self.p_high <= 1:
            raise InputError(None, "--thresholds", f"need 0 <= low < high <= 1, got "
                             f"{self.p_low}, {self.p_high}", "e.g. --thresholds 0.05,0.95")
        if self.nu0 <= 0 or self.tau0 <= 0:
            raise InputError(None, "--coefficient-prior", "nu0 and tau0 must be positive", "")

    def to_dict(self) -> dict[str, Any]:
        return {"model": self.model, "sigma_by_family": dict(self.sigma_by_family),
                "breakdown_mev": self.breakdown_mev, "nu0": self.nu0, "tau0": self.tau0,
                "p_low": self.p_low, "p_high": self.p_high}


@dataclass(frozen=True)
class ScalePosterior:
    """The conjugate posterior ScaledInvChi2(nu, tau^2) of cbar^2.

    Attributes
    ----------
    nu, tau2
        Degrees of freedom and scale.
    """

    nu: float
    tau2: float

    def distribution(self):
        """cbar^2 as scipy.stats.invgamma(nu/2, scale = nu tau^2/2)."""
        from scipy import stats

        return stats.invgamma(self.nu / 2, scale=self.nu * self.tau2 / 2)

    def cbar_quantiles(self, n: int = N_QUANTILES) -> np.ndarray:
        """cbar at the mid-quantiles (k + 1/2)/n of the posterior, for quadrature."""
        q = (np.arange(n) + 0.5) / n
        return np.sqrt(self.distribution().ppf(q))

    def to_dict(self) -> dict[str, Any]:
        return {"nu": self.nu, "tau2": self.tau2}


def scale_posterior(coefficients: np.ndarray, nu0: float, tau0: float) -> ScalePosterior:
    """Posterior of cbar^2 given observed coefficients c_n ~ N(0, cbar^2), conjugate prior.

    nu = nu0 + k, tau^2 = (nu0 tau0^2 + sum c_n^2)/nu (arXiv:1904.10581, Sec. II.B).
    """
    c = np.asarray(coefficients, dtype=float)
    nu = nu0 + c.size
    return ScalePosterior(nu, (nu0 * tau0**2 + float(c @ c)) / nu)


@dataclass(frozen=True)
class FacetUncertainty:
    """Per-facet offset uncertainties of a region under a model.

    Attributes
    ----------
    settings
        The model settings.
    sigma
        For ``fixed``: sigma_j (m,).  For ``power-counting``: sigma_j per unit cbar.
    q
        Expansion parameter Q_j of each facet (power-counting), else None.
    posterior
        The posterior of cbar^2 (power-counting), else None.
    offsets_unit
        Offsets in the units of the facet normals as stored (b_j).
    """

    settings: UncertaintySettings
    sigma: np.ndarray
    q: np.ndarray | None = None
    posterior: ScalePosterior | None = None
    coefficients: np.ndarray | None = None
    breakdown_mev: float | None = None

    @property
    def model(self) -> str:
        return self.settings.model

    def sigma_at_median(self) -> np.ndarray:
        """sigma_j at the posterior median of cbar (power-counting) or sigma_j (fixed)."""
        if self.posterior is None:
            return self.sigma
        return self.sigma * math.sqrt(float(self.posterior.distribution().median()))

    def to_dict(self) -> dict[str, Any]:
        return {"settings": self.settings.to_dict(), "sigma": self.sigma.tolist(),
                "sigma_median": self.sigma_at_median().tolist(),
                "q": None if self.q is None else self.q.tolist(),
                "coefficients": None if self.coefficients is None
                else self.coefficients.tolist(),
                "posterior": None if self.posterior is None else self.posterior.to_dict(),
                "breakdown_mev_used": self.breakdown_mev}


def prob_satisfies(y: np.ndarray, region: Region, fu: FacetUncertainty) -> np.ndarray:
    """P(point satisfies every facet) for points y (n, dim) in region coordinates."""
    y = np.asarray(y, dtype=float)
    a = np.array([f.normal for f in region.facets], dtype=float)
    b = np.array([f.offset for f in region.facets], dtype=float)
    out = np.empty(len(y))
    for lo in range(0, len(y), ROWS_PER_BLOCK):
        m = y[lo:lo + ROWS_PER_BLOCK] @ a.T - b                    # (n, m) in offset units
        out[lo:lo + ROWS_PER_BLOCK] = _prob_block(m, fu)
    return out


def _prob_block(m: np.ndarray, fu: FacetUncertainty) -> np.ndarray:
    if fu.model == "none":
        return (m >= 0).all(axis=1).astype(float)
    if fu.posterior is None:
        return np.exp(_log_phi(m / fu.sigma[None, :]).sum(axis=1))
    acc = np.zeros(len(m))
    for cbar in fu.posterior.cbar_quantiles():
        acc += np.exp(_log_phi(m / (cbar * fu.sigma)[None, :]).sum(axis=1))
    return acc / N_QUANTILES


def _log_phi(z: np.ndarray) -> np.ndarray:
    from scipy import special  # only when a theory-uncertainty model is on (issue 18)

    return special.log_ndtr(z)


def verdicts_from_probability(p: np.ndarray, settings: UncertaintySettings) -> np.ndarray:
    """0 inside (P >= p_high), 2 outside (P <= p_low), 3 uncertain (in between)."""
    v = np.full(len(p), 3, dtype=np.int8)
    v[p >= settings.p_high] = 0
    v[p <= settings.p_low] = 2
    return v


def facet_uncertainty(region: Region, settings: UncertaintySettings) -> FacetUncertainty:
    """The per-facet uncertainties of ``region`` under ``settings``."""
    m = len(region.facets)
    if settings.model == "none":
        return FacetUncertainty(settings, np.zeros(m))
    if settings.model == "fixed":
        missing = sorted({f.family for f in region.facets} - set(settings.sigma_by_family))
        if missing:
            raise InputError(None, "--sigma", f"no sigma for {', '.join(missing)}",
                             "e.g. --sigma t-derivative=0.2,second-derivative=0.2")
        sig = np.array([settings.sigma_by_family[f.family] for f in region.facets], dtype=float)
        if (sig <= 0).any() or not np.isfinite(sig).all():
            raise InputError(None, "--sigma", "sigmas must be positive and finite", "")
        return FacetUncertainty(settings, sig)
    from eftsieve.theories import get_theory

    theory = get_theory(region.theory)
    lam = settings.breakdown_mev
    if lam is None:  # the theory's breakdown scale
        lam = theory.default_breakdown_mev(region)
    q, coef = theory.power_counting(region, lam)
    b = np.abs(np.array([f.offset for f in region.facets], dtype=float))
    sigma_unit = b * q**2 / np.sqrt(1 - q**4)
    post = scale_posterior(coef, settings.nu0, settings.tau0)
    return FacetUncertainty(settings, sigma_unit, q, post, coef, lam)
