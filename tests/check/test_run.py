"""Verdicts, counts and the probability inside, against scipy.stats."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from eftsieve.api import load_fit
from eftsieve.check.run import run_check
from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, CheckSettings, classify
from tests.helpers import gaussian_fit, region


def test_verdicts_on_constructed_points():
    reg = region(((0, 1), 1.0), ((1, 2), 4.0))
    pts = np.array([[10.0, 5.0],      # inside
                    [10.0, 1.0],      # exactly on facet 0 -> marginal
                    [10.0, 1.0005],   # within the band -> marginal
                    [10.0, 0.5],      # outside facet 0
                    [-10.0, 3.0]])    # outside facet 1
    v = classify(pts, reg, band=1e-3)
    assert v.verdict.tolist() == [INSIDE, MARGINAL, MARGINAL, OUTSIDE, OUTSIDE]
    assert v.worst.tolist()[3:] == [0, 1]
    assert v.min_margin[1] == 0.0
    assert v.min_margin[4] == pytest.approx((-10 + 6 - 4) / np.sqrt(5))
    assert sum(v.counts().values()) == len(pts)
    assert v.satisfies.tolist() == [True, True, True, False, False]


def test_band_zero_puts_only_exact_boundary_points_in_marginal():
    reg = region(((0, 1), 1.0))
    v = classify(np.array([[0.0, 1.0], [0.0, 1.0 + 1e-12], [0.0, 1 - 1e-12]]), reg, band=0.0)
    assert v.verdict.tolist() == [MARGINAL, INSIDE, OUTSIDE]


def test_p_inside_half_plane_against_norm():
    mean, cov = np.array([0.0, 1.2]), np.array([[1.0, 0.3], [0.3, 0.25]])
    reg = region(((1, 2), 3.0))
    res = run_check(gaussian_fit(mean, cov), reg, CheckSettings(draws=100_000, seed=4), None)
    n = np.array([1.0, 2.0])
    exact = stats.norm.sf((3.0 - n @ mean) / np.sqrt(n @ cov @ n))
    s = res.summary
    assert s["p_inside"] == pytest.approx(exact, rel=1e-3)
    assert abs(s["p_inside_mc"] - exact) < 4 * s["p_inside_mc_err"]
    assert s["n_inside"] + s["n_marginal"] + s["n_outside"] == s["n_total"] == 100_000


def test_p_inside_wedge_against_multivariate_normal_cdf():
    mean, cov = np.array([0.5, 2.0]), np.array([[2.0, -0.4], [-0.4, 0.5]])
    a = np.array([[0.0, 1.0], [1.0, 2.0]])
    b = np.array([1.8, 5.0])
    reg = region(((0, 1), 1.8), ((1, 2), 5.0))
    res = run_check(gaussian_fit(mean, cov), reg, CheckSettings(draws=50_000), None)
    # P(A x >= b) = P(-A x <= -b): y = -A x ~ N(-A mean, A cov A^T)
    exact = stats.multivariate_normal(-a @ mean, a @ cov @ a.T).cdf(-b)
    assert res.summary["p_inside"] == pytest.approx(exact, rel=2e-3)


def test_chunked_and_in_memory_runs_agree(tmp_path):
    rng = np.random.default_rng(8)
    frame = pd.DataFrame({"lbar1": rng.normal(0, 2, 150_000), "lbar2": rng.normal(2, 1, 150_000),
                          "w": rng.uniform(0, 1, 150_000)})
    frame.to_parquet(tmp_path / "s.parquet", row_group_size=5000)
    (tmp_path / "c.yaml").write_text(
        "format_version: 1\nname: chunks\ntheory: chpt-su2\nkinematics: {pion_mass_mev: 139.57}\n"
        "parameters: [{name: lbar1, convention: lbar}, {name: lbar2, convention: lbar}]\n"
        "samples: {path: s.parquet, weight_column: w}\n")
    fit = load_fit(tmp_path / "c.yaml")
    reg = region(((0, 1), 1.0), ((1, 2), 4.0))
    outs = []
    for rows in (7000, 200_000):
        d = tmp_path / f"out{rows}"
        res = run_check(fit, reg, CheckSettings(chunk_rows=rows), d)
        s = {k: v for k, v in res.summary.items() if k != "settings"}
        outs.append((json.dumps(s, sort_keys=True, default=str),
                     (d / "flagged.csv").read_text()))
    assert outs[0][0] == outs[1][0]
    assert outs[0][1] == outs[1][1]
    flagged = pd.read_csv(tmp_path / "out7000" / "flagged.csv")
    y = frame[["lbar1", "lbar2"]].to_numpy()
    expected = ~reg.contains(y) | (np.abs(reg.margins(y)).min(axis=1) <= 1e-3)
    assert flagged["row"].tolist() == np.nonzero(expected)[0].tolist()


def test_weighted_ess_and_error():
    w = np.array([1.0, 1.0, 2.0, 0.0])
    from eftsieve.stats.accumulate import Accumulator

    y = np.zeros((4, 2))
    acc = Accumulator.from_arrays(y, w, np.array([0, 0, 2, 2], dtype=np.int8),
                                  np.array([True, True, False, False]))
    assert acc.ess() == pytest.approx(16 / 6)
    p, err = acc.p_inside()
    assert p == pytest.approx(0.5)
    # delta method: sqrt(sum w^2 (I-p)^2)/sum w = sqrt(0.25 + 0.25 + 4*0.25)/4
    assert err == pytest.approx(np.sqrt(1.5) / 4)


def test_chpt_su3_default_band_fits_the_size_of_the_lecs():
    """Regression: the 1e-3 band of O(1) coordinates made every L_i^r (O(1e-3)) point
    marginal; chpt-su3 regions now default to 1e-6, and --band still overrides."""
    from pathlib import Path

    from eftsieve.theories import get_theory

    card = Path(__file__).parents[2] / "data_examples" / "aurora_su3_gaussian.yaml"
    fit = load_fit(card)
    theory = get_theory("chpt-su3")
    reg = theory.build_region(theory.region_settings_for_fit(fit))
    s = run_check(fit, reg, CheckSettings(draws=20_000, seed=2), None).summary
    assert s["settings"]["marginal_band"] == 1e-6
    assert s["n_marginal"] < 0.01 * s["n_total"]
    assert s["n_inside"] > 0 and s["n_outside"] > 0
    wide = run_check(fit, reg, CheckSettings(draws=20_000, seed=2, marginal_band=1e-3),
                     None).summary
    assert wide["settings"]["marginal_band"] == 1e-3
    assert wide["n_marginal"] > 0.9 * wide["n_total"]
    assert CheckSettings().band(region(((0, 1), 1.0))) == 1e-3      # chpt-su2 (lbar)
    from eftsieve.region.model import Facet, Region

    lr = Region("chpt-su2", ("l1", "l2"), {"name": "lr", "mu_mev": 770.0},
                (Facet((0.0, 1.0), -4.5e-4, "t-derivative", "pi+ pi0", {"s": 0.0, "t": 4.0}),))
    assert CheckSettings().band(lr) == 1e-6     # l_i^r are O(1e-3) too


def test_bayes_factor_against_closed_forms():
    """B = P_post(inside)/P_prior(inside) for a uniform box prior and a Gaussian posterior.

    Region lbar2 >= 1, lbar1 + 2 lbar2 >= 3 inside the box [-10, 10]^2: the allowed area
    is int_1^6.5 (7 + 2 y) dy + 3.5 * 20 = 149.75 of 400 (worked by hand), and
    P_post(inside) = P(b - A y <= 0) from scipy.stats.multivariate_normal.cdf.
    """
    from eftsieve.fit.model import Prior

    prior = Prior({"lbar1": "uniform", "lbar2": "uniform"},
                  {"lbar1": (-10.0, 10.0), "lbar2": (-10.0, 10.0)})
    mean, cov = np.array([0.5, 1.1]), np.array([[0.5, 0.1], [0.1, 0.2]])
    fit = gaussian_fit(mean, cov, prior=prior)
    reg = region(((0, 1), 1.0), ((1, 2), 3.0))
    s = run_check(fit, reg, CheckSettings(draws=20_000, seed=4), None).summary
    a, b = np.array([[0.0, 1.0], [1.0, 2.0]]), np.array([1.0, 3.0])
    p_post = stats.multivariate_normal(b - a @ mean, a @ cov @ a.T).cdf(np.zeros(2))
    p_prior = 149.75 / 400
    assert s["p_prior_inside"] == pytest.approx(p_prior, abs=4 * s["p_prior_inside_err"])
    assert s["bayes_factor_err"] < 0.01 * s["bayes_factor"]
    assert s["bayes_factor"] == pytest.approx(p_post / p_prior, abs=4 * s["bayes_factor_err"])
