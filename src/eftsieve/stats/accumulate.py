"""Consistency statistics of a fit against a region.

- :class:`Accumulator` streams weighted sums over chunks: counts, the probability
  inside with its Monte-Carlo error (ratio-estimator delta method), the Kish effective
  sample size (Kish, "Survey Sampling", Wiley 1965), and the weighted mean and
  covariance in the region's coordinates.  :meth:`Accumulator.batch_means` gives the
  error of the probability inside for correlated draws (MCMC chains in draw order):
  non-overlapping batch means with batches of about sqrt(n) rows (Flegal & Jones,
  "Batch means and spectral variance estimators in Markov chain Monte Carlo",
  Ann. Statist. 38 (2010) 1034; from memory), and the integrated autocorrelation time
  of the inside indicator that it implies.
- :func:`tension` finds the minimal Mahalanobis distance from the mean to the region
  (a convex QP, solved with cvxpy + Clarabel and verified through its KKT conditions),
  and converts it into a p-value with the chi-bar-squared distribution for inequality
  constraints (Shapiro, "Towards a unified theory of inequality constrained testing in
  multivariate analysis", Int. Stat. Rev. 56 (1988) 49; Silvapulle & Sen, "Constrained
  Statistical Inference", Wiley 2005, Sec. 3.4).
- :func:`bayes_factor` of the positivity-truncated prior against the untruncated one,
  which for a truncation equals P_posterior(inside) / P_prior(inside).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from itertools import combinations
from typing import Any

import numpy as np
from scipy import stats as sps

from eftsieve.errors import SolverError
from eftsieve.region.model import Region
from eftsieve.tolerances import FEASIBILITY_TOL

BLOCK = 1 << 16
#: rows per elementary batch of the batch-means error (divides BLOCK)
BATCH = 256
#: fewer batches than this give no batch-means estimate (its variance would be too noisy)
MIN_BATCHES = 20


def run_sums(values: np.ndarray) -> np.ndarray:
    """Sums of ``values`` over consecutive runs of :data:`BATCH` rows (the elementary
    batches of the batch-means error), the first run starting at row 0."""
    if len(values) == 0:
        return np.zeros(0)
    return np.add.reduceat(values, np.arange(0, len(values), BATCH))


def batch_sums(w: np.ndarray, satisfies: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sums of w and of w over the rows inside, per run of :data:`BATCH` rows of a block.

    Runs start at the first row of the block, so the sums do not depend on chunk sizes;
    every engine calls this same function on the same blocks (the same bits).
    """
    return run_sums(w), run_sums(np.where(satisfies, w, 0.0))


def ratio_batch_variance(num: np.ndarray, den: np.ndarray, n_rows: int
                         ) -> tuple[float, int, int]:
    """Batch-means variance of the ratio estimator r = sum num / sum den.

    ``num``, ``den`` are sums over elementary batches of :data:`BATCH` consecutive rows,
    in row order; they are merged into batches of about sqrt(n_rows) rows and
    var(r) = k/(k - 1) sum_j (A_j - r W_j)^2 / (sum W)^2 over the k batches (module
    docstring).  Returns (variance, k, rows per batch); the variance is NaN with fewer
    than :data:`MIN_BATCHES` batches or without weight.
    """
    group = max(1, round(math.sqrt(n_rows) / BATCH))
    starts = np.arange(0, len(den), group)
    k = len(starts)
    total = float(den.sum()) if len(den) else 0.0
    if k < MIN_BATCHES or not total > 0:
        return float("nan"), k, group * BATCH
    big_a, big_w = np.add.reduceat(num, starts), np.add.reduceat(den, starts)
    r = float(num.sum()) / total
    var = k / (k - 1) * float(np.sum((big_a - r * big_w) ** 2)) / total**2
    return var, k, group * BATCH


@dataclass(frozen=True)
class BatchMeans:
    """The batch-means error of the probability inside (correlated draws).

    Attributes
    ----------
    std_error
        Standard error of P(inside) from the spread of the batch estimates (NaN with
        fewer than :data:`MIN_BATCHES` batches, or when every row is on one side).
    tau
        Integrated autocorrelation time of the inside indicator, the ratio of the
        batch-means variance to the variance for independent draws (about 1 for
        independent draws; NaN when either is undefined).
    n_batches, batch_rows
        Number of batches and rows per batch (the last batches of a file may be short).
    """

    std_error: float
    tau: float
    n_batches: int
    batch_rows: int

    def to_dict(self) -> dict[str, Any]:
        """Summary fields; undefined values are None (JSON null)."""
        def fin(v: float) -> float | None:
            return v if math.isfinite(v) else None
        return {"p_inside_mc_err_batch": fin(self.std_error), "tau_inside": fin(self.tau),
                "n_batches": self.n_batches, "batch_rows": self.batch_rows}


