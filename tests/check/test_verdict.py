"""The fit verdict's statistics against reference libraries."""

from __future__ import annotations

import numpy as np


def test_normal_sf_matches_scipy_stats():
    """The light normal tail of the verdict equals scipy.stats.norm.sf (reference library)."""
    from scipy import stats

    from eftsieve.check.verdict import normal_sf

    x = np.array([-np.inf, -8.0, -1.5, 0.0, 0.3, 2.0, 5.0, 12.0, 30.0, np.inf])
    np.testing.assert_allclose(normal_sf(x), stats.norm.sf(x), rtol=1e-12, atol=0)
