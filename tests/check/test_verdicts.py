"""classify against many facets: the tiled path gives the per-facet loop's exact bits."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.check import verdicts


@pytest.mark.parametrize("m", [9, 68, 150])
def test_tiled_min_margin_equals_the_per_facet_loop(m, monkeypatch):
    rng = np.random.default_rng(m)
    a = rng.normal(size=(m, 2))
    a /= np.linalg.norm(a, axis=1)[:, None]
    b = rng.normal(size=m)
    y = rng.normal(size=(20_011, 2))
    y[7] = y[6]
    tiled = verdicts._min_margin(y, a, b)
    monkeypatch.setattr(verdicts, "FEW_FACETS", 10**9)  # force the per-facet loop
    loop = verdicts._min_margin(y, a, b)
    assert np.array_equal(tiled[0], loop[0]) and np.array_equal(tiled[1], loop[1])
    # the definition, with numpy's matrix product as the (last-bits) oracle
    np.testing.assert_allclose(tiled[0], (y @ a.T - b).min(axis=1), rtol=0, atol=1e-12)
    assert tiled[1].dtype == np.int32
