"""The importance-sampling refit (impose/importance.py) against independent references:
scipy.stats.truncnorm for a Gaussian likelihood, and scipy.integrate.quad for a
non-Gaussian one (the truncated posterior's mean by numerical quadrature)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, stats

from eftsieve.impose.importance import importance_refit, kish_ess


def test_gaussian_likelihood_gives_equal_weights_and_truncnorm_moments():
    # posterior N(0.3, 0.5^2) truncated to x >= 0.6, uniform prior box [-5, 5]
    mu, sd, cut = 0.3, 0.5, 0.6

    def smooth(x):
        return -0.5 * ((x[:, 0] - mu) / sd) ** 2

    a = np.array([[1.0], [1.0], [-1.0]])
    b = np.array([cut, -5.0, -5.0])
    res, why = importance_refit(smooth, a, b, [(-5.0, 5.0)], np.array([True]),
                                np.array([1.0]), 40_000, np.random.default_rng(1))
    assert res is not None, why
    assert res.ess == pytest.approx(40_000, rel=1e-9)  # exact proposal: constant weights
    ref = stats.truncnorm((cut - mu) / sd, (5 - mu) / sd, loc=mu, scale=sd)
    mean = float(res.weights @ res.x[:, 0])
    assert mean == pytest.approx(ref.mean(), abs=4 * ref.std() / np.sqrt(40_000))
    assert (res.x[:, 0] >= cut).all()


def test_non_gaussian_likelihood_matches_quadrature():
    # a skewed log-likelihood (log-gamma shape) truncated to x >= 0.5 in the box [0, 20]
    def smooth(x):
        t = x[:, 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(t > 0, 3.0 * np.log(np.maximum(t, 1e-300)) - 1.5 * t, -np.inf)

    a = np.array([[1.0], [1.0], [-1.0]])
    b = np.array([0.5, 0.0, -20.0])
    res, why = importance_refit(smooth, a, b, [(0.0, 20.0)], np.array([True]),
                                np.array([2.0]), 60_000, np.random.default_rng(2))
    assert res is not None, why

    def dens(t):
        return np.exp(3.0 * np.log(t) - 1.5 * t)

    z = integrate.quad(dens, 0.5, 20.0)[0]
    mean_ref = integrate.quad(lambda t: t * dens(t), 0.5, 20.0)[0] / z
    mean = float(res.weights @ res.x[:, 0])
    sd = np.sqrt(float(res.weights @ (res.x[:, 0] - mean) ** 2))
    assert mean == pytest.approx(mean_ref, abs=5 * sd / np.sqrt(res.ess))
    assert res.ess > 0.3 * 60_000


def test_refuses_when_the_weights_are_degenerate():
    # a bimodal target far from any single Gaussian: the importance sample is refused
    def smooth(x):
        t = x[:, 0]
        return np.logaddexp(-0.5 * ((t + 3) / 0.05) ** 2, -0.5 * ((t - 3) / 0.05) ** 2)

    a = np.array([[1.0], [-1.0]])
    b = np.array([-5.0, -5.0])
    res, why = importance_refit(smooth, a, b, [(-5.0, 5.0)], np.array([True]),
                                np.array([0.0]), 20_000, np.random.default_rng(3))
    assert res is None and why


def test_kish_ess_reference_values():
    # Kish (1965): equal weights give n; one non-zero weight gives 1
    assert kish_ess(np.ones(10)) == pytest.approx(10)
    assert kish_ess(np.array([0.0, 0.0, 3.0])) == pytest.approx(1)


@pytest.mark.parametrize("df", [1.5, 3.0, 10.0])
def test_pareto_khat_matches_arviz(df):
    """k-hat of our own Zhang-Stephens fit against arviz.psislw (reference library) on
    the log-weights of a Gaussian proposal for Student-t targets."""
    import arviz

    from eftsieve.impose.importance import pareto_khat

    x = np.random.default_rng(5).standard_normal(20_000) * 1.3
    logw = stats.t.logpdf(x, df) - stats.norm.logpdf(x, scale=1.3)
    with np.errstate(over="ignore"):  # arviz overflows harmlessly for light tails
        _, k_ref = arviz.psislw(logw.copy())
    assert pareto_khat(logw) == pytest.approx(float(k_ref), abs=1e-10)


def test_heavy_tailed_target_is_refused():
    """A Cauchy likelihood under a Gaussian proposal has infinite-variance weights
    (k-hat > 0.7, arXiv:1507.02646): refused, not reported."""
    def smooth(x):
        return -np.log1p(x[:, 0] ** 2)

    a = np.array([[1.0], [-1.0]])
    b = np.array([-1e3, -1e3])
    res, why = importance_refit(smooth, a, b, [(-1e3, 1e3)], np.array([True]),
                                np.array([0.0]), 20_000, np.random.default_rng(4))
    assert res is None and "k-hat" in why
