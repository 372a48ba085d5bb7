"""Tests of the truncated multivariate normal (minimax tilting, Botev 2017).

Every reference value comes from outside the package: scipy.stats (norm, truncnorm,
multivariate_normal, kstest), scipy.integrate quadrature of the truncated density, or a
closed form written next to the check.  Stochastic checks use fixed seeds and
statistical tolerances: ``Z`` standard errors for moments, ``P_MIN`` for KS p-values.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pytest
from scipy import integrate, stats

from eftsieve.errors import SamplingError
from eftsieve.stats.tmvn import (
    DegeneratePolytopeError,
    EmptyPolytopeError,
    PolytopeInputError,
    PolytopeProbability,
    TruncatedSample,
    polytope_probability,
    sample_truncated_normal,
)

Z = 4.5  # allowed deviation in standard errors (two-sided p ~ 7e-6 per check)
P_MIN = 1e-4  # smallest acceptable KS p-value


def _rng(seed: int) -> np.random.Generator:
    return np.random.default_rng(seed)


def _check_moments(x: np.ndarray, mean: np.ndarray, var: np.ndarray) -> None:
    """Sample mean and variance per column against references, in standard errors.

    The standard error of the sample variance uses the sample fourth central moment:
    Var(s^2) ~ (mu_4 - sigma^4) / n (closed form for i.i.d. draws, from memory).
    """
    n = x.shape[0]
    dev = x - x.mean(axis=0)
    se_mean = np.sqrt(var / n)
    se_var = np.sqrt((np.mean(dev**4, axis=0) - x.var(axis=0) ** 2) / n)
    assert np.all(np.abs(x.mean(axis=0) - mean) < Z * se_mean), (x.mean(axis=0), mean)
    assert np.all(np.abs(x.var(axis=0) - var) < Z * se_var), (x.var(axis=0), var)


def _inward_rows(vertices: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows ``A x >= b`` of a convex polygon with counter-clockwise vertices."""
    edges = np.roll(vertices, -1, axis=0) - vertices
    normals = np.c_[-edges[:, 1], edges[:, 0]]  # left normal points inside
    return normals, np.einsum("ij,ij->i", normals, vertices)


def _polygon_integral(
    mean: np.ndarray, cov: np.ndarray, vertices: np.ndarray, f: Callable[..., float]
) -> float:
    """``int f(x1, x2) N(x; mean, cov) dx`` over a convex polygon by scipy.integrate.dblquad.

    The x1 range is split at the vertices so that the x2 limits are linear on each piece.
    """
    A, b = _inward_rows(vertices)
    prec = np.linalg.inv(cov)
    norm = 1.0 / (2.0 * np.pi * np.sqrt(np.linalg.det(cov)))

    def density(x2: float, x1: float) -> float:
        d = np.array([x1, x2]) - mean
        return float(f(x1, x2) * norm * np.exp(-0.5 * d @ prec @ d))

    def limit(x1: float, upper: bool) -> float:
        sel = A[:, 1] < 0 if upper else A[:, 1] > 0  # vertical edges only bound x1
        vals = (b[sel] - A[sel, 0] * x1) / A[sel, 1]
        return float(vals.min() if upper else vals.max())

    cuts = np.unique(vertices[:, 0])
    total = 0.0
    for lo, hi in zip(cuts[:-1], cuts[1:], strict=True):
        val, _ = integrate.dblquad(
            density,
            lo,
            hi,
            lambda t: limit(t, False),
            lambda t: limit(t, True),
            epsabs=0.0,
            epsrel=1e-10,
        )
        total += val
    return total


