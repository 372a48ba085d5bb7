"""The tension QP is scale-free and handles singular covariances (issue 17, item 6-7).

Oracle: the Mahalanobis distance from a mean mu to the half-space {x : a.x >= b} is
max(0, b - a.mu) / sqrt(a^T C a) (the projection formula for a Gaussian onto one
linear constraint; common practice, e.g. any multivariate-statistics text).  It holds
for a singular C as long as a^T C a > 0.  Covariances C = s^2 C0 for s from 1e-15 to
1e15 (entries 1e-30 .. 1e30), with the mean at b + s * offset, must give the same
distance in units of sigma.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from eftsieve.region.model import Facet, Region
from eftsieve.stats.tension import tension

C0 = np.array([[1.0, 0.3], [0.3, 0.5]])
A = np.array([0.6, 0.8])          # unit normal of the facet a.x >= B
B = 2.0
SCALES = [1e-15, 1e-8, 1e-6, 1e-3, 1.0, 1e3, 1e8, 1e15]


def _half_plane() -> Region:
    return Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar", "pion_mass_mev": 139.57},
                  (Facet(tuple(A), B, "t-derivative", "test"),))


def _oracle(mu: np.ndarray, cov: np.ndarray) -> float:
    return max(0.0, B - A @ mu) / math.sqrt(A @ cov @ A)


@pytest.mark.parametrize("s", SCALES)
@pytest.mark.parametrize("sigmas_out", [-2.5, 0.7, 3.0])
def test_distance_is_scale_free(s, sigmas_out):
    """Mean outside by 3.0 or 0.7 standard deviations along the normal, or inside."""
    cov = s * s * C0
    sd = math.sqrt(A @ cov @ A)
    mu = np.array([1.0, 1.0]) * (B / (A @ [1.0, 1.0])) - A * sigmas_out * sd
    ten = tension(mu, cov, _half_plane(), np.random.default_rng(0))
    expected = _oracle(mu, cov)
    assert ten.mahalanobis_min == pytest.approx(expected, rel=1e-6, abs=1e-9)
    if sigmas_out <= 0:
        assert ten.p_value == 1.0
    else:  # one facet: chi-bar-squared with weights (1/2, 1/2), p = chi2_1.sf(d^2) / 2
        from scipy.stats import chi2

        assert ten.p_value == pytest.approx(0.5 * chi2.sf(expected**2, 1), rel=1e-6)


@pytest.mark.parametrize("s", [1e-12, 1.0, 1e12])
def test_singular_covariance_on_a_line(s):
    """C = s^2 v v^T (a Gaussian on a line) still meets the facet: the same formula."""
    v = np.array([1.0, 1.0]) / math.sqrt(2)
    cov = s * s * np.outer(v, v)
    mu = np.array([0.5, 0.5])                       # a.mu = 0.7 < B: outside
    ten = tension(mu, cov, _half_plane(), np.random.default_rng(0))
    assert ten.mahalanobis_min == pytest.approx(_oracle(mu, cov), rel=1e-6)


def test_singular_covariance_off_the_line_is_unreachable():
    """C along e1 only, facet needs lbar2 >= 2 with the mean at lbar2 = 0: no draw can
    reach the region, the distance is infinite and p = 0."""
    region = Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar", "pion_mass_mev": 139.57},
                    (Facet((0.0, 1.0), 2.0, "t-derivative", "test"),))
    ten = tension(np.zeros(2), np.diag([1.0, 0.0]), region, np.random.default_rng(0))
    assert math.isinf(ten.mahalanobis_min)
    assert ten.p_value == 0.0
