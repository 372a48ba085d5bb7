"""Theory uncertainty of the bounds: the conjugate model, soft truncation, the sigma->0 limit."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings, classify
from eftsieve.impose.core import ImposeSettings
from eftsieve.impose.soft import soft_exact
from eftsieve.stats.truncation import (
    UncertaintySettings,
    facet_uncertainty,
    prob_satisfies,
    scale_posterior,
    verdicts_from_probability,
)
from eftsieve.theories import get_theory
from tests.helpers import gaussian_fit, region

SU2 = get_theory("chpt-su2")


def test_conjugate_posterior_of_the_coefficient_scale():
    """cbar^2 | c ~ ScaledInvChi2(nu0 + k, (nu0 tau0^2 + sum c^2)/(nu0 + k)), the conjugate
    update of arXiv:1904.10581 Sec. II.B (from memory), checked against Bayes' rule by
    quadrature with the prior density written out independently."""
    c = np.array([0.8, -1.7, 0.4])
    nu0, tau0 = 1.5, 0.9
    post = scale_posterior(c, nu0, tau0)
    assert post.nu == pytest.approx(nu0 + 3)
    assert post.tau2 == pytest.approx((nu0 * tau0**2 + (c**2).sum()) / (nu0 + 3))

    def prior(v):  # scaled-inverse-chi-squared density, written out
        a = nu0 / 2
        return (nu0 * tau0**2 / 2) ** a / math.gamma(a) * v ** (-a - 1) * math.exp(
            -nu0 * tau0**2 / (2 * v))

    def unnorm(v):
        return prior(v) * np.prod(stats.norm.pdf(c, scale=math.sqrt(v)))

    z, _ = integrate.quad(unnorm, 0, np.inf, limit=200)
    for v in (0.3, 1.0, 2.5, 6.0):
        assert unnorm(v) / z == pytest.approx(post.distribution().pdf(v), rel=1e-6)


def test_sigma_grows_with_the_pion_mass():
    sig = []
    for m in (139.57, 250.0, 300.0):
        reg = SU2.build_region({"pion_masses_mev": [m]})
        fu = facet_uncertainty(reg, UncertaintySettings("power-counting"))
        # Q = M max(1, sqrt|s|, sqrt|t|)/(4 pi F_pi); the best points sit at t = 4 M^2
        assert fu.q[0] == pytest.approx(m * 2 / (4 * math.pi * 92.07), rel=1e-12)
        sig.append(fu.sigma_at_median())
    assert (np.diff(np.array(sig), axis=0) > 0).all()


def test_soft_truncation_1d_against_quadrature():
    """Posterior N(x; mu, s0^2) Phi((x - b)/sigma) for x = lbar2: mean and variance."""
    mu, s0, b, sig = 1.5, 0.5, 1.6, 0.3
    fit = gaussian_fit([0.0, mu], np.diag([1.0, s0**2]))
    reg = region(((0, 1), b))
    fu = facet_uncertainty(reg, UncertaintySettings("fixed", {"test": sig}))
    res = soft_exact(fit, reg, SU2.coordinate_map(fit, reg),
                     ImposeSettings(n_samples=60_000, seed=3), fu)

    def dens(x):
        return stats.norm.pdf(x, mu, s0) * stats.norm.cdf((x - b) / sig)

    z = integrate.quad(dens, -10, 10)[0]
    m1 = integrate.quad(lambda x: x * dens(x), -10, 10)[0] / z
    m2 = integrate.quad(lambda x: x * x * dens(x), -10, 10)[0] / z - m1**2
    x = res.samples[:, 1]
    assert x.mean() == pytest.approx(m1, abs=5 * math.sqrt(m2 / len(x)))
    assert x.var() == pytest.approx(m2, rel=0.03)
    assert res.figures["p_inside_before"] == pytest.approx(z, abs=0.01)


def test_sigma_to_zero_reduces_to_hard_edges():
    mean, cov = np.array([0.0, 1.2]), np.array([[1.0, 0.3], [0.3, 0.25]])
    reg = region(((1, 2), 3.0), ((0, 1), 0.8))
    fit = gaussian_fit(mean, cov)
    tiny = UncertaintySettings("fixed", {"test": 1e-12})
    hard = run_check(fit, reg, CheckSettings(draws=40_000, seed=2), None)
    soft = run_check(fit, reg, CheckSettings(draws=40_000, seed=2), None, None, tiny)
    assert soft.summary["theory_uncertainty"]["p_inside"] == pytest.approx(
        hard.summary["p_inside_mc"], abs=1e-12)
    rng = np.random.default_rng(0)
    y = rng.normal(size=(5000, 2)) + [0, 1]
    fu = facet_uncertainty(reg, tiny)
    v_soft = verdicts_from_probability(prob_satisfies(y, reg, fu), tiny)
    v_hard = classify(y, reg, band=0.0).verdict
    away = np.abs(reg.margins(y)).min(axis=1) > 1e-9
    assert np.array_equal(v_soft[away], v_hard[away])


def test_model_none_leaves_check_unchanged():
    fit = gaussian_fit([0.0, 1.2], np.eye(2) * 0.3)
    reg = region(((0, 1), 1.0))
    a = run_check(fit, reg, CheckSettings(draws=10_000), None).summary
    b = run_check(fit, reg, CheckSettings(draws=10_000), None, None,
                  UncertaintySettings("none")).summary
    assert "theory_uncertainty" not in b
    assert {k: v for k, v in a.items()} == {k: v for k, v in b.items()}


def test_power_counting_p_inside_differs_and_is_reported():
    fit = gaussian_fit([-2.4, 3.9], np.array([[1.44, -0.162], [-0.162, 0.2025]]))
    reg = SU2.build_region({})
    res = run_check(fit, reg, CheckSettings(draws=20_000), None, None,
                    UncertaintySettings("power-counting"))
    tu = res.summary["theory_uncertainty"]
    assert 0 < tu["p_inside"] < 1 and tu["n_uncertain"] > 0
    assert tu["hard"]["p_inside"] == res.summary["p_inside"]
    assert res.summary["n_inside"] + res.summary["n_outside"] + res.summary["n_uncertain"] \
        + res.summary["n_marginal"] == 20_000


@pytest.mark.parametrize("sampler", ["importance", "mcmc"])
def test_soft_refit_1d_against_quadrature(sampler):
    """The refit with log P(x) in the prior reproduces the soft-truncated posterior."""
    from eftsieve.fit.model import Prior
    from eftsieve.impose.refit import run_refit
    from eftsieve.impose.soft import log_soft_indicator

    mu, s0, b, sig = 1.5, 0.5, 1.6, 0.3
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    fit = gaussian_fit([0.0, mu], np.diag([1.0, s0**2]), prior=prior)
    reg = region(((0, 1), b))
    fu = facet_uncertainty(reg, UncertaintySettings("fixed", {"test": sig}))
    cmap = SU2.coordinate_map(fit, reg)

    def loglike(x):
        return -0.5 * (x[:, 0] ** 2 + ((x[:, 1] - mu) / s0) ** 2)

    res = run_refit(fit, reg, cmap, loglike, ImposeSettings(
        mode="refit", n_samples=3000, walkers=24, seed=4, progress=False, sampler=sampler),
        "toy", None, log_soft_indicator(reg, cmap, fu))

    def dens(x):
        return stats.norm.pdf(x, mu, s0) * stats.norm.cdf((x - b) / sig)

    z = integrate.quad(dens, -10, 10)[0]
    m1 = integrate.quad(lambda x: x * dens(x), -10, 10)[0] / z
    sd = math.sqrt(integrate.quad(lambda x: x * x * dens(x), -10, 10)[0] / z - m1**2)
    assert res.figures["converged"] and res.figures["truncation"] == "soft"
    w = (np.full(len(res.samples), 1 / len(res.samples)) if res.weights is None
         else res.weights)
    assert w @ res.samples[:, 1] == pytest.approx(m1, abs=5 * sd / math.sqrt(res.figures["ess"]))
    assert res.samples[:, 1].min() < b      # soft: points below the hard edge are allowed
