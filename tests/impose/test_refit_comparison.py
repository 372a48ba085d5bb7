"""A refit compares like with like: the same prior, data and likelihood without the
region next to the fit with it (issue 16, item 14).

Oracle: for a likelihood N(theta; mu, sigma^2 I) under a wide box prior, the chain
without positivity samples N(mu, sigma^2 I) and its fraction inside lbar2 >= c is
P = norm.sf((c - mu2) / sigma) (scipy.stats).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from eftsieve.fit.model import Prior
from eftsieve.impose.core import ImposeSettings
from eftsieve.impose.refit import run_refit
from eftsieve.report.impose_report import posterior_block
from eftsieve.theories import get_theory
from tests.helpers import gaussian_fit, region

SU2 = get_theory("chpt-su2")


def _toy(sampler: str = "auto"):
    mu, sig, c = np.array([0.3, 1.0]), 0.4, 1.2
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    # the card's own summary is deliberately different (as if from other data)
    fit = gaussian_fit([5.0, 5.0], np.eye(2), prior=prior)
    reg = region(((0, 1), c))

    def loglike(x):
        return -0.5 * (((x - mu) / sig) ** 2).sum(axis=1)

    settings = ImposeSettings(mode="refit", n_samples=3000, walkers=24, seed=5, progress=False,
                              sampler=sampler)
    card = (np.random.default_rng(0).normal(5.0, 1.0, (4000, 2)), None)
    res = run_refit(fit, reg, SU2.coordinate_map(fit, reg), loglike, settings, "toy", card)
    return res, mu, sig, c


@pytest.mark.parametrize("sampler", ["importance", "mcmc"])
def test_refit_before_is_the_same_likelihood_without_positivity(sampler: str) -> None:
    res, mu, sig, c = _toy(sampler)
    f = res.figures
    free = res.before_samples
    w = (np.full(len(free), 1 / len(free)) if res.before_weights is None
         else res.before_weights)
    ess = f["ess"]
    # the comparison sample is the untruncated posterior N(mu, sig^2 I)
    mean = w @ free
    np.testing.assert_allclose(mean, mu, atol=6 * sig / np.sqrt(ess))
    np.testing.assert_allclose(np.sqrt(w @ (free - mean) ** 2), sig, rtol=0.1)
    # and the fraction of it inside the region is the Gaussian tail beyond c
    p = stats.norm.sf((c - mu[1]) / sig)
    assert f["p_inside_before"] == pytest.approx(p, abs=max(5 * f["p_inside_before_err"], 0.02))
    assert f["converged"] and f["converged_without_positivity"]
    # the card (other data) is a reference only, not the comparison
    assert f["card"]["lbar1"]["mean"] == pytest.approx(5.0, abs=0.1)
    assert f["before"]["lbar2"]["mean"] == pytest.approx(mu[1], abs=0.1)


def test_impose_report_labels_the_comparison_honestly() -> None:
    res, *_ = _toy()
    table = posterior_block(res)[1]
    assert table.header[:4] == ("parameter", "fit card (reference; may rest on other data)",
                                "without positivity (mean +- sd)",
                                "with positivity (mean +- sd)")
