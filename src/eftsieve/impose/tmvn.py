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
   non-zero coefficient (above ``_RANK_TOL``) is in column ``k`` bounds ``y_k`` given
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
so intervals tens of standard deviations out keep full relative precision.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import linalg, optimize, special

from eftsieve.errors import EftsieveError, SamplingError, SolverError
from eftsieve.tolerances import FEASIBILITY_TOL, PSD_TOL, SYMMETRY_TOL

FloatArray = NDArray[np.float64]

_LOG_SQRT_2PI = 0.5 * np.log(2.0 * np.pi)
_RANK_TOL = 1e-9  # rotated coefficient (of a unit row) below this counts as zero
_BOUND_MARGIN = 1e-9  # added to the log acceptance bound
_MAX_BATCH = 2**18  # proposals per vectorised batch
_REP_ROUNDS = 4  # refreshes of the representative rows
_METHOD = "minimax-tilted sequential importance sampling (Botev 2017)"


class PolytopeInputError(EftsieveError, ValueError):
    """Invalid mean, covariance or constraints for the truncated normal."""


class EmptyPolytopeError(PolytopeInputError):
    """The polyhedron ``{x : A x >= b}`` is empty."""


class DegeneratePolytopeError(PolytopeInputError):
    """The polyhedron is not empty but has no interior (numerically zero volume)."""


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


@dataclass(frozen=True)
class _Group:
    """Rows bounding one rotated coordinate: ``y_k >= or <= offset - slope . y_{<k}``."""

    offset: FloatArray
    slope: FloatArray
    lower: NDArray[np.bool_]


@dataclass(frozen=True)
class _Geometry:
    """Whitened, rotated problem: ``x = mean + transform @ y``, ``y`` standard normal."""

    mean: FloatArray
    transform: FloatArray
    groups: tuple[_Group, ...]
    start: FloatArray  # strictly interior point (rotated coordinates, length rank)
    reference: FloatArray  # point where representative rows are first chosen


@dataclass(frozen=True)
class _Tilt:
    """Tilting parameter ``mu``, log acceptance bound ``psi*`` and saddle point ``x*``."""

    mu: FloatArray
    log_bound: float
    point: FloatArray


