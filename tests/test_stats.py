"""Tension QP and chi-bar-squared weights against closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from eftsieve.stats import chibar2_sf, closest_point, cone_weights, tension
from tests.helpers import region


def test_tension_qp_matches_closed_form_projection():
    mean = np.array([0.0, 0.2])
    cov = np.array([[1.0, 0.4], [0.4, 0.5]])
    n, b = np.array([1.0, 2.0]), 3.0
    x, d2 = closest_point(mean, cov, n[None, :], np.array([b]))
    # projection in the metric cov^-1: x = mean + cov n (b - n.mean)/(n cov n)
    gap = b - n @ mean
    expected = mean + cov @ n * gap / (n @ cov @ n)
    np.testing.assert_allclose(x, expected, atol=1e-7)
    assert d2 == pytest.approx(gap**2 / (n @ cov @ n), rel=1e-7)


def test_half_plane_tension_p_value_is_half_chi2_1():
    mean, cov = np.array([0.0, 0.0]), np.eye(2)
    reg = region(((0, 1), 2.0))
    t = tension(mean, cov, reg, np.random.default_rng(0))
    assert t.mahalanobis_min == pytest.approx(2.0, rel=1e-7)
    # 1/2 chi2_0 + 1/2 chi2_1: P(T >= 4) = 0.5 P(chi2_1 >= 4) = P(Z >= 2)
    assert t.p_value == pytest.approx(sps.norm.sf(2.0), rel=1e-6)
    assert t.sigma == pytest.approx(2.0, rel=1e-5)


def test_inside_mean_has_no_tension():
    t = tension(np.array([0.0, 5.0]), np.eye(2), region(((0, 1), 2.0)), np.random.default_rng(0))
    assert t.mahalanobis_min == pytest.approx(0.0, abs=1e-6)
    assert t.p_value == 1.0 and t.sigma == 0.0


@pytest.mark.parametrize("rho", [-0.7, 0.0, 0.5])
def test_orthant_weights_against_kudo(rho):
    """Kudo (1963), Biometrika 50:403 (from memory): for the positive orthant of N(0, V),
    corr rho, w_2 = 1/4 + arcsin(rho)/(2 pi), w_1 = 1/2, w_0 = 1/4 - arcsin(rho)/(2 pi)."""
    cov = np.array([[1.0, rho], [rho, 1.0]])
    chol = np.linalg.cholesky(cov)
    w = cone_weights(np.eye(2) @ chol, np.random.default_rng(1))
    w2 = 0.25 + math.asin(rho) / (2 * math.pi)
    np.testing.assert_allclose(w, [0.5 - w2, 0.5, w2], atol=1e-12)


def test_monte_carlo_weights_match_closed_form_in_3d():
    """A 3-D orthant with identity covariance: w_i = C(3, i)/8 (Silvapulle & Sen 2005)."""
    w = cone_weights(np.eye(3), np.random.default_rng(2), n=200_000)
    np.testing.assert_allclose(w, np.array([1, 3, 3, 1]) / 8, atol=5e-3)


def test_chibar2_sf_limits():
    w = np.array([0.25, 0.5, 0.25])
    assert chibar2_sf(0.0, w) == pytest.approx(1.0)
    x = 3.0
    assert chibar2_sf(x, w) == pytest.approx(0.5 * sps.chi2.sf(x, 1) + 0.25 * sps.chi2.sf(x, 2))
