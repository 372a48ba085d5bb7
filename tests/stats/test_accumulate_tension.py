"""Tension QP and chi-bar-squared weights against closed forms; batch-means errors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from eftsieve.stats.accumulate import Accumulator
from eftsieve.stats.tension import chibar2_sf, closest_point, cone_weights, tension
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


# ---- batch means: the Monte-Carlo error of p_inside for correlated draws ---------------
def _accumulate(inside, w=None, chunk=None):
    # ``chunk`` is how a reader would cut the rows; blocks are cut the same whatever it is
    y = np.zeros((len(inside), 1))
    verdict = np.where(inside, 0, 2).astype(np.int8)
    return Accumulator.from_arrays(y, w, verdict, np.asarray(inside))


def _sign_tau(rho, terms=2000):
    """Integrated autocorrelation time of 1{x > 0} for a stationary Gaussian AR(1).

    The indicators of two standard normals with correlation r have correlation
    (2/pi) arcsin(r) (Sheppard, Phil. Trans. R. Soc. A 192 (1899) 101: P(X > 0, Y > 0)
    = 1/4 + arcsin(r)/(2 pi)); the lag-k correlation of the AR(1) is rho^k.
    """
    k = np.arange(1, terms)
    return 1.0 + 2.0 * float(np.sum(2 / np.pi * np.arcsin(rho**k)))


def test_batch_means_of_independent_draws_give_tau_one():
    rng = np.random.default_rng(11)
    n = 1 << 17
    inside = rng.random(n) < 0.3
    w = rng.exponential(size=n)
    bm = _accumulate(inside, w).batch_means()
    assert bm.n_batches >= 400
    assert 0.8 < bm.tau < 1.25          # the batch-means variance estimate is ~6% noisy


def test_batch_means_of_an_ar1_chain_against_sheppard():
    rng = np.random.default_rng(5)
    rho, n = 0.9, 1 << 19
    from scipy.signal import lfilter

    e = rng.standard_normal(n) * math.sqrt(1 - rho**2)
    e[0] = rng.standard_normal()        # start in the stationary distribution
    x = lfilter([1.0], [1.0, -rho], e)
    acc = _accumulate(x > 0)
    bm = acc.batch_means()
    tau = _sign_tau(rho)
    assert 10 < tau < 14                # a long correlation, far from independent draws
    assert bm.tau == pytest.approx(tau, rel=0.2)
    p = acc.p_inside()[0]
    assert bm.std_error == pytest.approx(math.sqrt(p * (1 - p) * tau / n), rel=0.12)


def test_batch_means_do_not_depend_on_chunk_sizes():
    rng = np.random.default_rng(2)
    n = 200_003
    inside, w = rng.random(n) < 0.6, rng.random(n) + 0.5
    ref = _accumulate(inside, w).batch_means()
    for chunk in (1000, 65_537, 99_999):
        assert _accumulate(inside, w, chunk).batch_means() == ref


def test_too_few_rows_give_no_batch_means_estimate():
    bm = _accumulate(np.arange(1000) % 3 == 0).batch_means()
    assert bm.n_batches < 20 and math.isnan(bm.std_error)
    assert bm.to_dict()["p_inside_mc_err_batch"] is None
    assert bm.to_dict()["tau_inside"] is None


def test_plane_cone_with_redundant_rows_matches_monte_carlo():
    """Several facets through one vertex of a 2-D region: the wedge closed form on the two
    bounding rows equals the Monte-Carlo active-set weights of all rows."""
    from eftsieve.stats.tension import _cone_weights_mc

    ang = np.array([0.2, 0.5, 0.9, 1.3])
    g = np.column_stack([np.cos(ang), np.sin(ang)])
    w = cone_weights(g, np.random.default_rng(1))
    theta = math.pi - (1.3 - 0.2)                 # opening angle of the bounding pair
    np.testing.assert_allclose(w, [0.5 - theta / (2 * math.pi), 0.5, theta / (2 * math.pi)],
                               atol=1e-12)
    mc = _cone_weights_mc(g, np.random.default_rng(2), 200_000)
    np.testing.assert_allclose(w, mc, atol=5e-3)
    # rows in every direction: a cone without interior is left to the Monte Carlo
    h = np.array([[1.0, 0.0], [-1.0, 0.1], [0.0, -1.0]])
    assert cone_weights(h, np.random.default_rng(3)).sum() == pytest.approx(1.0)


def test_tension_of_an_inside_mean_is_one():
    reg = region(((0, 1), 1.0), ((1, 0), -2.0), ((1, 1), 0.5))
    t = tension(np.array([0.0, 3.0]), np.eye(2) * 0.1, reg, np.random.default_rng(0))
    assert t.mahalanobis_min == pytest.approx(0.0, abs=1e-6)
    assert t.p_value == 1.0 and t.sigma == 0.0


def test_nnls_weights_of_an_orthant_are_binomial():
    """The orthant of R^k with identity covariance: w_i = C(k, i)/2^k (Silvapulle & Sen
    2005, Sec. 3.4; here against scipy.stats.binom), with the orthant's normals repeated
    and mixed with redundant rows so that the NNLS path (many rows) is taken."""
    from eftsieve.stats.tension import MAX_ACTIVE_SETS, _cone_weights_nnls

    k = 8
    rng = np.random.default_rng(5)
    extra = np.abs(rng.normal(size=(40, k)))            # redundant: implied by the orthant
    g = np.vstack([np.eye(k), extra / np.linalg.norm(extra, axis=1)[:, None]])
    assert math.comb(len(g), k) > MAX_ACTIVE_SETS       # cone_weights takes the NNLS path
    w = cone_weights(g, np.random.default_rng(6))
    np.testing.assert_allclose(w, sps.binom.pmf(np.arange(k + 1), k, 0.5), atol=0.012)
    # and the NNLS path agrees with the active-set enumeration on a small cone
    small = np.vstack([np.eye(3), [[1.0, 1.0, -0.5]]])
    small /= np.linalg.norm(small, axis=1)[:, None]
    np.testing.assert_allclose(_cone_weights_nnls(small, np.random.default_rng(7), 20_000),
                               cone_weights(small, np.random.default_rng(8), n=200_000),
                               atol=0.012)


def test_tension_of_a_many_facet_cone_uses_its_apex():
    """A cone with many facets (offsets 0): the least favourable point is the apex, whose
    tangent cone is the cone itself, so no vertex enumeration is needed.  For the orthant
    of R^6 (with redundant rows) and a mean at -d e_1, the distance is d and the p-value
    sum_i C(6, i)/2^6 P(chi2_(6-i) >= d^2) (weights of the polar cone reversed)."""
    from eftsieve.region.model import Facet, Region

    k, d = 6, 2.5
    rng = np.random.default_rng(9)
    extra = np.abs(rng.normal(size=(60, k)))
    normals = np.vstack([np.eye(k), extra / np.linalg.norm(extra, axis=1)[:, None]])
    names = tuple(f"c{i}" for i in range(k))
    reg = Region("test", names, {"name": "none"}, tuple(
        Facet(tuple(n), 0.0, "test", f"f{i}", {}) for i, n in enumerate(normals)))
    mean = np.zeros(k)
    mean[0] = -d
    t = tension(mean, np.eye(k), reg, np.random.default_rng(10))
    assert t.cone == "apex"
    assert t.mahalanobis_min == pytest.approx(d, rel=1e-6)
    w = sps.binom.pmf(np.arange(k + 1), k, 0.5)[::-1]
    want = sum(w[i] * sps.chi2.sf(d**2, i) for i in range(1, k + 1))
    assert t.p_value == pytest.approx(want, abs=0.01)