def _orthant_moments(nu: np.ndarray, s: np.ndarray, b: np.ndarray) -> tuple[float, ...]:
    """P, E[y], Cov[y] of ``y ~ N(nu, s)`` restricted to ``y >= b`` (2-D).

    The y2 integral is closed form given y1 (conditional normal; for Y ~ N(m, sd^2),
    E[1{Y>=c}] = Q(z), E[Y 1] = m Q(z) + sd phi(z), E[Y^2 1] = (m^2 + sd^2) Q(z) +
    sd (m + c) phi(z) with z = (c - m)/sd, from memory); the y1 integral is
    scipy.integrate.quad.
    """
    sd1 = np.sqrt(s[0, 0])
    slope = s[0, 1] / s[0, 0]
    sd = np.sqrt(s[1, 1] - s[0, 1] ** 2 / s[0, 0])

    def inner(t: float, power1: int, kind: int) -> float:
        m = nu[1] + slope * (t - nu[0])
        z = (b[1] - m) / sd
        q, ph = stats.norm.sf(z), stats.norm.pdf(z)
        y2 = (q, m * q + sd * ph, (m * m + sd * sd) * q + sd * (m + b[1]) * ph)[kind]
        return float(t**power1 * stats.norm.pdf(t, nu[0], sd1) * y2)

    def quad(power1: int, kind: int) -> float:
        val, _ = integrate.quad(
            inner, b[0], np.inf, args=(power1, kind), epsabs=0.0, epsrel=1e-11, limit=200
        )
        return float(val)

    p = quad(0, 0)
    m1, m2 = quad(1, 0) / p, quad(0, 1) / p
    v11, v22 = quad(2, 0) / p - m1 * m1, quad(0, 2) / p - m2 * m2
    c12 = quad(1, 1) / p - m1 * m2
    return p, m1, m2, v11, v22, c12


# --------------------------------------------------------------------------- 1-D


@pytest.mark.parametrize(
    ("lo", "hi"),
    [(1.0, np.inf), (-0.5, 2.0), (-np.inf, -0.7)],
    ids=["half-line", "interval", "upper-half-line"],
)
def test_one_dimensional_against_truncnorm(lo: float, hi: float) -> None:
    mean, var = 0.3, 2.0
    sd = np.sqrt(var)
    rows, rhs = [], []
    if np.isfinite(lo):
        rows.append([1.0])
        rhs.append(lo)
    if np.isfinite(hi):
        rows.append([-1.0])
        rhs.append(-hi)
    ref = stats.truncnorm((lo - mean) / sd, (hi - mean) / sd, loc=mean, scale=sd)
    out = sample_truncated_normal([mean], [[var]], rows, rhs, 20000, rng=_rng(1))
    assert out.samples.shape == (20000, 1)
    assert out.acceptance_rate > 0.999  # one constrained direction: exact sequential draw
    _check_moments(out.samples, np.array([ref.mean()]), np.array([ref.var()]))
    assert stats.kstest(out.samples[:, 0], ref.cdf).pvalue > P_MIN
    # reference: scipy.stats.norm.cdf difference of the standardised limits
    exact = stats.norm.cdf((hi - mean) / sd) - stats.norm.cdf((lo - mean) / sd)
    prob = polytope_probability([mean], [[var]], rows, rhs, rng=_rng(2))
    assert prob.probability == pytest.approx(exact, rel=1e-12)
    assert prob.std_error <= 1e-12 * exact


@pytest.mark.parametrize(("lo", "hi"), [(6.0, 8.0), (8.0, np.inf)], ids=["6-8sigma", "8sigma"])
def test_one_dimensional_far_tail(lo: float, hi: float) -> None:
    mean, sd = -1.0, 0.5
    rows, rhs = [[1.0]], [mean + lo * sd]
    if np.isfinite(hi):
        rows.append([-1.0])
        rhs.append(-(mean + hi * sd))
    ref = stats.truncnorm(lo, hi, loc=mean, scale=sd)
    out = sample_truncated_normal([mean], [[sd * sd]], rows, rhs, 20000, rng=_rng(3))
    assert np.all(out.samples >= rhs[0])
    _check_moments(out.samples, np.array([ref.mean()]), np.array([ref.var()]))
    assert stats.kstest(out.samples[:, 0], ref.cdf).pvalue > P_MIN
    exact = stats.norm.sf(lo) - stats.norm.sf(hi)  # scipy.stats.norm tail probabilities
    prob = polytope_probability([mean], [[sd * sd]], rows, rhs, rng=_rng(4))
    assert prob.probability == pytest.approx(exact, rel=1e-10)
    assert prob.log_probability == pytest.approx(np.log(exact), rel=1e-12)