def _log1mexp(x: FloatArray) -> FloatArray:
    """``log(1 - exp(x))`` for ``x <= 0`` (M. Maechler 2012, CRAN note "log1mexp")."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(x > -np.log(2.0), np.log(-np.expm1(x)), np.log1p(-np.exp(x)))


def _log_ndtr_diff(a: FloatArray, b: FloatArray) -> FloatArray:
    """``log(Phi(b) - Phi(a))``, ``-inf`` where ``a >= b``; tail-stable (Botev 2017, appendix)."""
    a, b = np.broadcast_arrays(np.asarray(a, dtype=float), np.asarray(b, dtype=float))
    out = np.full(a.shape, -np.inf)
    with np.errstate(invalid="ignore", divide="ignore"):
        ok = b > a
        right, left = ok & (a > 0), ok & (b < 0)
        mid = ok & ~right & ~left
        la, lb = special.log_ndtr(-a[right]), special.log_ndtr(-b[right])
        out[right] = la + _log1mexp(lb - la)
        la, lb = special.log_ndtr(a[left]), special.log_ndtr(b[left])
        out[left] = lb + _log1mexp(la - lb)
        s = np.sqrt(0.5)
        out[mid] = np.log(0.5 * (special.erf(s * b[mid]) - special.erf(s * a[mid])))
    return out


def _inv_mills(t: FloatArray) -> FloatArray:
    """``phi(t) / Phi(-t)`` via :func:`scipy.special.erfcx`, accurate for all ``t``."""
    with np.errstate(divide="ignore"):
        return np.sqrt(2.0 / np.pi) / special.erfcx(t * np.sqrt(0.5))


def _tn_terms(a: FloatArray, b: FloatArray) -> tuple[FloatArray, ...]:
    """``log P``, ``phi(a)/P``, ``phi(b)/P``, ``a phi(a)/P``, ``b phi(b)/P`` for ``[a, b]``.

    Intervals in a tail are reflected to the right tail and use inverse Mills ratios, so
    no difference of huge log-densities is formed.
    """
    logp = _log_ndtr_diff(a, b)
    flip = b < 0
    lo, hi = np.where(flip, -b, a), np.where(flip, -a, b)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        log_ratio = special.log_ndtr(-hi) - special.log_ndtr(-lo)
        one_minus = -np.expm1(log_ratio)
        tail_lo = _inv_mills(lo) / one_minus
        tail_hi = np.where(np.isfinite(hi), _inv_mills(hi) * np.exp(log_ratio) / one_minus, 0.0)
        mid_lo = np.exp(-0.5 * lo * lo - _LOG_SQRT_2PI - logp)
        mid_hi = np.exp(-0.5 * hi * hi - _LOG_SQRT_2PI - logp)
        right = lo > 0
        f_lo, f_hi = np.where(right, tail_lo, mid_lo), np.where(right, tail_hi, mid_hi)
        alpha, beta = np.where(flip, f_hi, f_lo), np.where(flip, f_lo, f_hi)
        a_alpha = np.where(np.isfinite(a), a * alpha, 0.0)
        b_beta = np.where(np.isfinite(b), b * beta, 0.0)
    return logp, alpha, beta, a_alpha, b_beta


def _truncnorm_icdf(a: FloatArray, b: FloatArray, u: FloatArray) -> FloatArray:
    """Standard normal truncated to ``[a, b]`` at uniforms ``u`` in ``(0, 1]``, by inversion.

    The interval is reflected so that its mass lies on the left, and ``Phi^{-1}`` is
    evaluated from the log-probability with :func:`scipy.special.ndtri_exp`, so far
    tails (``a`` of tens of sigma) keep full relative precision.
    """
    with np.errstate(invalid="ignore"):
        flip = (a + b) > 0
    lo, hi = np.where(flip, -b, a), np.where(flip, -a, b)
    log_p = np.logaddexp(special.log_ndtr(lo), np.log(u) + _log_ndtr_diff(lo, hi))
    z = np.clip(special.ndtri_exp(log_p), lo, hi)
    return np.where(flip, -z, z)


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


def _pivoted_lq(
    g: FloatArray, c: FloatArray, first: NDArray[np.bool_]
) -> tuple[FloatArray, FloatArray, NDArray[Any]]:
    """Greedy LQ of unit rows ``g``: basis ``(d, r)``, coefficients ``(m, r)``, last columns.

    Rows flagged ``first`` (active at the mode) are pivoted before the others; within
    each pool the row with the largest bound given the expected earlier coordinates wins.
    """
    m, d = g.shape
    resid, coef = g.copy(), np.zeros((m, d))
    last = np.full(m, -1)
    basis: list[FloatArray] = []
    yhat = np.zeros(d)
    for k in range(d):
        norms = np.linalg.norm(resid, axis=1)
        cand = (last < 0) & (norms > _RANK_TOL)
        if not cand.any():
            break
        pool = cand & first if np.any(cand & first) else cand
        score = np.full(m, -np.inf)
        score[pool] = (c[pool] - coef[pool, :k] @ yhat[:k]) / norms[pool]
        j = int(np.argmax(score))
        q = resid[j] / norms[j]
        for prev in basis:  # re-orthogonalise
            q = q - (q @ prev) * prev
        q = q / np.linalg.norm(q)
        basis.append(q)
        coef[:, k] = g @ q
        resid -= np.outer(coef[:, k], q)
        done = (last < 0) & (np.linalg.norm(resid, axis=1) <= _RANK_TOL)
        last[done] = k
        yhat[k] = _expected_coordinate(coef[done, k], c[done] - coef[done, :k] @ yhat[:k])
    r = len(basis)
    coef = coef[:, :r]
    coef[np.arange(r)[None, :] > last[:, None]] = 0.0
    return np.array(basis).T.reshape(d, r), coef, last


def _expected_coordinate(coef: FloatArray, shift: FloatArray) -> float:
    """Mean of ``N(0, 1)`` on the interval cut by rows ``coef * y >= shift`` (heuristic)."""
    bounds = shift / coef
    lo = float(np.max(bounds[coef > 0], initial=-np.inf))
    hi = float(np.min(bounds[coef < 0], initial=np.inf))
    if not lo < hi:
        return lo if np.isfinite(lo) else hi
    _, alpha, beta, _, _ = _tn_terms(np.array([lo]), np.array([hi]))
    return float(alpha[0] - beta[0])


def _anchors(g: FloatArray, c: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Interior start point and mode of ``N(0, I)`` on ``{g z >= c}``.

    Raises :class:`EmptyPolytopeError` (:class:`DegeneratePolytopeError`) when the depth
    ``max t : g z - t >= c`` from :func:`scipy.optimize.linprog` is negative (zero).
    """
    m, d = g.shape
    cost, a_ub, bounds = np.r_[np.zeros(d), -1.0], np.c_[-g, np.ones(m)], [(None, None)] * d
    res = optimize.linprog(cost, A_ub=a_ub, b_ub=-c, bounds=bounds + [(None, 1.0)])
    if res.status != 0:
        raise SolverError(str(res.status), f"depth of the polyhedron: {res.message}")
    depth = float(res.x[d])
    if depth < -FEASIBILITY_TOL:
        raise EmptyPolytopeError(f"the polyhedron A x >= b is empty (linprog depth {depth:.3g})")
    if depth <= FEASIBILITY_TOL:
        raise DegeneratePolytopeError(f"the polyhedron A x >= b has no interior ({depth:.3g})")
    center = res.x[:d]
    opt = optimize.minimize(
        lambda z: 0.5 * z @ z,
        center,
        jac=lambda z: z,
        method="SLSQP",
        constraints=[{"type": "ineq", "fun": lambda z: g @ z - c, "jac": lambda z: g}],
        options={"ftol": 1e-12, "maxiter": 500},
    )
    mode = opt.x if opt.success and np.all(g @ opt.x - c > -1e-7) else center
    start = mode + 0.2 * (center - mode)
    return (start if np.all(g @ start > c) else center), mode


