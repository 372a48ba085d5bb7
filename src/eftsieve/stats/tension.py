"""The tension between a Gaussian summary and a region, with its chi-bar-squared p-value.

:func:`tension` finds the minimal Mahalanobis distance from the mean to the region (a
convex QP, solved with cvxpy + Clarabel and verified through its KKT conditions), and
converts it into a p-value with the chi-bar-squared distribution for inequality
constraints (Shapiro, "Towards a unified theory of inequality constrained testing in
multivariate analysis", Int. Stat. Rev. 56 (1988) 49; Silvapulle & Sen, "Constrained
Statistical Inference", Wiley 2005, Sec. 3.4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np

from eftsieve.errors import SolverError
from eftsieve.region.model import Region
from eftsieve.stats.gaussian import reduce_to_subspace, whitening
from eftsieve.tolerances import (
    ACTIVE_TOL,
    DUAL_SIGN_TOL,
    FEASIBILITY_TOL,
    KKT_TOL,
    QP_FEASIBILITY_TOL,
    VERTEX_TOL,
)

#: largest number of facet subsets searched for the vertices of a region
MAX_VERTEX_SUBSETS = 2_000_000


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
    """Solve min (x - mean)^T cov^+ (x - mean) s.t. a x >= b, scale-free.

    The QP is posed in whitened coordinates z (x = mean + W z, cov = W W^T, see
    :func:`whitening`) with unit-norm constraint rows and the right-hand side scaled to
    order one, so that its tolerances do not depend on the units of the fit (covariances
    from 1e-30 to 1e30 behave alike).  A singular covariance is allowed: the distance is
    measured within its subspace, and is infinite when the region lies off it.  The
    solution (cvxpy + Clarabel) is verified through the KKT conditions and polished on
    its active set; a failed or inaccurate solve raises SolverError.
    """
    w = whitening(cov)
    if w.shape[1] == 0:  # a point mass: inside or not
        inside = bool((a @ mean - b >= -FEASIBILITY_TOL * np.maximum(1.0, np.abs(b))).all())
        return mean.copy(), (0.0 if inside else math.inf)
    g, h, unreachable = reduce_to_subspace(mean, w, a, b)
    if unreachable:
        return mean.copy(), math.inf
    if not len(h) or h.max() <= 0:  # the mean satisfies every facet
        return mean.copy(), 0.0
    scale = float(np.abs(h).max())
    u = _unit_qp(g, h / scale)
    z = scale * u
    return mean + w @ z, float(z @ z)


def _unit_qp(g: np.ndarray, h: np.ndarray) -> np.ndarray:
    """min |u|^2 s.t. g u >= h, with unit rows g and max |h| = 1; verified and polished."""
    import cvxpy as cp

    u = cp.Variable(g.shape[1])
    cons = [g @ u >= h]
    prob = cp.Problem(cp.Minimize(cp.sum_squares(u)), cons)
    try:
        prob.solve(solver=cp.CLARABEL)
    except cp.error.SolverError as err:
        raise SolverError("error", f"tension QP ({err})") from err
    if prob.status != cp.OPTIMAL or u.value is None:
        raise SolverError(str(prob.status), "tension QP (minimal Mahalanobis distance)")
    uv = np.asarray(u.value, dtype=float)
    lam = np.asarray(cons[0].dual_value, dtype=float)
    if (g @ uv - h).min() < -QP_FEASIBILITY_TOL:
        raise SolverError("infeasible-solution", "tension QP: the solution violates a facet")
    resid = 2 * uv - g.T @ lam
    if float(np.linalg.norm(resid)) > KKT_TOL * max(1.0, 2 * float(np.linalg.norm(uv))) or (
            lam < -DUAL_SIGN_TOL).any():
        raise SolverError("kkt-failed", f"tension QP: KKT conditions not met to {KKT_TOL:g}")
    active = np.nonzero((g @ uv - h) < ACTIVE_TOL)[0]
    if len(active):  # polish: the exact minimiser on the active set, if its signs hold
        ga = g[active]
        try:
            mult = np.linalg.solve(ga @ ga.T, h[active])
        except np.linalg.LinAlgError:
            return uv
        exact = ga.T @ mult
        if (mult >= -1e-12).all() and (g @ exact - h).min() >= -1e-9:
            return exact
    return uv


def cone_weights(g: np.ndarray, rng: np.random.Generator, n: int = 200_000) -> np.ndarray:
    """Chi-bar-squared weights w_i, i = 0..k, of the cone {z : g z >= 0} for z ~ N(0, I_k).

    w_i is the probability that the projection of z onto the cone lies in the relative
    interior of an i-dimensional face (Silvapulle & Sen 2005, Sec. 3.4).  Closed forms for
    k = 1 and k = 2 (w_2 = theta/2pi, w_1 = 1/2, w_0 = 1/2 - theta/2pi for a wedge of
    whitened opening angle theta); Monte Carlo with exact active-set projections otherwise
    (by enumerating active sets for few rows, by non-negative least squares on the polar
    cone for many: Moreau's decomposition z = P_C(z) + P_polar(z), with the polar cone
    {-g^T lam : lam >= 0}, so P_C(z) = z + g^T lam* with lam* = argmin_{lam >= 0}
    |g^T lam + z|, Lawson & Hanson's NNLS).
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
    if math.comb(len(g), min(len(g), k)) > MAX_ACTIVE_SETS:
        return _cone_weights_nnls(g, rng, min(n, NNLS_DRAWS))
    return _cone_weights_mc(g, rng, n)


#: cones with more candidate active sets than this get their weights from NNLS projections
MAX_ACTIVE_SETS = 20_000
#: Monte Carlo draws of the NNLS weights (standard error below 0.004 on each weight)
NNLS_DRAWS = 20_000


def _cone_weights_nnls(g: np.ndarray, rng: np.random.Generator, n: int) -> np.ndarray:
    """Chi-bar-squared weights by projecting n standard normal draws onto the cone with
    NNLS on its polar (docstring of :func:`cone_weights`); the face of each projection
    has dimension k - rank(rows of g active there)."""
    from scipy.optimize import nnls

    k = g.shape[1]
    z = rng.standard_normal((n, k))
    dim = np.empty(n, dtype=int)
    gt = np.ascontiguousarray(g.T)
    for i in range(n):
        try:
            lam, _ = nnls(gt, -z[i])
        except RuntimeError as err:   # scipy's iteration limit: no weights, never a guess
            raise SolverError("nnls-failed", f"chi-bar-squared weights ({err})") from err
        proj = z[i] + gt @ lam
        tol = 1e-9 * max(1.0, float(np.abs(z[i]).max()))
        act = np.abs(g @ proj) <= tol
        dim[i] = k - (np.linalg.matrix_rank(g[act], tol=1e-9) if act.any() else 0)
    return np.bincount(dim, minlength=k + 1) / n


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
    if x <= 0:
        return 1.0
    from scipy import special  # imported here: scipy.special costs ~0.4 s (issue 18)

    p = 0.0
    for i in range(1, len(weights)):
        p += float(weights[i]) * float(special.chdtrc(i, x))  # scipy.stats.chi2.sf
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
    active = tuple(int(i) for i in np.nonzero((a @ x - b) < ACTIVE_TOL * scale)[0])
    wf = whitening(cov)
    best = (-1.0, np.zeros(wf.shape[1] + 1), "")
    if not math.isfinite(d2):  # the region is off the Gaussian's subspace
        return Tension(math.inf, x, active, best[1], 0.0, math.inf, "off the subspace")
    inside = d2 <= FEASIBILITY_TOL  # p = 1 whatever the cone: the facet cones suffice
    cones = ((f"facet {i}", [i]) for i in range(len(b))) if inside else _candidate_cones(
        region, a, b)
    for cone, rows in cones:
        # the distance to a cone C is the norm of the projection onto its polar cone, so
        # its chi-bar-squared weights are those of C reversed: v_i = w_(k-i)(C)
        g = a[rows] @ wf
        g = g[np.linalg.norm(g, axis=1) > 0]
        if not len(g) or wf.shape[1] == 0:
            continue
        w = cone_weights(g / np.linalg.norm(g, axis=1)[:, None], rng)[::-1]
        p = chibar2_sf(d2, w)
        if p > best[0]:
            best = (p, w, cone)
    p, w, cone = best
    p = max(p, 0.0)
    if inside:
        p = 1.0
    if p >= 1.0:
        sigma = 0.0
    else:
        from scipy import special

        sigma = float(-special.ndtri(p))  # scipy.stats.norm.isf
    return Tension(math.sqrt(d2), x, active, w, p, max(sigma, 0.0), cone)


def _candidate_cones(region: Region, a: np.ndarray, b: np.ndarray):
    """Tangent cones of the region: one per facet and one per vertex (facets tight there).

    A positivity cone (every offset zero) has one vertex, its apex, whose tangent cone is
    the cone itself; the tangent cone at any other point contains it, so its polar is
    smaller and its p-value no larger: the apex is the least favourable point, and the
    vertices need not be enumerated (C(183, 18) subsets for the 18-coefficient cone)."""
    m, k = a.shape
    if not np.any(b):
        yield "apex", list(range(m))
        return
    for i in range(m):
        yield f"facet {i}", [i]
    if math.comb(m, k) > MAX_VERTEX_SUBSETS:
        raise SolverError("too-many-vertices", f"chi-bar-squared p-value: {m} facets in {k} "
                          "dimensions are too many vertex candidates to enumerate")
    for subset in combinations(range(m), k):
        sub = a[list(subset)]
        if np.linalg.matrix_rank(sub) < k:
            continue
        v = np.linalg.solve(sub, b[list(subset)])
        slack = a @ v - b
        scale = max(1.0, float(np.abs(b).max()))
        if (slack >= -VERTEX_TOL * scale).all():
            rows = [int(j) for j in np.nonzero(slack < VERTEX_TOL * scale)[0]]
            yield f"vertex {tuple(rows)}", rows


