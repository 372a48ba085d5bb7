"""The exact cut of a line (and a plane) by a region.

Oracles: the closed form of a line crossing half-spaces checked against a dense scan of
the line; the bisection against the known facet crossing of a polyhedral cone (the
higgs-quartic cone's inner and outer sets agree, so a shrunk inner set must be pushed
back to the outer facet by the exact membership alone).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from eftsieve.limits.line import BISECTION, BOUNDARY, FACETS, UNDECIDED, facet_interval, line_cut
from eftsieve.limits.plane import clip_polygon, plane_cut, polygon_area
from eftsieve.region.model import Facet, Region


def box_region(inner: bool = False) -> Region:
    """-1 <= x <= 2, y >= -1, x + y <= 3 (an ordinary, non-cone region)."""
    rows = [((1.0, 0.0), -1.0), ((-1.0, 0.0), -2.0), ((0.0, 1.0), -1.0), ((-1.0, -1.0), -3.0)]
    facets = tuple(Facet(n, b, "test", "box") for n, b in rows)
    inner_f = tuple(Facet(n, b + 0.5, "test", "box") for n, b in rows) if inner else ()
    return Region("none", ("x", "y"), {"name": "none"}, facets, inner_facets=inner_f)


def test_closed_form_matches_a_dense_scan():
    region = box_region()
    a, b = region.arrays()
    rng = np.random.default_rng(7)
    xs = np.linspace(-20, 20, 100_001)
    for _ in range(25):
        p0, v = rng.normal(size=2), rng.normal(size=2)
        got = facet_interval(a, b, p0, v)
        ok = ((p0 + xs[:, None] * v) @ a.T - b >= 0).all(axis=1)
        if not ok.any():
            assert got is None
            continue
        assert got is not None
        assert got[0] == pytest.approx(max(xs[ok].min(), -20), abs=5e-4)
        assert got[1] == pytest.approx(min(xs[ok].max(), 20), abs=5e-4)


def test_a_region_without_exact_test_reports_the_gap():
    cut = line_cut(box_region(inner=True), np.zeros(2), np.array([1.0, 0.0]))
    assert cut.method == UNDECIDED
    assert cut.allowed == pytest.approx((-1.0, 2.0)) and cut.sure == pytest.approx((-0.5, 1.5))


def test_a_parallel_line_outside_misses_the_region():
    assert line_cut(box_region(), np.array([0.0, -2.0]), np.array([1.0, 0.0])).allowed is None


@pytest.fixture(scope="module")
def higgs(cone_regions):
    return cone_regions("higgs-quartic")


def test_facets_alone_where_inner_and_outer_agree(higgs):
    cut = line_cut(higgs, np.array([1.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0]))
    assert cut.method in (FACETS, BOUNDARY)
    assert cut.allowed[0] == pytest.approx(-1.0, abs=1e-6)  # fS0 + fS1 + fS2 >= 0


def test_bisection_pushes_a_shrunk_inner_set_back_to_the_facet(higgs):
    # inner set shrunk by the extra facet fS0 + 2 fS2 >= 0: on the line fS0 = 1, fS1 = 0,
    # fS2 = x it ends at x = -1/2, while the cone (fS0 + fS2 >= 0) ends at x = -1
    extra = Facet((1.0, 0.0, 2.0), 0.0, "test", "shrink")
    region = replace(higgs, inner_facets=higgs.facets + (extra,))
    cut = line_cut(region, np.array([1.0, 0.0, 0.0]), np.array([0.0, 0.0, 1.0]))
    assert cut.method in (BISECTION, BOUNDARY) and cut.solves > 5
    assert cut.sure[0] == pytest.approx(-1.0, abs=1e-5)
    assert cut.allowed[0] == pytest.approx(-1.0, abs=1e-5)
    assert np.isinf(cut.allowed[1]) and np.isinf(cut.sure[1])
    assert line_cut(region, np.array([1.0, 0.0, 0.0]), np.array([0.0, 0.0, 1.0]),
                    exact=False).method == UNDECIDED


def test_an_unbounded_outer_end_is_closed_by_the_exact_test(higgs):
    # drop the facet fS0 + fS1 + fS2 >= 0 from the outer set: the outer cut of the line
    # (1, -x, 0) is unbounded above, the exact test finds the excluded side and bisects
    # back to x = 1
    outer = tuple(f for f in higgs.facets if not np.allclose(f.normal, np.ones(3) / np.sqrt(3),
                                                             atol=1e-6))
    assert len(outer) == len(higgs.facets) - 1
    region = replace(higgs, facets=outer)
    cut = line_cut(region, np.array([1.0, 0.0, 0.0]), np.array([0.0, -1.0, 0.0]))
    assert cut.allowed[1] == pytest.approx(1.0, abs=1e-5)
    assert cut.sure[1] == pytest.approx(1.0, abs=1e-5)


def test_polygon_clipping_area_of_a_disc_in_a_wedge(higgs):
    # the plane (fS0, fS1) cuts the cone in the wedge fS0 >= 0, fS0 + fS1 >= 0 (135 deg):
    # a disc centred on the apex keeps 135/360 of its area
    cut = plane_cut(higgs, np.zeros(3), np.eye(3)[0], np.eye(3)[1])
    phi = np.linspace(0, 2 * np.pi, 20_000, endpoint=False)
    disc = np.column_stack([np.cos(phi), np.sin(phi)])
    frac = polygon_area(clip_polygon(disc, cut.allowed)) / polygon_area(disc)
    assert frac == pytest.approx(135 / 360, abs=1e-6)
    assert cut.contains(np.array([[1.0, -0.5], [-0.1, 1.0], [1.0, -1.5]])).tolist() == [
        True, False, False]