# --------------------------------------------------------------------------- 2-D


MEAN2 = np.array([0.5, -1.0])
COV2 = np.array([[2.0, 0.6], [0.6, 1.0]])


@pytest.mark.parametrize("distance", [0.5, 3.0, 7.0])
def test_half_plane_probability_and_draws(distance: float) -> None:
    a = np.array([1.0, 2.0])
    s = np.sqrt(a @ COV2 @ a)  # sd of a.x
    b0 = a @ MEAN2 + distance * s  # Mahalanobis distance of the mean to the plane
    prob = polytope_probability(MEAN2, COV2, [a], [b0], rng=_rng(5))
    assert prob.probability == pytest.approx(stats.norm.sf(distance), rel=1e-10)
    out = sample_truncated_normal(MEAN2, COV2, [a], [b0], 20000, rng=_rng(6))
    proj = out.samples @ a
    assert np.all(proj >= b0 - 1e-9 * abs(b0))
    ref = stats.truncnorm(distance, np.inf, loc=a @ MEAN2, scale=s)
    assert stats.kstest(proj, ref.cdf).pvalue > P_MIN
    # w.x is uncorrelated with a.x (w' cov a = 0), so it keeps its N(w.mean, w' cov w) law
    w = np.array([-(COV2 @ a)[1], (COV2 @ a)[0]])
    free = (out.samples @ w - w @ MEAN2) / np.sqrt(w @ COV2 @ w)
    assert stats.kstest(free, stats.norm.cdf).pvalue > P_MIN


WEDGE_A = np.array([[1.0, 0.5], [-0.3, 1.0]])
WEDGE_COV = np.array([[1.0, 0.3], [0.3, 2.0]])
WEDGE_MEAN = np.array([0.2, -0.1])


@pytest.mark.parametrize("b", [[0.5, -0.2], [3.0, 2.5], [6.4, 6.4]], ids=["bulk", "1e-3", "1e-8"])
def test_wedge_against_orthant_cdf_and_quadrature(b: list[float]) -> None:
    rhs = np.array(b)
    nu, s = WEDGE_A @ WEDGE_MEAN, WEDGE_A @ WEDGE_COV @ WEDGE_A.T  # y = A x ~ N(nu, s)
    p_quad, m1, m2, v11, v22, c12 = _orthant_moments(nu, s, rhs)
    # P(y >= b) = P(-y <= -b): scipy.stats.multivariate_normal.cdf of -y
    p_cdf = stats.multivariate_normal.cdf(
        -rhs, mean=-nu, cov=s, abseps=1e-14, releps=1e-8, rng=_rng(0)
    )
    assert p_cdf == pytest.approx(p_quad, rel=1e-4)  # the two references agree
    prob = polytope_probability(WEDGE_MEAN, WEDGE_COV, WEDGE_A, rhs, rng=_rng(7))
    assert prob.std_error < 0.01 * prob.probability
    assert abs(prob.probability - p_quad) < Z * prob.std_error + 1e-12 * p_quad
    assert prob.log_probability == pytest.approx(np.log(prob.probability))

    out = sample_truncated_normal(WEDGE_MEAN, WEDGE_COV, WEDGE_A, rhs, 20000, rng=_rng(8))
    assert out.acceptance_rate > 0.5
    assert np.all(out.samples @ WEDGE_A.T >= rhs - 1e-9)
    a_inv = np.linalg.inv(WEDGE_A)
    mean_x = a_inv @ np.array([m1, m2])
    cov_x = a_inv @ np.array([[v11, c12], [c12, v22]]) @ a_inv.T
    _check_moments(out.samples, mean_x, np.diag(cov_x))
    assert abs(out.probability.probability - p_quad) < Z * out.probability.std_error


