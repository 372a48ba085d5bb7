"""The effective sample size of weighted samples (Kish, "Survey Sampling", Wiley 1965)."""

from __future__ import annotations

import numpy as np


def kish_ess(w: np.ndarray | None, n: int | None = None) -> float:
    """Kish's effective sample size (sum w)^2 / sum w^2; ``n`` for unweighted samples.

    Parameters
    ----------
    w
        The weights, or None for ``n`` equally weighted samples.
    n
        The number of samples when ``w`` is None.

    Examples
    --------
    >>> kish_ess(np.array([1.0, 1.0, 2.0]))
    2.6666666666666665
    >>> kish_ess(None, 10)
    10.0
    """
    if w is None:
        return float(n or 0)
    w = np.asarray(w, dtype=float)
    s2 = float((w * w).sum())
    return float(w.sum() ** 2 / s2) if s2 > 0 else 0.0


def kish_ess_from_sums(sw: float, sw2: float) -> float:
    """Kish's effective sample size from the sums of the weights and of their squares."""
    return sw**2 / sw2 if sw2 > 0 else 0.0
