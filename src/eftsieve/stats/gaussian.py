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
