"""The normal law restricted to a convex polyhedron: probability and exact i.i.d. draws.

For ``x ~ N(mean, cov)`` and ``{x : A x >= b}`` (``A`` of shape ``(m, d)``, ``m`` may
exceed ``d``, the set may be unbounded, columns of ``A`` may vanish) this module
estimates ``P(A x >= b)`` and samples the truncated law by the minimax exponential
tilting of Z. I. Botev, "The normal law under linear restrictions: simulation and
estimation via minimax tilting", J. R. Stat. Soc. B 79 (2017) 125, arXiv:1603.04166
(section names below are that paper's; from memory).  Botev treats ``l <= C x <= u``
with one row per variable; the generalisation to ``m`` one-sided rows used here is:

1. Whiten ``x = mean + L z`` (``L`` Cholesky factor of the positive-definite ``cov``):
   ``G z >= c`` with ``G = A L``, ``c = b - A mean``, rows scaled to unit norm.
2. Pivoted LQ (Sec. "Background on separation of variables"): Gram-Schmidt on the rows
   of ``G`` gives ``y = Q^T z`` in which ``H = G Q`` is lower trapezoidal.  Rows active
   at the mode of the truncated law are pivoted first, then the most restrictive row
   given the expected earlier coordinates (Genz-Bretz ordering).  A row whose last
   non-zero coefficient (above a rank tolerance) is in column ``k`` bounds ``y_k`` given
   ``y_1..y_{k-1}``; all rows of a column are intersected, so rows beyond the rank add
   bounds to later variables.  Coordinates beyond the rank ``r`` are free standard
   normals.  The implied box bounds ``min/max y_k`` over the set (linear programmes)
   are added to the early variables; they leave the set, hence all results, unchanged.
3. Sequential importance sampling (Sec. "Minimax tilting"): ``y_k ~ N(mu_k, 1)``
   truncated to its interval ``[l_k, u_k]``, weight ``exp(psi)`` with ``psi = sum_k
   [mu_k^2/2 - mu_k y_k + log(Phi(u_k - mu_k) - Phi(l_k - mu_k))]``, unbiased for the
   probability; an empty interval gives weight zero (still exact).  ``mu_r = 0``.
4. Tilting parameter: ``psi`` is convex in ``mu`` and concave in ``y`` but not smooth
   when a column has several rows, so it is majorised by ``psi_rep``, which keeps per
   column the lower and upper row binding at the current saddle point (wider
   intervals, so ``psi <= psi_rep``).  Its saddle point comes from a damped Newton
   ascent of the concave ``x -> min_mu psi_rep(x; mu)`` (the inner minimum separates
   into monotone 1-D equations); representatives are refreshed a few times.
5. Exact sampling (Sec. "Exact simulation"): accept a proposal with probability
   ``exp(psi(y; mu*) - psi*)``, ``psi* >= sup_y psi_rep(y; mu*)`` being the saddle value
   plus a safety margin; a proposal above it raises instead of biasing the draws.  The
   proposals' weights also give the probability estimate.

``log(Phi(b) - Phi(a))`` uses one-sided log-CDFs in the tails (Botev, appendix) and
1-D truncated normals are drawn by inversion in log space (:func:`scipy.special.ndtri_exp`),
so intervals tens of standard deviations out keep full relative precision.  The numerics
of steps 1-5 live in :mod:`eftsieve.stats.tilting`.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike
from scipy import linalg

from eftsieve.errors import (
    DegeneratePolytopeError,
    EmptyPolytopeError,
    PolytopeInputError,
    SamplingError,
    SolverError,
)
from eftsieve.stats.tilting import FloatArray, Geometry, Tilt, build_geometry, find_tilt, propose
from eftsieve.tolerances import PSD_TOL, SYMMETRY_TOL

__all__ = [
    "DegeneratePolytopeError",
    "EmptyPolytopeError",
    "PolytopeInputError",
    "PolytopeProbability",
    "TruncatedSample",
    "polytope_probability",
    "sample_truncated_normal",
]

_MAX_BATCH = 2**18  # proposals per vectorised batch
_METHOD = "minimax-tilted sequential importance sampling (Botev 2017)"


@dataclass(frozen=True)
class PolytopeProbability:
    """Estimate of ``P(A x >= b)`` for ``x ~ N(mean, cov)``.

    Attributes
    ----------
    probability : float
        The estimate (exact when ``std_error`` is zero by construction).
    std_error : float
        Monte Carlo standard error of ``probability``.
    n_draws : int
        Number of importance-sampling draws used.
    method : str
        How the number was obtained.
    log_probability : float
        Natural log of ``probability`` (finite even when ``probability`` underflows).
    """

    probability: float
    std_error: float
    n_draws: int
    method: str
    log_probability: float

    def to_dict(self) -> dict[str, Any]:
        """Plain-Python dictionary of the fields."""
        return asdict(self)


@dataclass(frozen=True)
class TruncatedSample:
    """I.i.d. draws from ``N(mean, cov)`` restricted to ``A x >= b``.

    Attributes
    ----------
    samples : ndarray, shape (n, d)
        The draws (read-only).
    acceptance_rate : float
        Accepted over proposed, in the accept-reject step.
    n_proposed : int
        Number of proposals drawn.
    probability : PolytopeProbability
        ``P(A x >= b)`` estimated from the weights of all proposals.
    """

    samples: FloatArray
    acceptance_rate: float
    n_proposed: int
    probability: PolytopeProbability

    def to_dict(self) -> dict[str, Any]:
        """Plain-Python dictionary of the fields (samples as nested lists)."""
        return {
            "samples": self.samples.tolist(),
            "acceptance_rate": self.acceptance_rate,
            "n_proposed": self.n_proposed,
            "probability": self.probability.to_dict(),
        }


def _validate(
    mean: ArrayLike, cov: ArrayLike, A: ArrayLike, b: ArrayLike
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """Check shapes, finiteness, symmetry and positive definiteness; return float arrays."""
    mu = np.atleast_1d(np.asarray(mean, dtype=float))
    if mu.ndim != 1 or mu.size == 0:
        raise PolytopeInputError(f"mean must be a non-empty 1-D array, got shape {mu.shape}")
    d = mu.size
    sig = np.atleast_2d(np.asarray(cov, dtype=float))
    mat = np.atleast_2d(np.asarray(A, dtype=float))
    rhs = np.atleast_1d(np.asarray(b, dtype=float))
    if sig.shape != (d, d):
        raise PolytopeInputError(f"cov must have shape ({d}, {d}), got {sig.shape}")
    if mat.ndim != 2 or mat.shape[1] != d or mat.shape[0] == 0:
        raise PolytopeInputError(f"A must have shape (m, {d}) with m >= 1, got {mat.shape}")
    if rhs.shape != (mat.shape[0],):
        raise PolytopeInputError(f"b must have shape ({mat.shape[0]},), got {rhs.shape}")
    for name, arr in (("mean", mu), ("cov", sig), ("A", mat), ("b", rhs)):
        if not np.all(np.isfinite(arr)):
            raise PolytopeInputError(f"{name} contains non-finite entries")
    scale = float(np.max(np.abs(sig)))
    if np.max(np.abs(sig - sig.T)) > SYMMETRY_TOL * scale:
        raise PolytopeInputError("cov is not symmetric")
    sig = 0.5 * (sig + sig.T)
    diag = np.diag(sig)
    # scale-free test on the correlation matrix, so very different variances are fine
    corr = sig / np.sqrt(np.outer(diag, diag)) if np.all(diag > 0) else sig
    if not np.all(diag > 0) or not linalg.eigvalsh(corr)[0] > PSD_TOL:
        raise PolytopeInputError(
            f"cov is not positive definite: smallest eigenvalue {linalg.eigvalsh(sig)[0]:.6g}"
            "; rank-deficient covariances are not supported"
        )
    return mu, sig, mat, rhs


_Moments = tuple[int, float, float]


def _moments(w: FloatArray, acc: _Moments = (0, 0.0, 0.0)) -> _Moments:
    """Count, mean, sum of squared deviations of ``w``, merged into ``acc`` (Chan et al. 1979)."""
    n_b, mean_b = w.size, float(np.mean(w))
    m2_b = float(np.sum((w - mean_b) ** 2))
    n_a, mean_a, m2_a = acc
    n = n_a + n_b
    delta = mean_b - mean_a
    return n, mean_a + delta * n_b / n, m2_a + m2_b + delta * delta * n_a * n_b / n


def _estimate(mom: _Moments, log_bound: float, method: str) -> PolytopeProbability:
    """Probability from the moments of the scaled weights ``w = exp(psi - psi*)``."""
    n, mean, m2 = mom
    if not mean > 0:
        raise SolverError("all weights zero", "importance-sampling estimate of P(A x >= b)")
    log_prob = float(np.log(mean) + log_bound)
    std = float(np.exp(log_bound)) * np.sqrt(m2 / (n - 1) / n)
    return PolytopeProbability(float(np.exp(log_prob)), float(std), n, method, log_prob)


def _check_args(rng: Any, **counts: Any) -> None:
    """``rng`` must be a Generator and every count an integer >= 1 (``n_draws`` >= 2)."""
    if not isinstance(rng, np.random.Generator):
        raise TypeError(f"rng must be a numpy.random.Generator, got {type(rng).__name__}")
    for name, value in counts.items():
        low = 2 if name == "n_draws" else 1
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < low:
            raise PolytopeInputError(f"{name} must be an integer >= {low}, got {value!r}")


def polytope_probability(
    mean: ArrayLike,
    cov: ArrayLike,
    A: ArrayLike,
    b: ArrayLike,
    *,
    rng: np.random.Generator,
    n_draws: int = 20000,
) -> PolytopeProbability:
    """``P(A x >= b)`` for ``x ~ N(mean, cov)`` by minimax-tilted importance sampling.

    Parameters
    ----------
    mean : array_like, shape (d,)
        Mean of the normal law.
    cov : array_like, shape (d, d)
        Symmetric positive-definite covariance.
    A : array_like, shape (m, d)
        Constraint matrix; ``m`` may exceed ``d`` and columns may be zero.
    b : array_like, shape (m,)
        Right-hand side.
    rng : numpy.random.Generator
        Source of randomness.
    n_draws : int
        Importance-sampling draws.

    Returns
    -------
    PolytopeProbability
        Estimate and standard error (Botev 2017, Secs. "Minimax tilting" and the
        estimator built on it); zero for an empty polyhedron, exact when only one
        rotated direction is constrained.

    Raises
    ------
    PolytopeInputError
        Bad shapes, non-finite input, or a covariance that is not positive definite.
    DegeneratePolytopeError
        The polyhedron is non-empty but has no interior.
    eftsieve.errors.SolverError
        The tilting problem could not be solved to full accuracy.
    """
    _check_args(rng, n_draws=n_draws)
    mu, sig, mat, rhs = _validate(mean, cov, A, b)
    try:
        geom = build_geometry(mu, sig, mat, rhs)
    except EmptyPolytopeError as err:
        return PolytopeProbability(0.0, 0.0, 0, f"exact: {err}", float("-inf"))
    if not geom.groups:
        return PolytopeProbability(1.0, 0.0, 0, "exact: every row of A is zero", 0.0)
    tilt = find_tilt(geom)
    _, logw = propose(geom, tilt.mu, int(n_draws), rng)
    return _estimate(_moments(np.exp(logw - tilt.log_bound)), tilt.log_bound, _METHOD)


def sample_truncated_normal(
    mean: ArrayLike,
    cov: ArrayLike,
    A: ArrayLike,
    b: ArrayLike,
    n: int,
    *,
    rng: np.random.Generator,
    max_proposals: int = 10**8,
) -> TruncatedSample:
    """Exact i.i.d. draws from ``N(mean, cov)`` restricted to ``A x >= b``.

    Accept-reject from the minimax-tilted sequential proposal (Botev 2017, Sec. "Exact
    simulation"), in vectorised batches.

    Parameters
    ----------
    mean, cov, A, b
        As in :func:`polytope_probability`.
    n : int
        Number of draws wanted.
    rng : numpy.random.Generator
        Source of randomness.
    max_proposals : int
        Upper limit on the number of proposals.

    Returns
    -------
    TruncatedSample
        Draws, acceptance rate, number of proposals, and the probability estimated from
        the proposals' importance weights.

    Raises
    ------
    EmptyPolytopeError
        The polyhedron is empty (checked with :func:`scipy.optimize.linprog`).
    DegeneratePolytopeError
        The polyhedron is non-empty but has no interior.
    PolytopeInputError
        Bad shapes, non-finite input, or a covariance that is not positive definite.
    eftsieve.errors.SamplingError
        The acceptance rate is too low to deliver ``n`` draws within ``max_proposals``.
    eftsieve.errors.SolverError
        The tilting problem failed, or a proposal exceeded the acceptance bound.
    """
    _check_args(rng, n=n, max_proposals=max_proposals)
    geom = build_geometry(*_validate(mean, cov, A, b))
    return _accept_reject(geom, find_tilt(geom), int(n), rng, int(max_proposals))


def _accept_reject(
    geom: Geometry, tilt: Tilt, n: int, rng: np.random.Generator, max_proposals: int
) -> TruncatedSample:
    """Batched accept-reject: keep a proposal with probability ``exp(psi - psi*)``."""
    parts: list[FloatArray] = []
    n_acc = n_prop = 0
    mom = (0, 0.0, 0.0)
    while n_acc < n:
        rate = n_acc / n_prop if n_acc else (0.5 if n_prop == 0 else 1.0 / n_prop)
        short = n_acc >= 100 and n_prop + (n - n_acc) / rate > 1.2 * max_proposals
        if n_prop >= max_proposals or short:
            raise SamplingError(
                f"acceptance rate {rate:.3g} after {n_prop} proposals is too low for "
                f"{n} draws within max_proposals={max_proposals}",
                "raise max_proposals",
            )
        size = int(min(1.1 * (n - n_acc) / rate + 64, _MAX_BATCH, max_proposals - n_prop))
        x, logw = propose(geom, tilt.mu, size, rng)
        lw = logw - tilt.log_bound
        if np.max(lw) > 0.0:
            raise SolverError("bound violated", "accept-reject bound psi* (Botev 2017)")
        mom = _moments(np.exp(lw), mom)
        keep = lw >= -rng.standard_exponential(size)
        parts.append(x[keep])
        n_acc, n_prop = n_acc + int(keep.sum()), n_prop + size
    samples = np.concatenate(parts)[:n]
    samples.setflags(write=False)
    prob = _estimate(mom, tilt.log_bound, _METHOD + ", from the proposals")
    return TruncatedSample(samples, n_acc / n_prop, n_prop, prob)