@dataclass
class Accumulator:
    """Streaming weighted sums for the probability inside and the moments.

    Rows are summed in fixed blocks of :data:`BLOCK` consecutive rows, whatever the chunk
    sizes of the input, so chunked and in-memory runs give bit-identical results.
    """

    dim: int
    n_total: int = 0
    counts: np.ndarray = field(default_factory=lambda: np.zeros(4, dtype=np.int64))
    sw: float = 0.0
    sw2: float = 0.0
    sw_in: float = 0.0
    sw_in_inner: float = 0.0
    sw2_in: float = 0.0
    sw_soft: float = 0.0
    sw2_soft_dev: float = 0.0
    soft_seen: bool = False
    _sw2p: float = 0.0
    mean_sum: np.ndarray | None = None
    outer_sum: np.ndarray | None = None
    batch_w: list = field(default_factory=list)
    batch_in: list = field(default_factory=list)
    _pending: list = field(default_factory=list)
    _n_pending: int = 0

    def add(self, y: np.ndarray, w: np.ndarray | None, verdict: np.ndarray,
            satisfies: np.ndarray, soft: np.ndarray | None = None) -> None:
        """Add a chunk; ``soft`` is P(satisfies every facet) under a theory-uncertainty model."""
        ww = np.ones(len(y)) if w is None else np.asarray(w, dtype=float)
        if soft is not None:
            self.soft_seen = True
        sp = satisfies.astype(float) if soft is None else np.asarray(soft, dtype=float)
        self._pending.append((y, ww, verdict, satisfies, sp))
        self._n_pending += len(y)
        if self._n_pending >= BLOCK:
            self._drain(final=False)

    def finish(self) -> None:
        """Sum the last, partial block."""
        self._drain(final=True)

    def _drain(self, final: bool) -> None:
        if not self._pending:
            return
        y, w, v, sat, sp = (np.concatenate([p[i] for p in self._pending]) for i in range(5))
        n_full = (len(y) // BLOCK) * BLOCK
        stop = len(y) if final else n_full
        for lo in range(0, stop, BLOCK):
            sl = slice(lo, lo + BLOCK)
            self._block(y[sl], w[sl], v[sl], sat[sl], sp[sl])
        self._pending = [] if stop == len(y) else [
            (y[stop:], w[stop:], v[stop:], sat[stop:], sp[stop:])]
        self._n_pending = len(y) - stop

    def _block(self, y, ww, verdict, satisfies, soft) -> None:
        self.n_total += len(y)
        self.counts += np.bincount(verdict, minlength=4)
        self.sw_soft += float(ww @ soft)
        self._sw2p += float((ww * ww) @ soft)
        self.sw2_soft_dev += float((ww * ww) @ (soft * soft))
        self.sw += float(ww.sum())
        self.sw2 += float((ww * ww).sum())
        self.sw_in += float(ww[satisfies].sum())
        self.sw2_in += float((ww[satisfies] ** 2).sum())
        self.sw_in_inner += float(ww[verdict == 0].sum())
        bw, bi = batch_sums(ww, satisfies)
        self.batch_w.append(bw)
        self.batch_in.append(bi)
        m = ww @ y
        o = (y * ww[:, None]).T @ y
        self.mean_sum = m if self.mean_sum is None else self.mean_sum + m
        self.outer_sum = o if self.outer_sum is None else self.outer_sum + o

    def p_inside(self) -> tuple[float, float]:
        """P(inside) and its Monte-Carlo standard error (delta method for the ratio)."""
        if self.sw <= 0:
            return float("nan"), float("nan")
        p = self.sw_in / self.sw
        # sum w^2 (I - p)^2 = sum_in w^2 (1-p)^2 + sum_out w^2 p^2
        var_num = self.sw2_in * (1 - p) ** 2 + (self.sw2 - self.sw2_in) * p**2
        return p, math.sqrt(var_num) / self.sw

    def p_soft(self) -> tuple[float, float]:
        """E[P(satisfies)] over the samples and its Monte-Carlo error (delta method)."""
        if self.sw <= 0:
            return float("nan"), float("nan")
        p = self.sw_soft / self.sw
        # sum w^2 (P_i - p)^2 = sum w^2 P^2 - 2 p sum w^2 P + p^2 sum w^2; bound sum w^2 P by
        # using sum w^2 P <= sqrt(sum w^2 P^2 sum w^2) is loose, so keep the exact pieces
        var = max(self.sw2_soft_dev - 2 * p * self._sw2p + p * p * self.sw2, 0.0)
        return p, math.sqrt(var) / self.sw

    def batch_means(self) -> BatchMeans:
        """Standard error of P(inside) for correlated draws, by batch means.

        Elementary batches are merged, in row order, into batches of about sqrt(n) rows;
        with batch sums A_j = sum w I and W_j = sum w, the ratio estimator p = sum A / sum W
        has variance k/(k - 1) sum_j (A_j - p W_j)^2 / (sum W)^2 over the k batches.  The
        rows must be in draw order within each chain (chains one after another); draws
        of several walkers interleaved step by step are correlated over more rows, and
        the estimate is then too small unless sqrt(n) rows span many autocorrelation
        times of the whole ensemble.
        """
        bw = np.concatenate(self.batch_w) if self.batch_w else np.zeros(0)
        bi = np.concatenate(self.batch_in) if self.batch_in else np.zeros(0)
        var, k, rows = ratio_batch_variance(bi, bw, self.n_total)
        iid = self.p_inside()[1]
        tau = var / iid**2 if iid > 0 else float("nan")
        err = math.sqrt(var) if var > 0 else float("nan")
        return BatchMeans(err, tau, k, rows)

    def ess(self) -> float:
        return self.sw**2 / self.sw2 if self.sw2 > 0 else 0.0

    def moments(self) -> tuple[np.ndarray, np.ndarray]:
        assert self.mean_sum is not None and self.outer_sum is not None
        mean = self.mean_sum / self.sw
        cov = self.outer_sum / self.sw - np.outer(mean, mean)
        return mean, (cov + cov.T) / 2


@dataclass(frozen=True)
class Tension:
    """The tension between a Gaussian (mean, cov) and a region.

    Attributes
    ----------
    mahalanobis_min
        min over the region of sqrt((x - mean)^T cov^-1 (x - mean)).
    closest_point
        The minimiser, in region coordinates.
    active
        Indices of the facets active at the minimiser.
    weights
        Chi-bar-squared weights v_0..v_k of the distance to the cone used for the
        p-value (v_i = w_(k-i) of the cone itself).
    p_value, sigma
        P(chi-bar-squared >= mahalanobis_min^2) and the one-sided Gaussian equivalent
        Z = Phi^-1(1 - p) (Cowan, Cranmer, Gross & Vitells, arXiv:1007.1727, Eq. (1)).
    cone
        Which cone gave the p-value (the least favourable vertex or facet).
    """

    mahalanobis_min: float
    closest_point: np.ndarray
    active: tuple[int, ...]
    weights: np.ndarray
    p_value: float
    sigma: float
    cone: str

    def to_dict(self) -> dict[str, Any]:
        return {"mahalanobis_min": self.mahalanobis_min,
                "closest_point": self.closest_point.tolist(), "active_facets": list(self.active),
                "chibar2_weights": self.weights.tolist(), "tension_p": self.p_value,
                "tension_sigma": self.sigma, "tension_cone": self.cone}


def closest_point(mean: np.ndarray, cov: np.ndarray, a: np.ndarray, b: np.ndarray,
                  ) -> tuple[np.ndarray, float]:
    """Solve min (x - mean)^T cov^-1 (x - mean) s.t. a x >= b as a QP (cvxpy, Clarabel).

    The solution is verified (primal feasibility and the KKT stationarity residual); an
    inaccurate or failed solve raises SolverError.
    """
    import cvxpy as cp

    k = len(mean)
    chol = np.linalg.cholesky(np.linalg.inv(cov))
    x = cp.Variable(k)
    cons = [a @ x >= b]
    prob = cp.Problem(cp.Minimize(cp.sum_squares(chol.T @ (x - mean))), cons)
    try:
        prob.solve(solver=cp.CLARABEL)
    except cp.error.SolverError as err:
        raise SolverError("error", f"tension QP ({err})") from err
    if prob.status != cp.OPTIMAL or x.value is None:
        raise SolverError(str(prob.status), "tension QP (minimal Mahalanobis distance)")
    xv = np.asarray(x.value, dtype=float)
    lam = np.asarray(cons[0].dual_value, dtype=float)
    scale = max(1.0, float(np.abs(b).max()) if len(b) else 1.0)
    if (a @ xv - b).min() < -1e-6 * scale:
        raise SolverError("infeasible-solution", "tension QP: the solution violates a facet")
    grad = 2 * np.linalg.solve(cov, xv - mean)
    resid = grad - a.T @ lam
    gnorm = float(np.linalg.norm(grad))
    if float(np.linalg.norm(resid)) > 1e-5 * max(1.0, gnorm) or (lam < -1e-7).any():
        raise SolverError("kkt-failed", "tension QP: KKT conditions not met to 1e-5")
    # polish: project onto the active set exactly
    active = np.nonzero((a @ xv - b) < 1e-7 * scale)[0]
    if len(active):
        xv = _project_active(mean, cov, a[active], b[active], xv)
    d2 = float((xv - mean) @ np.linalg.solve(cov, xv - mean))
    return xv, max(d2, 0.0)


def _project_active(mean, cov, a_act, b_act, fallback):
    """Exact minimiser on the affine set a_act x = b_act (if the KKT signs hold)."""
    m = a_act @ cov @ a_act.T
    try:
        lam = np.linalg.solve(m, b_act - a_act @ mean)
    except np.linalg.LinAlgError:
        return fallback
    x = mean + cov @ a_act.T @ lam
    return x if (lam >= -1e-12).all() else fallback


def cone_weights(g: np.ndarray, rng: np.random.Generator, n: int = 200_000) -> np.ndarray:
    """Chi-bar-squared weights w_i, i = 0..k, of the cone {z : g z >= 0} for z ~ N(0, I_k).

    w_i is the probability that the projection of z onto the cone lies in the relative
    interior of an i-dimensional face (Silvapulle & Sen 2005, Sec. 3.4).  Closed forms for
    k = 1 and k = 2 (w_2 = theta/2pi, w_1 = 1/2, w_0 = 1/2 - theta/2pi for a wedge of
    whitened opening angle theta); Monte Carlo with exact active-set projections otherwise.
    """
    g = np.atleast_2d(np.asarray(g, dtype=float))
    k = g.shape[1]
    if len(g) == 1:
        w = np.zeros(k + 1)
        w[k], w[k - 1] = 0.5, 0.5
        return w
    if k == 2:
        g = _plane_wedge(g)
        if len(g) == 1:
            return np.array([0.0, 0.5, 0.5])
    if k == 2 and len(g) == 2:
        u = g / np.linalg.norm(g, axis=1)[:, None]
        # the cone {z: u1.z >= 0, u2.z >= 0} has opening angle pi - angle(u1, u2)
        theta = math.pi - math.acos(float(np.clip(u[0] @ u[1], -1, 1)))
        return np.array([0.5 - theta / (2 * math.pi), 0.5, theta / (2 * math.pi)])
    return _cone_weights_mc(g, rng, n)


def _plane_wedge(g: np.ndarray) -> np.ndarray:
    """The (at most two) rows of g (m, 2) that bound the plane cone {z : g z >= 0}.

    Row i allows the directions within pi/2 of its angle a_i; measured from row 0,
    d_i = a_i - a_0 in (-pi, pi], the cone is the arc [max d - pi/2, min d + pi/2], so the
    rows with the largest and the smallest d bound it and the others are redundant
    (several facets through one vertex of a 2-D region).  With max d - min d >= pi the
    cone has no interior and g is returned unchanged.
    """
    if len(g) <= 2:
        return g
    ang = np.arctan2(g[:, 1], g[:, 0])
    d = np.angle(np.exp(1j * (ang - ang[0])))
    hi, lo = int(np.argmax(d)), int(np.argmin(d))
    if d[hi] - d[lo] >= math.pi:
        return g
    return g[[lo]] if hi == lo or d[hi] - d[lo] <= 1e-15 else g[[lo, hi]]


def _cone_weights_mc(g: np.ndarray, rng: np.random.Generator, n: int) -> np.ndarray:
    k = g.shape[1]
    z = rng.standard_normal((n, k))
    dim = np.full(n, -1)
    for size in range(0, min(len(g), k) + 1):
        for subset in combinations(range(len(g)), size):
            gs = g[list(subset)]
            if size and np.linalg.matrix_rank(gs) < size:
                continue
            if size:
                m = gs @ gs.T
                lam = -np.linalg.solve(m, gs @ z.T)          # (size, n), KKT multipliers
                proj = z + (gs.T @ lam).T
                ok = (lam >= -1e-12).all(axis=0)
            else:
                proj, ok = z, np.ones(n, dtype=bool)
            ok &= ((proj @ g.T) >= -1e-9).all(axis=1)
            dim[(dim < 0) & ok] = k - size
    if (dim < 0).any():
        raise SolverError("projection-failed", "chi-bar-squared weights (active-set search)")
    return np.bincount(dim, minlength=k + 1) / n


def chibar2_sf(x: float, weights: np.ndarray) -> float:
    """P(chi-bar-squared >= x) = sum_i w_i P(chi^2_i >= x), with chi^2_0 a point mass at 0."""
    p = float(weights[0]) * (1.0 if x <= 0 else 0.0)
    for i in range(1, len(weights)):
        p += float(weights[i]) * float(sps.chi2.sf(x, i))
    return min(max(p, 0.0), 1.0)


def tension(mean: np.ndarray, cov: np.ndarray, region: Region,
            rng: np.random.Generator) -> Tension:
    """Minimal Mahalanobis distance, closest point and the chi-bar-squared p-value.

    The null hypothesis is that the true point lies in the region.  The p-value is the
    supremum over the region's tangent cones at its vertices and facets (the least
    favourable configurations of a polyhedral null, Silvapulle & Sen 2005, Sec. 3.4),
    hence conservative.
    """
    a, b = region.arrays()
    x, d2 = closest_point(mean, cov, a, b)
    scale = max(1.0, float(np.abs(b).max()))
    active = tuple(int(i) for i in np.nonzero((a @ x - b) < 1e-7 * scale)[0])
    chol = np.linalg.cholesky(cov)
    best = (-1.0, np.zeros(len(mean) + 1), "")
    inside = d2 <= FEASIBILITY_TOL  # p = 1 whatever the cone: the facet cones suffice
    cones = ((f"facet {i}", [i]) for i in range(len(b))) if inside else _candidate_cones(
        region, a, b)
    for cone, rows in cones:
        # the distance to a cone C is the norm of the projection onto its polar cone, so
        # its chi-bar-squared weights are those of C reversed: v_i = w_(k-i)(C)
        w = cone_weights(a[rows] @ chol, rng)[::-1]
        p = chibar2_sf(d2, w)
        if p > best[0]:
            best = (p, w, cone)
    p, w, cone = best
    if inside:
        p = 1.0
    sigma = float(sps.norm.isf(p)) if p < 1.0 else 0.0
    return Tension(math.sqrt(d2), x, active, w, p, max(sigma, 0.0), cone)


def _candidate_cones(region: Region, a: np.ndarray, b: np.ndarray):
    """Tangent cones of the region: one per facet and one per vertex (facets tight there)."""
    m, k = a.shape
    for i in range(m):
        yield f"facet {i}", [i]
    for subset in combinations(range(m), k):
        sub = a[list(subset)]
        if np.linalg.matrix_rank(sub) < k:
            continue
        v = np.linalg.solve(sub, b[list(subset)])
        slack = a @ v - b
        scale = max(1.0, float(np.abs(b).max()))
        if (slack >= -1e-9 * scale).all():
            rows = [int(j) for j in np.nonzero(slack < 1e-9 * scale)[0]]
            yield f"vertex {tuple(rows)}", rows


@dataclass(frozen=True)
class BayesFactor:
    """Bayes factor of the truncated prior against the untruncated one.

    Attributes
    ----------
    value, error
        P_post(inside)/P_prior(inside) and its Monte-Carlo error (None when unavailable).
    p_prior, p_prior_err
        The prior probability inside and its error.
    reason
        Why it is unavailable, or how it was computed.
    """

    value: float | None
    error: float | None
    p_prior: float | None
    p_prior_err: float | None
    reason: str

    def to_dict(self) -> dict[str, Any]:
        return {"bayes_factor": self.value, "bayes_factor_err": self.error,
                "p_prior_inside": self.p_prior, "p_prior_inside_err": self.p_prior_err,
                "bayes_factor_note": self.reason}


def bayes_factor(p_post: float, p_post_err: float, p_prior: float | None,
                 p_prior_err: float | None, reason: str) -> BayesFactor:
    """B = P_post(inside) / P_prior(inside), with first-order error propagation."""
    if p_prior is None or p_prior_err is None:
        return BayesFactor(None, None, None, None, reason)
    if p_prior <= 0:
        return BayesFactor(None, None, p_prior, p_prior_err,
                           "the prior puts no probability inside the region")
    val = p_post / p_prior
    rel = math.hypot(p_post_err / p_post if p_post > 0 else 0.0, p_prior_err / p_prior)
    return BayesFactor(val, val * rel, p_prior, p_prior_err, reason)
