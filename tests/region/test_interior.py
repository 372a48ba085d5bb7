"""Loading a region proves it has an interior; the relaxation method (Motzkin &
Schoenberg 1954) finds a strictly interior point without an LP, and its answers are
checked here against scipy.optimize.linprog's Chebyshev ball (reference library)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import linprog

from eftsieve.region.model import _interior_point


def _cheb_radius(a: np.ndarray, b: np.ndarray) -> float:
    k = a.shape[1]
    c = np.zeros(k + 1)
    c[-1] = -1.0
    res = linprog(c, A_ub=np.hstack([-a, np.linalg.norm(a, axis=1)[:, None]]), b_ub=-b,
                  bounds=[(-1e6, 1e6)] * k + [(0, 1e6)], method="highs")
    return float(res.x[-1]) if res.status == 0 else 0.0


@pytest.mark.parametrize("seed", range(20))
def test_interior_point_agrees_with_the_chebyshev_ball(seed):
    rng = np.random.default_rng(seed)
    k, m = int(rng.integers(2, 6)), int(rng.integers(3, 40))
    a = rng.normal(size=(m, k))
    centre = rng.normal(size=k) * 3
    b = a @ centre - np.abs(rng.normal(size=m)) * rng.choice([0.01, 1.0])
    x = _interior_point(a, b, max(1.0, float(np.abs(b).max())))
    radius = _cheb_radius(a, b)
    assert radius > 0
    if x is not None:  # never a wrong answer
        assert np.all(a @ x - b > 0)
    if radius > 0.05:  # and an answer whenever the region is not thin (else: the LP)
        assert x is not None


def test_an_empty_region_gives_no_point():
    a = np.array([[1.0, 0.0], [-1.0, 0.0]])
    b = np.array([1.0, 0.0])  # x >= 1 and x <= 0
    assert _interior_point(a, b, 1.0) is None
    assert _cheb_radius(a, b) == 0.0


def test_a_cone_has_an_interior_point():
    a = np.array([[1.0, 0.5], [0.0, 1.0]])  # the photon-quartic wedge (hep-th/0602178)
    x = _interior_point(a, np.zeros(2), 1.0)
    assert x is not None and np.all(a @ x > 0)