def _box_rows(coef: FloatArray, c: FloatArray, k: int) -> tuple[list[float], list[bool]]:
    """Implied bounds ``min/max y_k`` over the polyhedron, relaxed by ``1e-6`` (relative).

    The rows are redundant, so any LP outcome but an optimum (unbounded, or HiGHS's
    "infeasible" for an unbounded direction of a feasible set) just adds no row.
    """
    r = coef.shape[1]
    offsets: list[float] = []
    lower: list[bool] = []
    for sign in (1.0, -1.0):
        cost = np.zeros(r)
        cost[k] = sign
        res = optimize.linprog(cost, A_ub=-coef, b_ub=-c, bounds=[(None, None)] * r)
        if res.status == 0:
            val = float(res.x[k])
            offsets.append(val - sign * 1e-6 * (1.0 + abs(val)))
            lower.append(sign > 0)
    return offsets, lower


def _geometry(mean: FloatArray, cov: FloatArray, A: FloatArray, b: FloatArray) -> _Geometry:
    """Whiten, rotate and group the constraints (module docstring, steps 1-2)."""
    chol = linalg.cholesky(cov, lower=True)
    g, c = A @ chol, b - A @ mean
    zero = ~np.any(A != 0.0, axis=1)
    if np.any(c[zero] > 0):
        raise EmptyPolytopeError("the polyhedron A x >= b is empty (a zero row of A has b > 0)")
    g, c = g[~zero], c[~zero]
    norms = np.linalg.norm(g, axis=1)
    g, c = g / norms[:, None], c / norms
    d = mean.size
    if g.shape[0] == 0:
        return _Geometry(mean, chol, (), np.zeros(0), np.zeros(0))
    start, mode = _anchors(g, c)
    basis, coef, last = _pivoted_lq(g, c, g @ mode - c <= 1e-6)
    r = basis.shape[1]
    full = np.hstack([basis, linalg.null_space(basis.T)]) if r < d else basis
    groups = []
    for k in range(r):
        rows = last == k
        own = coef[rows, k]
        off, low = list(c[rows] / own), list(own > 0)
        slope = [coef[rows, :k] / own[:, None]]
        if k < r - 1:
            box_off, box_low = _box_rows(coef, c, k)
            off, low = off + box_off, low + box_low
            slope.append(np.zeros((len(box_off), k)))
        groups.append(_Group(np.array(off), np.vstack(slope), np.array(low, dtype=bool)))
    return _Geometry(mean, chol @ full, tuple(groups), basis.T @ start, basis.T @ mode)


