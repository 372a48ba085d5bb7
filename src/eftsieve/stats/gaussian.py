"""Draws from a (possibly degenerate) multivariate normal, one way for the whole package.

:func:`psd_factor` gives L with L L^T = C for any positive semi-definite C (a singular
covariance gives a Gaussian on a subspace).  :func:`draw` makes n draws from a seeded
generator; the draws of rows i..j do not depend on how the stream is cut into calls,
because the standard normals come from one generator in row order and the product with
L^T is formed column by column with element-wise operations (no BLAS kernel whose last
bits depend on the batch size).
"""

from __future__ import annotations

import numpy as np

from eftsieve.tolerances import FEASIBILITY_TOL, PSD_TOL


def psd_factor(cov: np.ndarray) -> np.ndarray:
    """A factor L with L L^T = cov, for positive semi-definite ``cov`` (eigenvalues clipped
    at zero)."""
    w, v = np.linalg.eigh(np.asarray(cov, dtype=float))
    return v * np.sqrt(np.clip(w, 0.0, None))


def draw(mean: np.ndarray, factor: np.ndarray, n: int, rng: np.random.Generator) -> np.ndarray:
    """n draws of N(mean, factor factor^T), shape (n, d), reproducible across chunkings.

    Examples
    --------
    >>> x = draw(np.zeros(2), np.eye(2), 4, np.random.default_rng(0))
    >>> x.shape
    (4, 2)
    """
    mean = np.asarray(mean, dtype=float)
    z = rng.standard_normal((n, len(mean)))
    out = np.empty((n, len(mean)))
    for k in range(len(mean)):
        col = np.full(n, mean[k])
        for j in np.flatnonzero(factor[k] != 0):
            col += z[:, j] * factor[k, j]
        out[:, k] = col
    return out


def whitening(cov: np.ndarray) -> np.ndarray:
    """W (k, r) with cov = W W^T, from the eigen decomposition; eigenvalues below
    :data:`~eftsieve.tolerances.PSD_TOL` times the largest are dropped, so a singular
    (positive semi-definite) covariance gives r < k: the Gaussian lives on a subspace."""
    e, v = np.linalg.eigh(np.asarray(cov, dtype=float))
    top = float(e.max()) if e.size else 0.0
    keep = e > PSD_TOL * top if top > 0 else np.zeros(len(e), dtype=bool)
    return v[:, keep] * np.sqrt(e[keep])


def reduce_to_subspace(mean: np.ndarray, w: np.ndarray, a: np.ndarray, b: np.ndarray
                       ) -> tuple[np.ndarray, np.ndarray, bool]:
    """The polytope ``a x >= b`` in whitened coordinates z (x = mean + W z, z ~ N(0, I_r)).

    Returns unit-norm rows ``g`` and ``h`` with ``g z >= h``.  Rows the Gaussian cannot
    move (a W = 0, a direction of zero variance) are dropped when the mean satisfies
    them; the flag says whether one is violated (then no draw can reach the polytope).
    """
    g = a @ w
    h = b - a @ mean
    norms = np.linalg.norm(g, axis=1)
    # relative to the Gaussian's own scale (its largest standard deviation), so that
    # the test does not depend on the units of the fit
    wscale = float(np.linalg.norm(w, axis=0).max(initial=0.0))
    flat = norms <= FEASIBILITY_TOL * np.linalg.norm(a, axis=1) * wscale
    size = np.maximum(1.0, np.maximum(np.abs(b), np.abs(a @ mean)))
    unreachable = bool((h[flat] > FEASIBILITY_TOL * size[flat]).any())
    keep = ~flat
    return g[keep] / norms[keep, None], h[keep] / norms[keep], unreachable
