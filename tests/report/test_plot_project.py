"""Projections of regions onto one coordinate (the corner plot's ranges)."""

from __future__ import annotations

import numpy as np
import pytest

from eftsieve.report.plot_project import projection_interval

#: the transverse-W extremal cone in (fT0, fT1, fT2): fT2 >= 0, 4 fT1 + fT2 >= 0,
#: 8 fT0 + 4 fT1 + 3 fT2 >= 0, 12 fT0 + 4 fT1 + 5 fT2 >= 0 (docs/physics_cones.md;
#: the first three from Zhang & Zhou arXiv:1808.00010, from memory)
TRANSVERSE_W = np.array([[0, 0, 1], [0, 4, 1], [8, 4, 3], [12, 4, 5]], dtype=float)


@pytest.mark.parametrize(("k", "want"), [(0, (-np.inf, np.inf)),   # fT0 < 0 with fT1, fT2 > 0
                                         (1, (-np.inf, np.inf)),   # fT1 < 0 with fT2 > -4 fT1
                                         (2, (0.0, np.inf))])      # fT2 >= 0 is a facet
def test_cone_projection_interval(k, want):
    assert projection_interval(TRANSVERSE_W, np.zeros(4), k) == want


def test_cone_projection_interval_in_many_dimensions():
    # the positive orthant of 18 coordinates, rotated: every end is 0 or infinite, and a
    # coordinate axis of the orthant projects onto [0, inf)
    rng = np.random.default_rng(3)
    q, _ = np.linalg.qr(rng.normal(size=(18, 18)))
    normals = np.eye(18) @ q.T                    # the cone {x : (x q)_i >= 0}
    for k in range(18):
        lo, hi = projection_interval(normals, np.zeros(18), k)
        want_lo = 0.0 if (q[k] >= 0).all() else -np.inf
        want_hi = 0.0 if (q[k] <= 0).all() else np.inf
        assert (lo, hi) == (want_lo, want_hi)
    orthant = np.eye(18)
    assert projection_interval(orthant, np.zeros(18), 5) == (0.0, np.inf)


def test_polytope_projection_interval():
    # the triangle x >= 0, y >= 0, x + y <= 2 projects onto [0, 2] (common practice)
    normals = np.array([[1.0, 0.0], [0.0, 1.0], [-1.0, -1.0]])
    lo, hi = projection_interval(normals, np.array([0.0, 0.0, -2.0]), 0)
    assert lo == pytest.approx(0.0, abs=1e-12) and hi == pytest.approx(2.0)