def _representatives(groups: tuple[_Group, ...], ref: FloatArray) -> tuple[Any, ...]:
    """Smooth majorant: per coordinate the lower/upper row binding at ``ref``.

    Returns ``(P, p, Q, q, key)`` with ``l(x) = p - P x`` and ``u(x) = q - Q x``.
    """
    r = len(groups)
    big_p, big_q = np.zeros((r, r)), np.zeros((r, r))
    p, q = np.zeros(r), np.full(r, np.inf)
    key = []
    for k, grp in enumerate(groups):
        val = grp.offset - grp.slope @ ref[:k]
        low = np.flatnonzero(grp.lower)
        i = int(low[np.argmax(val[low])])
        p[k], big_p[k, :k] = grp.offset[i], grp.slope[i]
        up = np.flatnonzero(~grp.lower)
        j = int(up[np.argmin(val[up])]) if up.size else -1
        if j >= 0:
            q[k], big_q[k, :k] = grp.offset[j], grp.slope[j]
        key.append((i, j))
    return big_p, p, big_q, q, tuple(key)


def _solve_mu(x: FloatArray, lo: FloatArray, hi: FloatArray) -> FloatArray:
    """Solve ``E[TN(mu, 1; lo, hi)] = x`` for ``mu`` (vectorised safeguarded Newton).

    The bracket uses the Mills-ratio bound ``phi(t)/Phi(-t) < t + 1/t`` (``t > 0``).
    """
    dlo, dhi = x - lo, hi - x
    left = lo - 1.0 / dlo
    right = np.where(np.isfinite(hi), hi + 1.0 / dhi, x)
    mu = np.clip(np.where(dlo < 0.8, lo - 1.0 / dlo, x - 0.8), left, right)
    width = 1e-12 * np.minimum(1.0, np.minimum(dlo, dhi))
    for _ in range(200):
        _, alpha, beta, a_alpha, b_beta = _tn_terms(lo - mu, hi - mu)
        gap = mu + alpha - beta - x
        if np.all(np.abs(gap) <= width + 1e-15 * (np.abs(mu) + np.abs(x))):
            return mu
        left, right = np.where(gap < 0, mu, left), np.where(gap > 0, mu, right)
        var = 1.0 + a_alpha - b_beta - (alpha - beta) ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            step = mu - gap / var
        bad = ~((step > left) & (step < right))
        mu = np.where(bad, 0.5 * (left + right), step)
        if np.all(right - left <= 4e-16 * (1.0 + np.abs(mu))):
            return mu
    raise SolverError("no convergence", "tilting equation E[y_k] = x_k (Botev 2017, Sec. 3)")


def _saddle_eval(x: FloatArray, system: tuple[Any, ...]) -> tuple[Any, ...] | None:
    """Value, gradient and Hessian of ``x -> min_mu psi_rep(x; mu)``; ``None`` off-domain."""
    big_p, p, big_q, q, _ = system
    r = p.size
    k1 = r - 1
    xf = np.append(x, 0.0)
    lo, hi = p - big_p @ xf, q - big_q @ xf
    if not (np.all(lo[:k1] < x) and np.all(x < hi[:k1]) and lo[k1] < hi[k1]):
        return None
    mu = np.zeros(r)
    mu[:k1] = _solve_mu(x, lo[:k1], hi[:k1])
    logp, alpha, beta, a_alpha, b_beta = _tn_terms(lo - mu, hi - mu)
    val = float(np.sum(logp) + np.sum(0.5 * mu[:k1] ** 2 - x * mu[:k1]))
    pc, qc = big_p[:, :k1], big_q[:, :k1]
    grad = -mu[:k1] + pc.T @ alpha - qc.T @ beta
    h_aa, h_bb, h_ab = a_alpha - alpha**2, -b_beta - beta**2, alpha * beta
    dx_a = h_aa[:, None] * pc + h_ab[:, None] * qc
    dx_b = h_ab[:, None] * pc + h_bb[:, None] * qc
    psi_xx = pc.T @ dx_a + qc.T @ dx_b
    psi_mx = (dx_a + dx_b)[:k1] - np.eye(k1)
    psi_mm = (1.0 + h_aa + 2.0 * h_ab + h_bb)[:k1]
    hess = psi_xx - psi_mx.T @ (psi_mx / psi_mm[:, None])
    return val, grad, hess, mu


