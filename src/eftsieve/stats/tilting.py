"""Geometry and minimax tilting behind :mod:`eftsieve.stats.tmvn`.

The numerics of the truncated multivariate normal, following the steps of the
:mod:`eftsieve.stats.tmvn` docstring (Z. I. Botev, J. R. Stat. Soc. B 79 (2017) 125,
arXiv:1603.04166): whitening, pivoted LQ and grouping of the constraints into bounds on
rotated coordinates (:func:`build_geometry`), the tilting parameter and acceptance bound
from the saddle point of the smooth majorant (:func:`find_tilt`), and draws of the tilted
sequential proposal with their log-weights (:func:`propose`).  Also the tail-stable
one-dimensional pieces: ``log(Phi(b) - Phi(a))``, inverse Mills ratios and inversion
sampling of a truncated standard normal.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray
from scipy import linalg, optimize, special

from eftsieve.errors import DegeneratePolytopeError, EmptyPolytopeError, SolverError
from eftsieve.tolerances import FEASIBILITY_TOL

FloatArray = NDArray[np.float64]

_LOG_SQRT_2PI = 0.5 * np.log(2.0 * np.pi)
_RANK_TOL = 1e-9  # rotated coefficient (of a unit row) below this counts as zero
_BOUND_MARGIN = 1e-9  # added to the log acceptance bound
_REP_ROUNDS = 4  # refreshes of the representative rows


@dataclass(frozen=True)
class Group:
    """Rows bounding one rotated coordinate: ``y_k >= or <= offset - slope . y_{<k}``."""

    offset: FloatArray
    slope: FloatArray
    lower: NDArray[np.bool_]


@dataclass(frozen=True)
class Geometry:
    """Whitened, rotated problem: ``x = mean + transform @ y``, ``y`` standard normal."""

    mean: FloatArray
    transform: FloatArray
    groups: tuple[Group, ...]
    start: FloatArray  # strictly interior point (rotated coordinates, length rank)
    reference: FloatArray  # point where representative rows are first chosen


@dataclass(frozen=True)
class Tilt:
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


def build_geometry(mean: FloatArray, cov: FloatArray, A: FloatArray, b: FloatArray) -> Geometry:
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
        return Geometry(mean, chol, (), np.zeros(0), np.zeros(0))
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
        groups.append(Group(np.array(off), np.vstack(slope), np.array(low, dtype=bool)))
    return Geometry(mean, chol @ full, tuple(groups), basis.T @ start, basis.T @ mode)


def _representatives(groups: tuple[Group, ...], ref: FloatArray) -> tuple[Any, ...]:
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
    with np.errstate(divide="ignore", invalid="ignore"):   # a failed step is caught above
        hess = psi_xx - psi_mx.T @ (psi_mx / psi_mm[:, None])
    return val, grad, hess, mu


def _maximise(system: tuple[Any, ...], x0: FloatArray) -> Tilt:
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
            return Tilt(mu, bound, x)
        t = 1.0
        while t > 1e-10:
            new = _saddle_eval(x + t * step, system)
            if new is not None and new[0] >= val + 1e-4 * t * dec:
                break
            t *= 0.5
        else:
            if dec < 1e-10 * (1.0 + abs(val)):  # at the noise floor of the gradient
                return Tilt(mu, bound, x)
            raise SolverError("line search failed", "minimax tilting (Botev 2017, Sec. 3)")
        x, cur = x + t * step, new
    raise SolverError("no convergence", "minimax tilting Newton iteration (Botev 2017, Sec. 3)")


def find_tilt(geom: Geometry) -> Tilt:
    """Minimax tilting of the smooth majorant, refreshing the representative rows.

    Every round gives a valid bound; the smallest (highest acceptance) is kept, and a
    failed refresh after a successful round just ends the refreshes.
    """
    r = len(geom.groups)
    if r == 0:
        return Tilt(np.zeros(0), 0.0, np.zeros(0))
    best: Tilt | None = None
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
    if best is None:  # the first round either succeeds or raises; never reached
        raise RuntimeError("minimax tilting produced no proposal")
    return best


def propose(
    geom: Geometry, mu: FloatArray, n: int, rng: np.random.Generator
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
