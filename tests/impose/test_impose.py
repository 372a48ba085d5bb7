"""impose: exact truncation against scipy.stats, reweighting, and the emcee refit."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, stats

from eftsieve.api import load_fit
from eftsieve.errors import ConvergenceWarning, SamplingError
from eftsieve.fit.model import Prior
from eftsieve.impose.core import ImposeSettings, exact, reweight
from eftsieve.impose.refit import run_refit
from eftsieve.theories import get_theory
from tests.helpers import gaussian_fit, region

SU2 = get_theory("chpt-su2")


def test_exact_1d_marginal_is_truncnorm(rng):
    mean, cov = np.array([0.5, 1.0]), np.diag([2.0, 0.25])
    fit = gaussian_fit(mean, cov)
    reg = region(((0, 1), 1.3))
    res = exact(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings(n_samples=40_000, seed=5))
    a = (1.3 - 1.0) / 0.5
    ref = stats.truncnorm(a, np.inf, loc=1.0, scale=0.5)
    x = res.samples[:, 1]
    assert x.min() >= 1.3
    assert x.mean() == pytest.approx(ref.mean(), abs=4 * ref.std() / np.sqrt(len(x)))
    assert x.var() == pytest.approx(ref.var(), rel=0.03)
    assert stats.kstest(x, ref.cdf).pvalue > 1e-3
    # the unconstrained coordinate keeps its normal marginal
    assert stats.kstest(res.samples[:, 0], stats.norm(0.5, np.sqrt(2.0)).cdf).pvalue > 1e-3
    assert res.figures["p_inside_before"] == pytest.approx(stats.norm.sf(a), rel=1e-6)


def test_exact_wedge_normalisation_and_moments():
    mean, cov = np.array([0.0, 1.0]), np.array([[1.0, 0.3], [0.3, 0.5]])
    reg = region(((0, 1), 1.5), ((1, 2), 4.0))
    fit = gaussian_fit(mean, cov)
    res = exact(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings(n_samples=50_000, seed=2))
    a = np.array([[0.0, 1.0], [1.0, 2.0]])
    b = np.array([1.5, 4.0])
    p_ref = stats.multivariate_normal(-a @ mean, a @ cov @ a.T).cdf(-b)
    assert res.figures["p_inside_before"] == pytest.approx(p_ref, rel=2e-3)
    pdf = stats.multivariate_normal(mean, cov).pdf

    def mom(f):
        val, _ = integrate.dblquad(lambda y, x: f(x, y) * pdf([x, y]), -12, 12,
                                   lambda x: max(1.5, (4 - x) / 2), lambda x: 12)
        return val / p_ref

    m1, m2 = mom(lambda x, y: x), mom(lambda x, y: y)
    n = len(res.samples)
    sd = res.samples.std(axis=0)
    assert res.samples[:, 0].mean() == pytest.approx(m1, abs=5 * sd[0] / np.sqrt(n))
    assert res.samples[:, 1].mean() == pytest.approx(m2, abs=5 * sd[1] / np.sqrt(n))
    assert reg.contains(res.samples).all()


def test_exact_stays_efficient_at_tiny_probability():
    mean, cov = np.array([-6.0, -6.0]), np.eye(2) * 0.5
    reg = region(((0, 1), 0.0), ((1, 0), 0.0))
    fit = gaussian_fit(mean, cov)
    res = exact(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings(n_samples=5000, seed=1))
    p_ref = stats.norm.sf(6 / np.sqrt(0.5)) ** 2
    assert res.figures["p_inside_before"] == pytest.approx(p_ref, rel=0.02)
    assert res.figures["acceptance"] > 0.3
    assert len(res.samples) == 5000


def _samples_fit(tmp_path, n, shift):
    rng = np.random.default_rng(0)
    frame = pd.DataFrame({"lbar1": rng.normal(0, 1, n), "lbar2": rng.normal(shift, 1, n)})
    frame.to_parquet(tmp_path / "s.parquet")
    (tmp_path / "c.yaml").write_text(
        "format_version: 1\nname: rw\ntheory: chpt-su2\nkinematics: {pion_mass_mev: 139.57}\n"
        "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
        "samples: {path: s.parquet}\n")
    return load_fit(tmp_path / "c.yaml"), frame


def test_reweight_keeps_inside_rows_and_accounts_for_all(tmp_path):
    fit, frame = _samples_fit(tmp_path, 20_000, 1.0)
    reg = region(((0, 1), 1.0))
    res = reweight(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings())
    inside = frame["lbar2"].to_numpy() >= 1.0
    assert res.figures["n_samples"] + res.figures["n_dropped"] == res.figures["n_read"] == 20_000
    assert res.rows.tolist() == np.nonzero(inside)[0].tolist()
    ref = stats.truncnorm(0.0, np.inf, loc=1.0, scale=1.0)
    assert res.samples[:, 1].mean() == pytest.approx(ref.mean(), abs=0.03)


def test_reweight_refuses_too_few_effective_samples(tmp_path):
    fit, _ = _samples_fit(tmp_path, 5000, -3.0)
    reg = region(((0, 1), 1.0))
    with pytest.raises(SamplingError, match="refit"):
        reweight(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings(min_ess=400))


@pytest.mark.parametrize("sampler", ["mcmc", "importance"])
def test_refit_linear_gaussian_toy(sampler):
    """Likelihood N(theta; mu, sigma^2 I) under a wide box prior truncated by lbar2 >= c:
    the posterior is N(mu1, sigma^2) x truncnorm (scipy.stats.truncnorm)."""
    mu, sig, c = np.array([0.3, 1.0]), 0.4, 1.2
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    fit = gaussian_fit(mu, np.eye(2) * sig**2, prior=prior)
    reg = region(((0, 1), c))

    def loglike(x):
        return -0.5 * (((x - mu) / sig) ** 2).sum(axis=1)

    settings = ImposeSettings(mode="refit", n_samples=3000, walkers=24, seed=3, progress=False,
                              sampler=sampler)
    res = run_refit(fit, reg, SU2.coordinate_map(fit, reg), loglike, settings, "toy")
    s = res.figures
    if sampler == "mcmc":
        assert s["converged"] and 0.3 < s["acceptance"] < 0.9
    else:  # a Gaussian likelihood: the proposal is the target, every weight equal
        assert s["ess"] == pytest.approx(len(res.samples), rel=1e-6)
    ref = stats.truncnorm((c - mu[1]) / sig, np.inf, loc=mu[1], scale=sig)
    ess = s["ess"]
    x = res.samples
    w = np.full(len(x), 1 / len(x)) if res.weights is None else res.weights
    mean = w @ x
    assert x[:, 1].min() >= c
    assert mean[1] == pytest.approx(ref.mean(), abs=5 * ref.std() / np.sqrt(ess))
    assert mean[0] == pytest.approx(mu[0], abs=5 * sig / np.sqrt(ess))
    assert np.sqrt(w @ (x[:, 1] - mean[1]) ** 2) == pytest.approx(ref.std(), rel=0.1)


def test_refit_refuses_to_call_a_short_chain_converged():
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    fit = gaussian_fit([0.0, 2.0], np.eye(2), prior=prior)
    reg = region(((0, 1), 1.0))
    settings = ImposeSettings(mode="refit", n_samples=60, walkers=8, seed=0, progress=False,
                              sampler="mcmc")
    with pytest.warns(ConvergenceWarning, match="not converged"):
        res = run_refit(fit, reg, SU2.coordinate_map(fit, reg),
                        lambda x: -0.5 * ((x - [0, 2]) ** 2).sum(axis=1), settings, "toy")
    assert res.figures["converged"] is False


def _chain_fit(tmp_path, rho, n):
    """A stationary Gaussian AR(1) chain in lbar2 (lbar1 independent), rows in draw order."""
    from scipy.signal import lfilter

    rng = np.random.default_rng(4)
    e = rng.standard_normal(n) * np.sqrt(1 - rho**2)
    e[0] = rng.standard_normal()
    frame = pd.DataFrame({"lbar1": rng.normal(0, 1, n),
                          "lbar2": 1.0 + lfilter([1.0], [1.0, -rho], e)})
    frame.to_parquet(tmp_path / "s.parquet")
    (tmp_path / "c.yaml").write_text(
        "format_version: 1\nname: chain\ntheory: chpt-su2\nkinematics: {pion_mass_mev: 139.57}\n"
        "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
        "samples: {path: s.parquet}\n")
    return load_fit(tmp_path / "c.yaml")


def test_reweight_tau_of_an_ar1_chain(tmp_path):
    # a facet far below every row keeps them all: the truncated mean is the chain mean,
    # whose integrated autocorrelation time is (1 + rho)/(1 - rho) (common practice)
    rho = 0.9
    fit = _chain_fit(tmp_path, rho, 1 << 18)
    reg = region(((0, 1), -50.0))
    s = reweight(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings()).figures
    assert s["n_dropped"] == 0
    assert s["tau_rows"] == pytest.approx((1 + rho) / (1 - rho), rel=0.2)
    assert s["ess_autocorr"] == pytest.approx(s["ess"] / s["tau_rows"])   # significant


def test_reweight_of_independent_rows_has_tau_near_one(tmp_path):
    fit, _ = _samples_fit(tmp_path, 50_000, 1.0)
    reg = region(((0, 1), 1.0))
    s = reweight(fit, reg, SU2.coordinate_map(fit, reg), ImposeSettings()).figures
    assert 0.75 < s["tau_rows"] < 1.35
    assert s["ess_autocorr"] == s["ess"]     # a tau within the noise of 1 counts as 1


def test_reweight_floor_counts_the_autocorrelation_of_the_rows(tmp_path):
    # Kish's ESS of the kept rows is ~2,000, but the rows are correlated (tau ~ 10 for the
    # truncated means): ~200 independent draws, below the floor
    fit = _chain_fit(tmp_path, 0.95, 8192)
    reg = region(((0, 1), 1.8))
    cmap = SU2.coordinate_map(fit, reg)
    with pytest.raises(SamplingError, match="autocorrelation"):
        reweight(fit, reg, cmap, ImposeSettings(min_ess=400))


def test_significant_tau_ignores_noise_around_one():
    from eftsieve.impose.core import significant_tau

    # 101 batches: relative error sqrt(2/100) = 0.141, threshold 1 + 2 * 0.141 = 1.283
    assert significant_tau(1.2, 101) == 1.0
    assert significant_tau(1.5, 101) == 1.5
    assert significant_tau(0.8, 101) == 1.0
    assert significant_tau(None, 0) == 1.0