def _maximise(system: tuple[Any, ...], x0: FloatArray) -> _Tilt:
    """Damped Newton ascent of the concave ``min_mu psi_rep``; the saddle point gives ``psi*``.

    The bound adds the Newton decrement and ``10 |grad|_1`` (concavity: ``psi(y) <=
    psi(x*) + grad . (y - x*)``) to the value at the final point.
    """
    cur = _saddle_eval(x0, system)
    if cur is None:
        raise SolverError("bad start", "minimax tilting: start point outside the polyhedron")
    x = x0
    for _ in range(200):
        val, grad, hess, mu = cur
        try:
            step = -np.linalg.solve(hess, grad) if x.size else x
        except np.linalg.LinAlgError:
            step = grad
        dec = float(grad @ step)
        if not dec >= 0:
            step, dec = grad, float(grad @ grad)
        bound = val + dec + 10.0 * float(np.sum(np.abs(grad))) + _BOUND_MARGIN
        if dec <= 1e-15 * (1.0 + abs(val)):
            return _Tilt(mu, bound, x)
        t = 1.0
        while t > 1e-10:
            new = _saddle_eval(x + t * step, system)
            if new is not None and new[0] >= val + 1e-4 * t * dec:
                break
            t *= 0.5
        else:
            if dec < 1e-10 * (1.0 + abs(val)):  # at the noise floor of the gradient
                return _Tilt(mu, bound, x)
            raise SolverError("line search failed", "minimax tilting (Botev 2017, Sec. 3)")
        x, cur = x + t * step, new
    raise SolverError("no convergence", "minimax tilting Newton iteration (Botev 2017, Sec. 3)")


def _find_tilt(geom: _Geometry) -> _Tilt:
    """Minimax tilting of the smooth majorant, refreshing the representative rows.

    Every round gives a valid bound; the smallest (highest acceptance) is kept, and a
    failed refresh after a successful round just ends the refreshes.
    """
    r = len(geom.groups)
    if r == 0:
        return _Tilt(np.zeros(0), 0.0, np.zeros(0))
    best: _Tilt | None = None
    seen: set[Any] = set()
    ref = geom.reference
    for _ in range(_REP_ROUNDS):
        system = _representatives(geom.groups, ref)
        if system[4] in seen:
            break
        seen.add(system[4])
        try:
            tilt = _maximise(system, geom.start[: r - 1])
        except SolverError:
            if best is None:
                raise
            break
        if best is None or tilt.log_bound < best.log_bound:
            best = tilt
        ref = tilt.point
    assert best is not None  # the first round either succeeds or raises
    return best


def _propose(
    geom: _Geometry, mu: FloatArray, n: int, rng: np.random.Generator
) -> tuple[FloatArray, FloatArray]:
    """``n`` draws of the tilted sequential proposal: ``x`` (n, d) and ``psi`` (n,)."""
    d, r = geom.mean.size, len(geom.groups)
    y = np.empty((n, d))
    logw = np.zeros(n)
    for k, grp in enumerate(geom.groups):
        bnd = grp.offset[None, :] - y[:, :k] @ grp.slope.T
        lo = np.max(np.where(grp.lower, bnd, -np.inf), axis=1)
        hi = np.min(np.where(grp.lower, np.inf, bnd), axis=1)
        a, b = lo - mu[k], hi - mu[k]
        logp = _log_ndtr_diff(a, b)
        z = _truncnorm_icdf(a, b, 1.0 - rng.random(n))
        y[:, k] = np.where(np.isfinite(logp), mu[k] + z, lo)
        logw += logp + mu[k] * (0.5 * mu[k] - y[:, k])
    y[:, r:] = rng.standard_normal((n, d - r))
    return geom.mean + y @ geom.transform.T, logw


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
        geom = _geometry(mu, sig, mat, rhs)
    except EmptyPolytopeError as err:
        return PolytopeProbability(0.0, 0.0, 0, f"exact: {err}", float("-inf"))
    if not geom.groups:
        return PolytopeProbability(1.0, 0.0, 0, "exact: every row of A is zero", 0.0)
    tilt = _find_tilt(geom)
    _, logw = _propose(geom, tilt.mu, int(n_draws), rng)
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
    geom = _geometry(*_validate(mean, cov, A, b))
    return _accept_reject(geom, _find_tilt(geom), int(n), rng, int(max_proposals))


def _accept_reject(
    geom: _Geometry, tilt: _Tilt, n: int, rng: np.random.Generator, max_proposals: int
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
        x, logw = _propose(geom, tilt.mu, size, rng)
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