def test_badly_scaled_covariance() -> None:
    # variances 1e-8 and 1e8: in y = A x both constraints are O(1), y ~ N(0, [[2, 1], [1, 1]])
    cov = np.diag([1e-8, 1e8])
    A = np.array([[1e4, 1e-4], [0.0, 1e-4]])
    b = np.array([3.0, 2.0])
    p_ref = _orthant_moments(np.zeros(2), A @ cov @ A.T, b)[0]
    prob = polytope_probability(np.zeros(2), cov, A, b, rng=_rng(25))
    assert abs(prob.probability - p_ref) < Z * prob.std_error
    out = sample_truncated_normal(np.zeros(2), cov, A, b, 2000, rng=_rng(26))
    assert np.all(out.samples @ A.T >= b - 1e-9)


# --------------------------------------------------------------------------- m > d


POLY_MEAN = np.array([0.3, -0.2])
POLY_COV = np.array([[1.0, 0.4], [0.4, 1.5]])
POLYGONS = {
    "triangle-bulk": [[-0.5, -1.0], [1.5, -0.6], [0.4, 1.2]],
    "triangle-1e-6": [[4.0, 4.0], [5.5, 4.2], [4.5, 5.6]],
    "quadrilateral-1e-9": [[5.0, 5.0], [7.0, 5.5], [7.5, 7.0], [5.5, 8.0]],
    "pentagon-1e-10": [  # regular, radius 0.8 about (6.6, 5.0), rounded to 1e-6
        [7.4, 5.0],
        [6.847214, 5.760845],
        [5.952786, 5.470228],
        [5.952786, 4.529772],
        [6.847214, 4.239155],
    ],
}


@pytest.mark.parametrize("name", list(POLYGONS))
def test_polygon_against_dblquad(name: str) -> None:
    vertices = np.array(POLYGONS[name])
    A, b = _inward_rows(vertices)
    p_ref = _polygon_integral(POLY_MEAN, POLY_COV, vertices, lambda x1, x2: 1.0)
    prob = polytope_probability(POLY_MEAN, POLY_COV, A, b, rng=_rng(9))
    assert prob.std_error < 0.02 * prob.probability
    assert abs(prob.probability - p_ref) < Z * prob.std_error
    out = sample_truncated_normal(POLY_MEAN, POLY_COV, A, b, 20000, rng=_rng(10))
    assert out.acceptance_rate > 0.5
    assert np.all(out.samples @ A.T >= b - 1e-9 * np.abs(b).max())
    m1 = _polygon_integral(POLY_MEAN, POLY_COV, vertices, lambda x1, x2: x1) / p_ref
    m2 = _polygon_integral(POLY_MEAN, POLY_COV, vertices, lambda x1, x2: x2) / p_ref
    s11 = _polygon_integral(POLY_MEAN, POLY_COV, vertices, lambda x1, x2: x1 * x1) / p_ref
    s22 = _polygon_integral(POLY_MEAN, POLY_COV, vertices, lambda x1, x2: x2 * x2) / p_ref
    _check_moments(out.samples, np.array([m1, m2]), np.array([s11 - m1 * m1, s22 - m2 * m2]))


def test_many_constraints_in_four_dimensions_against_plain_monte_carlo() -> None:
    g = _rng(11)
    d, m = 4, 9
    root = g.normal(size=(d, d))
    cov = root @ root.T / d + 0.3 * np.eye(d)
    mean = g.normal(size=d)
    A = g.normal(size=(m, d))
    b = A @ mean - 1.0 * np.sqrt(np.einsum("ij,jk,ik->i", A, cov, A))
    # reference: plain Monte Carlo with numpy's multivariate normal, binomial error bar
    x = g.multivariate_normal(mean, cov, size=400_000)
    inside = np.all(x @ A.T >= b, axis=1)
    p_mc = inside.mean()
    se_mc = np.sqrt(p_mc * (1.0 - p_mc) / x.shape[0])
    prob = polytope_probability(mean, cov, A, b, rng=_rng(12))
    assert abs(prob.probability - p_mc) < Z * np.hypot(se_mc, prob.std_error)
    out = sample_truncated_normal(mean, cov, A, b, 20000, rng=_rng(13))
    assert np.all(out.samples @ A.T >= b - 1e-9)
    ref = x[inside]
    se = np.sqrt(ref.var(axis=0) / ref.shape[0] + out.samples.var(axis=0) / 20000)
    assert np.all(np.abs(out.samples.mean(axis=0) - ref.mean(axis=0)) < Z * se)


