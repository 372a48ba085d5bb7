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


def test_inner_test_skips_outside_rows_without_changing_any_verdict():
    """Rows outside a verified outer facet are outside; the inner facets are evaluated on
    the other rows only.  Oracle: the verdict rule written out with numpy on all rows
    (inside the inner set by more than the band, else outside the outer set by more than
    the band, else marginal), for an inner set within the outer one."""
    import numpy as np

    from eftsieve.check.verdicts import INSIDE, MARGINAL, OUTSIDE, classify
    from eftsieve.region.model import Facet, Region

    outer = (Facet((1.0, 0.0), -1.0, "f", "a", {}), Facet((0.0, 1.0), -1.0, "f", "b", {}))
    inner = (Facet((1.0, 0.0), -0.5, "f", "a", {}), Facet((0.0, 1.0), -0.5, "f", "b", {}),
             Facet((1.0, 1.0), -0.8, "f", "c", {}))
    region = Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar"}, outer, {}, inner)
    y = np.random.default_rng(8).normal(size=(5000, 2))
    v = classify(y, region, 0.01)
    a, b = region.arrays()
    ai, bi = region.arrays(inner=True)
    m_out, m_in = (y @ a.T - b).min(axis=1), (y @ ai.T - bi).min(axis=1)
    want = np.where(m_in > 0.01, INSIDE, np.where(m_out < -0.01, OUTSIDE, MARGINAL))
    assert np.array_equal(v.verdict, want)
    assert (want == OUTSIDE).any() and (want == INSIDE).any() and (want == MARGINAL).any()


@pytest.mark.parametrize(("k", "m"), [(7, 40), (18, 183), (9, 300)])  # 300: a 16-bit index
def test_blas_screen_gives_the_elementwise_bits(k, m):
    """Many coordinates: the BLAS screen (one product per tile, then the element-wise
    margin of the winning facet) gives the element-wise values and facets bit for bit,
    for any batch, also with exact and near ties and non-finite rows; the error bound it
    relies on is Higham's gamma_n bound for sums in any order (common practice)."""
    rng = np.random.default_rng(k)
    a = rng.normal(size=(m, k))
    b = 0.1 * rng.normal(size=m)
    a[1], b[1] = a[0], b[0]                   # an exact duplicate facet: a tie everywhere
    a[3] = a[2] * (1 + 1e-15)                 # a near duplicate
    y = rng.normal(size=(30_011, k))
    y[:50] = 0.0                              # every margin is -b: ties between facets
    y[60, 2], y[61, 0] = np.inf, np.nan       # non-finite rows take the element-wise path
    y[70] *= 1e37                             # would overflow the float32 screen
    y[71] *= 1e-42                            # subnormal in float32 (absolute error term)
    y[72] *= 1e-300                           # rounds to zero in float32: ties of -b
    y[73, :] = 3e38                           # finite in double, inf in float32
    assert k >= verdicts.BLAS_MIN_DIM
    got = verdicts._min_margin_blas(y, a, b)
    want = verdicts._min_margin_elementwise(y, a, b)
    assert np.array_equal(got[0], want[0], equal_nan=True)
    assert np.array_equal(got[1], want[1])
    part = verdicts._min_margin_blas(y[:1234], a, b)           # another batch
    assert np.array_equal(part[0], want[0][:1234], equal_nan=True)
    assert np.array_equal(part[1], want[1][:1234])
    np.testing.assert_allclose(got[0][100:], (y[100:] @ a.T - b).min(axis=1), rtol=0,
                               atol=1e-12)
    np.testing.assert_allclose(got[0][70], (y[70] @ a.T - b).min(), rtol=1e-12)
