"""Derivative bounds of fixed-t dispersion relations, scanned over a kinematic domain.

A *bound family* (``second-derivative``, ``t-derivative``) evaluated at one kinematic
point p of one channel gives an inequality that is linear in the constants x,

    K(p) . x + K0(p) >= 0.

When the normal K(p) has a fixed direction for a channel (true for one-loop ChPT, where
the constants enter through a polynomial whose relevant derivatives do not depend on
the kinematics), the strongest bound of that channel maximises the normalised offset
b(p) = -K0(p)/|K(p)| over the domain.  :func:`best_facet` scans a dense grid of the unit
cube that parametrises the domain, then refines the best local maxima with a bounded
quasi-Newton optimiser (L-BFGS-B).

Every facet is an exact evaluation at a point of the domain: an optimiser that stops
early gives a weaker, still valid bound, never an invalid one.  The certificate records
the point, the value and whether the refinement converged.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from eftsieve.region.model import Facet

#: evaluator: points in the unit cube (n, k) -> (K0 (n,), K (n, d), physical point dict of arrays)
Evaluator = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]]


@dataclass(frozen=True)
class ScanSettings:
    """Grid and refinement settings of a kinematic scan.

    Attributes
    ----------
    points_per_axis
        Grid points per unit-cube axis.
    n_refine
        How many of the best grid points are refined.
    """

    points_per_axis: tuple[int, ...]
    n_refine: int = 4

    def to_dict(self) -> dict[str, object]:
        return {"points_per_axis": list(self.points_per_axis), "n_refine": self.n_refine}


def unit_grid(points_per_axis: tuple[int, ...]) -> np.ndarray:
    """A tensor grid of the unit cube including its faces, shape (N, k)."""
    axes = [np.linspace(0.0, 1.0, n) for n in points_per_axis]
    mesh = np.meshgrid(*axes, indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=-1)


def normalised_offsets(evaluate: Evaluator, cube: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Offsets b = -K0/|K| and unit normals at cube points."""
    k0, k, _ = evaluate(cube)
    norms = np.linalg.norm(k, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        b = np.where(norms > 0, -k0 / norms, -np.inf)
    b = np.where(np.isfinite(b), b, -np.inf)
    return b, k / np.where(norms > 0, norms, 1.0)[:, None]


def _zoom(evaluate: Evaluator, start: np.ndarray, step: np.ndarray, levels: int = 8,
          points: int = 7) -> tuple[np.ndarray, float]:
    """Vectorised bounded pattern search: a small grid around the best point, shrinking."""
    best = start.copy()
    best_b = float(normalised_offsets(evaluate, best[None, :])[0][0])
    offsets = unit_grid((points,) * len(start)) * 2.0 - 1.0
    for _ in range(levels):
        cand = np.clip(best[None, :] + offsets * step[None, :], 0.0, 1.0)
        b, _ = normalised_offsets(evaluate, cand)
        i = int(np.argmax(b))
        if b[i] > best_b:
            best, best_b = cand[i], float(b[i])
        step = step / (points - 1) * 2.0
    return best, best_b


def _polish(evaluate: Evaluator, start: np.ndarray, start_b: float,
            ) -> tuple[np.ndarray, float, bool]:
    """An L-BFGS-B polish inside the unit cube; keeps the start if it does not improve."""
    def negb(c: np.ndarray) -> float:
        b, _ = normalised_offsets(evaluate, c[None, :])
        return float(-b[0]) if np.isfinite(b[0]) else 1e30

    from scipy.optimize import minimize  # lazy: a check never builds a region

    res = minimize(negb, start, method="L-BFGS-B", bounds=[(0.0, 1.0)] * len(start),
                   options={"ftol": 1e-15, "gtol": 1e-11, "maxiter": 30})
    if -res.fun > start_b:
        return np.clip(res.x, 0.0, 1.0), -float(res.fun), bool(res.success)
    return start, start_b, bool(res.success)


def best_facet(
    evaluate: Evaluator, family: str, channel: str, settings: ScanSettings,
    display_normal: Callable[[np.ndarray], np.ndarray] | None = None,
) -> Facet:
    """The strongest bound of one family and channel over the domain, as a Facet.

    ``display_normal`` rescales the unit normal for readability (for example so that its
    smallest non-zero entry is 1); the offset is rescaled with it.
    """
    cube = unit_grid(settings.points_per_axis)
    b, normals = normalised_offsets(evaluate, cube)
    order = np.argsort(b)[::-1]
    starts = cube[order[: settings.n_refine]]
    best_c, best_b = cube[order[0]], float(b[order[0]])
    if not np.isfinite(best_b):
        raise ValueError(f"{family}/{channel}: no finite bound anywhere on the grid")
    step = 1.0 / (np.asarray(settings.points_per_axis, dtype=float) - 1.0)
    for start in starts:
        c, val = _zoom(evaluate, start, step)
        if val >= best_b:
            best_c, best_b = c, val
    best_c, best_b, converged = _polish(evaluate, best_c, best_b)
    k0, k, phys = evaluate(best_c[None, :])
    unit = k[0] / np.linalg.norm(k[0])
    if not np.allclose(unit, normals[order[0]], atol=1e-9):
        raise ValueError(f"{family}/{channel}: the normal varies over the domain; "
                         "this scan needs a fixed normal direction per channel")
    scale = display_normal(unit) if display_normal is not None else unit
    factor = float(np.linalg.norm(scale))
    point = {name: float(v[0]) for name, v in phys.items()}
    return Facet(tuple(float(v) for v in scale), best_b * factor, family, channel, point,
                 value=best_b * factor, status="converged" if converged else "refined",
                 extra={"grid_best": float(b[order[0]]) * factor,
                        "scan": settings.to_dict()})


def smallest_entry_one(unit: np.ndarray) -> np.ndarray:
    """Rescale a normal so that its smallest non-zero |entry| is 1 (readable facets)."""
    nz = np.abs(unit[np.abs(unit) > 1e-12 * np.abs(unit).max()])
    return unit / nz.min()


def t_derivative_combination(second: np.ndarray, d_fixed_s: np.ndarray, d_s3: np.ndarray,
                             s: np.ndarray, u: np.ndarray, s_th: float = 4.0,
                             u_th: float = 4.0) -> tuple[np.ndarray, np.ndarray]:
    """min over alpha in [0, 1] of S + D_alpha S / (3 m_alpha), which must be >= 0.

    The first t-derivative bound of the family ``t-derivative`` (docs/physics.md has the
    derivation, after de Rham, Melville, Tolley & Zhou, arXiv:1702.06134).  S = d^2T/ds^2
    at fixed t; D_alpha = d/dt|_s - alpha d/ds|_t, the direction that raises t by 1 and
    lowers s by alpha and u by 1 - alpha; m_alpha = max(alpha/(s_th - s),
    (1 - alpha)/(u_th - u)) with the s- and u-channel thresholds s_th, u_th (4 M^2 for
    equal masses).  The inequality D_alpha S + 3 m_alpha S >= 0 follows from the
    twice-subtracted fixed-t dispersion relation with positive absorptive parts whose
    t-derivatives are positive (P_l(x) >= 1, P_l'(x) >= 0 for x >= 1).  On each side of
    the kink alpha* = (s_th - s)/(s_th - s + u_th - u) the combination is monotonic in
    alpha, so the minimum is at alpha = 0, alpha* or 1.  Returns the minimum and the alpha
    attaining it.
    """
    a, b = s_th - s, u_th - u
    alphas = np.stack([np.zeros_like(s), a / (a + b), np.ones_like(s)])
    d_alpha = d_fixed_s[None, :] - alphas * d_s3[None, :]
    m = np.maximum(alphas / a, (1.0 - alphas) / b)
    cand = second[None, :] + d_alpha / (3 * m)
    best = np.argmin(cand, axis=0)
    cols = np.arange(len(s))
    return cand[best, cols], alphas[best, cols]