def test_three_constraints_in_five_dimensions_against_orthant_cdf() -> None:
    g = _rng(14)
    d = 5
    root = g.normal(size=(d, d))
    cov = root @ root.T / d + 0.3 * np.eye(d)
    mean = g.normal(size=d)
    A = g.normal(size=(3, d))
    b = A @ mean + 2.5 * np.sqrt(np.einsum("ij,jk,ik->i", A, cov, A))
    ref = stats.multivariate_normal.cdf(
        -b, mean=-A @ mean, cov=A @ cov @ A.T, abseps=1e-14, releps=1e-6, rng=_rng(0)
    )
    prob = polytope_probability(mean, cov, A, b, rng=_rng(15))
    assert prob.std_error < 0.01 * prob.probability
    assert prob.probability == pytest.approx(ref, rel=5e-3)


# --------------------------------------------------------------------------- spectators


def test_spectator_keeps_its_conditional_law() -> None:
    mean = np.array([0.2, -0.1, 1.0])
    cov = np.array([[1.0, 0.3, 0.5], [0.3, 1.5, -0.4], [0.5, -0.4, 2.0]])
    A = np.array([[1.0, 0.5, 0.0], [-0.4, 1.0, 0.0]])
    b = A[:, :2] @ mean[:2] + np.array([3.0, 2.5])
    out = sample_truncated_normal(mean, cov, A, b, 20000, rng=_rng(16))
    x12, x3 = out.samples[:, :2], out.samples[:, 2]
    # closed form: x3 | x12 ~ N(m3 + S31 S11^-1 (x12 - m12), S33 - S31 S11^-1 S13)
    gain = np.linalg.solve(cov[:2, :2], cov[:2, 2])
    resid = (x3 - mean[2] - (x12 - mean[:2]) @ gain) / np.sqrt(cov[2, 2] - cov[2, :2] @ gain)
    assert stats.kstest(resid, stats.norm.cdf).pvalue > P_MIN
    for col in range(2):
        assert abs(np.corrcoef(resid, x12[:, col])[0, 1]) < Z / np.sqrt(resid.size)
    # the probability only involves the (x1, x2) marginal
    a2 = A[:, :2]
    ref = stats.multivariate_normal.cdf(
        -b,
        mean=-a2 @ mean[:2],
        cov=a2 @ cov[:2, :2] @ a2.T,
        abseps=1e-14,
        releps=1e-8,
        rng=_rng(0),
    )
    prob = polytope_probability(mean, cov, A, b, rng=_rng(17))
    assert abs(prob.probability - ref) < Z * prob.std_error + 1e-6 * ref


def test_zero_rows_are_trivial_or_empty() -> None:
    A = np.array([[1.0, 0.0], [0.0, 0.0]])
    prob = polytope_probability(MEAN2, COV2, A, [1.5, -1.0], rng=_rng(18))
    exact = stats.norm.sf((1.5 - MEAN2[0]) / np.sqrt(COV2[0, 0]))
    assert prob.probability == pytest.approx(exact, rel=1e-12)
    empty = polytope_probability(MEAN2, COV2, A, [1.5, 1.0], rng=_rng(18))
    assert empty.probability == 0.0 and empty.method.startswith("exact")
    whole = polytope_probability(MEAN2, COV2, [[0.0, 0.0]], [-1.0], rng=_rng(18))
    assert whole.probability == 1.0
    free = sample_truncated_normal(MEAN2, COV2, [[0.0, 0.0]], [-1.0], 20000, rng=_rng(19))
    _check_moments(free.samples, MEAN2, np.diag(COV2))


# --------------------------------------------------------------------------- API and errors


