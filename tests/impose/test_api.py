"""impose(): the mode choice and the dispatch to one implementation.

Each mode is compared bit for bit with the implementation it must call, and the
refit through a Python callable against the truncated normal of scipy.stats.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from eftsieve.api import load_fit
from eftsieve.errors import InputError
from eftsieve.fit.model import Prior
from eftsieve.impose import core, soft
from eftsieve.impose.api import before_samples, impose
from eftsieve.impose.core import ImposeSettings
from eftsieve.stats.truncation import UncertaintySettings, facet_uncertainty
from eftsieve.theories import get_theory
from tests.helpers import gaussian_fit, region

SU2 = get_theory("chpt-su2")
REG = region(((0, 1), 1.2))


def _samples_fit(tmp_path):
    rng = np.random.default_rng(1)
    pd.DataFrame({"lbar1": rng.normal(0, 1, 4000), "lbar2": rng.normal(1.5, 1, 4000)}
                 ).to_parquet(tmp_path / "s.parquet")
    (tmp_path / "c.yaml").write_text(
        "format_version: 1\nname: rw\ntheory: chpt-su2\nkinematics: {pion_mass_mev: 139.57}\n"
        "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
        "samples: {path: s.parquet}\n")
    return load_fit(tmp_path / "c.yaml")


def test_gaussian_defaults_to_exact_and_is_the_exact_implementation():
    fit = gaussian_fit([0.3, 1.0], np.diag([1.0, 0.25]))
    settings = ImposeSettings(n_samples=5000, seed=4)
    res = impose(fit, REG, settings=settings)
    ref = core.exact(fit, REG, SU2.coordinate_map(fit, REG), settings)
    assert res.mode == "exact" and res.figures["mode"] == "exact"
    np.testing.assert_array_equal(res.samples, ref.samples)
    # and it is the truncated normal: lbar2 ~ truncnorm above 1.2 (scipy.stats)
    t = stats.truncnorm((1.2 - 1.0) / 0.5, np.inf, loc=1.0, scale=0.5)
    assert res.samples[:, 1].mean() == pytest.approx(t.mean(), abs=5 * t.std() / 70)


def test_samples_default_to_reweight(tmp_path):
    fit = _samples_fit(tmp_path)
    res = impose(fit, REG)
    ref = core.reweight(fit, REG, SU2.coordinate_map(fit, REG), ImposeSettings())
    assert res.mode == "reweight"
    np.testing.assert_array_equal(res.rows, ref.rows)


def test_mode_argument_overrides_settings_and_is_checked(tmp_path):
    fit = gaussian_fit([0.3, 1.0], np.eye(2))
    with pytest.raises(InputError, match="needs posterior samples"):
        impose(fit, REG, mode="reweight", settings=ImposeSettings(mode="exact"))
    with pytest.raises(InputError, match="unknown mode"):
        impose(fit, REG, mode="bogus")
    with pytest.raises(InputError, match="needs a likelihood"):
        impose(fit, REG, mode="refit")
    with pytest.raises(InputError, match="not both"):
        impose(fit, REG, data="obs.yaml", likelihood="m:f")


def test_theory_uncertainty_dispatches_to_the_soft_truncation():
    fit = gaussian_fit([0.3, 1.0], np.diag([1.0, 0.25]))
    unc = UncertaintySettings("fixed", {"test": 0.1})
    settings = ImposeSettings(n_samples=3000, seed=2)
    res = impose(fit, REG, settings=settings, uncertainty=unc)
    ref = soft.soft_exact(fit, REG, SU2.coordinate_map(fit, REG), settings,
                          facet_uncertainty(REG, unc))
    np.testing.assert_array_equal(res.samples, ref.samples)
    assert res.samples[:, 1].min() < 1.2   # soft edges: some draws just outside remain


def test_a_python_callable_likelihood_runs_the_refit():
    """Likelihood N(mu, sigma^2 I) under a wide box prior truncated by lbar2 >= 1.2: the
    lbar2 marginal is scipy.stats.truncnorm."""
    mu, sig = np.array([0.3, 1.0]), 0.4
    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    fit = gaussian_fit(mu, np.eye(2) * sig**2, prior=prior)

    def loglike(row):
        return -0.5 * float((((row - mu) / sig) ** 2).sum())

    res = impose(fit, REG, likelihood=loglike, settings=ImposeSettings(
        n_samples=3000, walkers=24, seed=3, progress=False))
    assert res.mode == "refit" and res.figures["likelihood"].startswith("callable ")
    t = stats.truncnorm((1.2 - mu[1]) / sig, np.inf, loc=mu[1], scale=sig)
    assert res.samples[:, 1].min() >= 1.2
    assert res.samples[:, 1].mean() == pytest.approx(
        t.mean(), abs=5 * t.std() / np.sqrt(res.figures["ess"]))


def test_before_samples_are_the_fit_itself(tmp_path):
    x, w = before_samples(gaussian_fit([0.0, 1.0], np.eye(2)), seed=0)
    assert x.shape == (20_000, 2) and w is None
    fit = _samples_fit(tmp_path)
    x, w = before_samples(fit, seed=0)
    np.testing.assert_array_equal(x, pd.read_parquet(tmp_path / "s.parquet").to_numpy())