def test_reproducible_and_serialisable() -> None:
    args = (WEDGE_MEAN, WEDGE_COV, WEDGE_A, [3.0, 2.5])
    first = sample_truncated_normal(*args, 500, rng=_rng(20))
    second = sample_truncated_normal(*args, 500, rng=_rng(20))
    assert isinstance(first, TruncatedSample)
    np.testing.assert_array_equal(first.samples, second.samples)
    assert not first.samples.flags.writeable
    data = first.to_dict()
    assert np.array_equal(np.array(data["samples"]), first.samples)
    assert data["n_proposed"] == first.n_proposed >= 500
    prob = first.probability
    assert isinstance(prob, PolytopeProbability)
    assert PolytopeProbability(**prob.to_dict()) == prob


def test_empty_polyhedron() -> None:
    A, b = [[1.0], [-1.0]], [1.0, 0.0]  # x >= 1 and x <= 0
    with pytest.raises(EmptyPolytopeError, match="empty"):
        sample_truncated_normal([0.0], [[1.0]], A, b, 10, rng=_rng(21))
    assert polytope_probability([0.0], [[1.0]], A, b, rng=_rng(21)).probability == 0.0
    tri = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
    A2, b2 = _inward_rows(tri)
    with pytest.raises(EmptyPolytopeError, match="empty"):
        sample_truncated_normal(MEAN2, COV2, -A2, -b2 + 0.5, 10, rng=_rng(21))
    with pytest.raises(DegeneratePolytopeError, match="interior"):
        sample_truncated_normal([0.0], [[1.0]], [[1.0], [-1.0]], [0.0, 0.0], 10, rng=_rng(21))


@pytest.mark.parametrize(
    ("cov", "match"),
    [
        ([[1.0, 2.0], [2.0, 1.0]], "smallest eigenvalue -1"),
        ([[1.0, 1.0], [1.0, 1.0]], "smallest eigenvalue"),
        ([[1.0, 0.1], [0.2, 1.0]], "symmetric"),
        ([[1.0, np.nan], [np.nan, 1.0]], "non-finite"),
        ([[1.0, 0.0, 0.0]] * 3, "shape"),
    ],
    ids=["indefinite", "singular", "asymmetric", "nan", "shape"],
)
def test_bad_covariance(cov: list[list[float]], match: str) -> None:
    with pytest.raises(PolytopeInputError, match=match):
        polytope_probability([0.0, 0.0], cov, [[1.0, 0.0]], [0.0], rng=_rng(22))
    with pytest.raises(ValueError, match=match):
        sample_truncated_normal([0.0, 0.0], cov, [[1.0, 0.0]], [0.0], 5, rng=_rng(22))


@pytest.mark.parametrize(
    ("mean", "A", "b", "match"),
    [
        ([0.0, 0.0], [[1.0, 0.0, 1.0]], [0.0], "A must have shape"),
        ([0.0, 0.0], [[1.0, 0.0]], [0.0, 1.0], "b must have shape"),
        ([[0.0, 0.0]], [[1.0, 0.0]], [0.0], "mean must be"),
        ([0.0, 0.0], [[1.0, np.inf]], [0.0], "A contains non-finite"),
        ([0.0, 0.0], np.zeros((0, 2)), np.zeros(0), "m >= 1"),
    ],
)
def test_bad_shapes(mean: list[float], A: list[list[float]], b: list[float], match: str) -> None:
    with pytest.raises(PolytopeInputError, match=match):
        sample_truncated_normal(mean, np.eye(2), A, b, 5, rng=_rng(23))


def test_bad_arguments_and_budget() -> None:
    args = ([0.0], [[1.0]], [[1.0]], [0.0])
    with pytest.raises(TypeError, match="Generator"):
        polytope_probability(*args, rng=np.random.RandomState(0))  # type: ignore[arg-type]
    with pytest.raises(PolytopeInputError, match="n must be"):
        sample_truncated_normal(*args, 0, rng=_rng(24))
    with pytest.raises(PolytopeInputError, match="n_draws"):
        polytope_probability(*args, rng=_rng(24), n_draws=1)
    with pytest.raises(SamplingError, match="max_proposals=50"):
        sample_truncated_normal(
            WEDGE_MEAN, WEDGE_COV, WEDGE_A, [3.0, 2.5], 1000, rng=_rng(24), max_proposals=50
        )
