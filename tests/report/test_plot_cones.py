"""Cone figures: the 2-D wedge, the normalised 3-D slice, and corner projections.

Oracles: a cone {c : n_i . c >= 0} in the plane is bounded by the rays perpendicular
to its facet normals (elementary geometry); the extreme rays of a 3-D polyhedral cone
are cross products of pairs of facet normals; the square pyramid |a|, |b| <= c meets
the plane c = 1 in the square [-1, 1]^2 and projects onto (a, c) as the wedge |a| <= c
and onto (a, b) as the whole plane (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.contour import ContourSet

from eftsieve.region.model import Facet, Region
from eftsieve.report.plot_cone import choose_slice, cone_slice_figure, extreme_rays
from eftsieve.report.plots import corner_figure, region_figure

CONE = {"cone_problem": {"note": "test cone"}, "family": "extremal"}


def _wedge() -> Region:
    """The photon-quartic shape: zeta1 + 0.5 zeta2 >= 0, zeta2 >= 0 (values for the test)."""
    facets = (Facet((1.0, 0.5), 0.0, "extremal", "dual a"),
              Facet((0.0, 1.0), 0.0, "extremal", "dual b"))
    inner = (Facet((1.0, 0.25), 0.0, "extremal", "inner a"),
             Facet((0.0, 1.0), 0.0, "extremal", "inner b"))
    return Region("photon-quartic", ("zeta1", "zeta2"), {"name": "none"}, facets,
                  settings=CONE, inner_facets=inner)


def _pyramid() -> Region:
    facets = tuple(Facet(n, 0.0, "extremal", f"d{k}") for k, n in enumerate(
        [(1.0, 0.0, 1.0), (-1.0, 0.0, 1.0), (0.0, 1.0, 1.0), (0.0, -1.0, 1.0)]))
    return Region("transverse-w", ("a", "b", "c"), {"name": "none"}, facets, settings=CONE)


def _lines(ax, gid: str) -> list[np.ndarray]:
    """Segments of a NaN-separated line artist."""
    line = [ln for ln in ax.lines if ln.get_gid() == gid][0]
    xy = np.column_stack([line.get_xdata(), line.get_ydata()]).astype(float)
    parts = np.split(xy, np.flatnonzero(np.isnan(xy[:, 0])))
    return [s[np.isfinite(s).all(axis=1)] for s in parts
            if np.isfinite(s).all(axis=1).sum() >= 2]


def test_wedge_boundary_rays_are_perpendicular_to_the_facet_normals() -> None:
    region = _wedge()
    ax = region_figure(region).axes[0]
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    assert x0 < 0 < x1 and y0 < 0 < y1, "the apex is in view"
    normals = [np.array(f.normal) / np.linalg.norm(f.normal) for f in region.facets]
    rays = []
    for seg in _lines(ax, "allowed-boundary"):
        seg = seg[np.isfinite(seg).all(axis=1)]
        d = seg[-1] - seg[0]
        d = d / np.linalg.norm(d)
        assert min(abs(float(d @ n)) for n in normals) < 1e-9
        assert min(float(np.linalg.norm(p)) for p in seg) < 1e-9, "rays start at the apex"
        rays.append(d)
    assert len(rays) == 2
    # the expected rays (-0.5, 1)/|.| and (1, 0): the perpendiculars inside the cone
    expected = [np.array([-0.5, 1.0]) / np.hypot(0.5, 1.0), np.array([1.0, 0.0])]
    for e in expected:
        assert any(abs(abs(float(r @ e)) - 1) < 1e-9 for r in rays)


def test_wedge_shell_and_legend() -> None:
    fig = region_figure(_wedge(), limits=((-1.0, 1.0), (-1.0, 1.0)))
    ax = fig.axes[0]
    assert [p for p in ax.patches if p.get_gid() == "undecided"], "the shell is drawn"
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(t.startswith("shell") for t in texts)
    assert "inner cone (verified)" in texts
    assert any(t.startswith("F1: zeta1 + 0.5 zeta2 \u2265 0") for t in texts)
    assert {t.get_text() for t in ax.texts if str(t.get_gid()).startswith("facet-label")} \
        == {"F1", "F2"}


def test_extreme_rays_of_the_square_pyramid() -> None:
    a = np.array([f.normal for f in _pyramid().facets])
    rays = extreme_rays(a)
    expected = np.array([[1, 1, 1], [1, -1, 1], [-1, 1, 1], [-1, -1, 1]]) / np.sqrt(3)
    assert len(rays) == 4
    for e in expected:
        assert np.isclose(rays, e).all(axis=1).any()


def test_pyramid_is_sliced_at_c_equal_one_into_the_unit_square() -> None:
    region = _pyramid()
    sl = choose_slice(region, (0, 1))
    assert sl.statement == "slice at c = +1"
    ax = cone_slice_figure(region).axes[0]
    assert "slice at c = +1" in ax.get_title()
    allowed = [p for p in ax.patches if p.get_gid() == "allowed"][0].get_xy()[:-1]
    square = {(1.0, 1.0), (1.0, -1.0), (-1.0, 1.0), (-1.0, -1.0)}
    assert {tuple(np.round(v, 9) + 0.0) for v in allowed} == square


def test_orthant_gets_a_gnomonic_slice_with_its_rays_as_vertices() -> None:
    facets = tuple(Facet(tuple(np.eye(3)[k]), 0.0, "extremal", f"e{k}") for k in range(3))
    region = Region("transverse-w", ("a", "b", "c"), {"name": "none"}, facets, settings=CONE)
    sl = choose_slice(region, (0, 1))
    assert sl.statement.startswith("gnomonic")
    np.testing.assert_allclose(sl.basis[:, 2], np.ones(3) / np.sqrt(3), atol=1e-12)
    ax = cone_slice_figure(region).axes[0]
    verts = [p for p in ax.patches if p.get_gid() == "allowed"][0].get_xy()[:-1]
    # each vertex, lifted back to the plane d.c = 1, is a coordinate axis ray
    lifted = np.array([sl.basis @ np.array([u, v, 1.0]) for u, v in verts])
    lifted /= lifted.sum(axis=1)[:, None]
    for k in range(3):
        assert np.isclose(lifted, np.eye(3)[k], atol=1e-9).all(axis=1).any()


def test_cone_slice_moves_samples_along_rays_and_counts_those_behind() -> None:
    region = _pyramid()
    rng = np.random.default_rng(0)
    x = rng.normal([0.0, 0.0, 1.0], 0.4, (4000, 3))
    ax = cone_slice_figure(region, samples=x).axes[0]
    behind = int((x[:, 2] <= 0).sum())
    assert f"{behind} of 4000 samples lie behind it" in ax.get_title()
    inside = [c for c in ax.collections if c.get_gid() == "posterior-inside"][0]
    pts = np.asarray(inside.get_offsets())
    assert (np.abs(pts) <= 1 + 1e-9).all(), "inside samples land in the slice's square"
    assert not [c for c in ax.collections if c.get_gid() == "posterior-hpd"]


def test_corner_panels_of_a_three_coordinate_cone_show_its_projection() -> None:
    region = _pyramid()
    x = np.random.default_rng(1).normal([0.0, 0.0, 1.0], 0.5, (3000, 3))
    fig = corner_figure(x, ["a", "b", "c"], region=region)
    axes = np.array(fig.axes).reshape(3, 3)
    for r in range(3):
        for c in range(r):
            ax = axes[r, c]
            has_line = any(ln.get_gid() == "boundary" for ln in ax.lines)
            has_note = any(t.get_gid() == "no-bound-note" for t in ax.texts)
            assert has_line != has_note, (r, c)
    # (a, b): no bound from the pyramid alone; (a, c) and (b, c): the wedge |x| <= c
    assert any(t.get_gid() == "no-bound-note" for t in axes[1, 0].texts)
    for seg in _lines(axes[2, 0], "boundary"):
        seg = seg[np.isfinite(seg).all(axis=1)]
        np.testing.assert_allclose(np.abs(seg[:, 0]), seg[:, 1], atol=1e-6)
    assert [ax.get_xlabel() for ax in axes[2]] == ["a", "b", "c"], "no suffix on axes"


def test_corner_legend_names_only_what_is_drawn() -> None:
    region = Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar"},
                    (Facet((0.0, 1.0), -50.0, "second-derivative", "far"),))
    x = np.random.default_rng(2).normal([0.0, 1.0], 0.3, (2000, 2))
    fig = corner_figure(x, ["lbar1", "lbar2"], region=region)
    assert not fig.legends, "the excluded set is out of view: no legend entry for it"


def test_corner_does_not_smooth_a_set_truncated_at_the_boundary() -> None:
    """Samples of a Gaussian truncated at lbar2 >= 1 (density highest at the edge):
    the 95 % contour must not reach below the edge by more than half a bin."""
    region = Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar"},
                    (Facet((0.0, 1.0), 1.0, "second-derivative", "edge"),))
    rng = np.random.default_rng(3)
    x = rng.normal([0.0, 1.0], [0.5, 0.5], (60_000, 2))
    x = x[x[:, 1] >= 1.0]
    fig = corner_figure(x, ["lbar1", "lbar2"], region=region)
    ax = np.array(fig.axes).reshape(2, 2)[1, 0]
    ylo, yhi = ax.get_ylim()
    half_bin = 0.5 * (yhi - ylo) / 30
    lines = [c for c in ax.collections if isinstance(c, ContourSet) and not c.filled]
    assert lines, "the 68 % / 95 % contour lines are drawn"
    lowest = min(float(p.vertices[:, 1].min()) for c in lines for p in c.get_paths()
                 if len(p.vertices))
    assert lowest >= 1.0 - half_bin - 1e-9


@pytest.mark.parametrize("dim", [4])
def test_cone_of_four_coefficients_draws_a_pair_projection(dim: int) -> None:
    normals = [tuple(np.eye(dim)[k]) for k in range(dim)]
    region = Region("transverse-w", tuple(f"c{k}" for k in range(dim)), {"name": "none"},
                    tuple(Facet(n, 0.0, "extremal", "e") for n in normals), settings=CONE)
    ax = region_figure(region, coords=(0, 1)).axes[0]
    assert "projection of the outer cone on (c0, c1)" in ax.get_title()
    allowed = [p for p in ax.patches if p.get_gid() == "allowed"][0].get_xy()
    # to the LP feasibility tolerance (HiGHS, about 1e-7)
    assert (allowed >= -1e-6).all(), "the projection of the orthant is the quadrant"


def test_solver_noise_in_a_normal_does_not_erase_a_projected_bound() -> None:
    """A normal (1e-8, 1, 0.25) from a conic solver stands for (0, 1, 0.25): its shadow
    on (b, c) is still b + 0.25 c >= 0, not the whole plane."""
    from eftsieve.report.plot_project import projection_plane

    normals = np.array([[1e-8, 1.0, 0.25], [1e-8, 0.0, 1.0], [1.0, 0.5, 0.375]])
    plane = projection_plane(normals, np.zeros(3), (1, 2))
    assert len(plane.b) == 2
    for n in ([1.0, 0.25], [0.0, 1.0]):
        n = np.array(n) / np.linalg.norm(n)
        assert np.isclose(np.abs(plane.a @ n), 1.0, atol=1e-6).any()


def test_the_lp_wedge_equals_the_bisected_projection() -> None:
    """The projection of a cone on a pair of coordinates from nine LPs (four charts) has
    the boundary rays that bisection between feasible and infeasible ray directions finds
    (an independent construction: a grid of ray-feasibility LPs, bisected to 1e-10 rad),
    for wedges, half-planes and the whole plane."""
    from eftsieve.report.plot_project import _cone_projection_grid, _wedge_by_lp

    rng = np.random.default_rng(4)
    kinds = set()
    cones = []
    for trial in range(6):
        d = 4 + trial % 3
        centre = rng.normal(size=d)
        normals = rng.normal(size=(4 + 2 * trial, d))
        normals += (1.0 - normals @ centre / (centre @ centre))[:, None] * centre  # c holds
        cones.append(normals)
    # x0, x2, x3 >= 0 and x1 + x2 + x3 >= 0: the shadow on (x0, x1) is the half-plane x0 >= 0
    cones.append(np.array([[1.0, 0, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1], [0, 1, 1, 1]]))
    for normals in cones:
        d = normals.shape[1]
        for pair in ((0, 1), (1, d - 1)):
            fast, grid = _wedge_by_lp(normals, pair), _cone_projection_grid(normals, pair)
            assert fast is not None and len(fast.b) == len(grid.b)
            kinds.add(len(grid.b) if len(grid.b) == 0 else
                      "half-plane" if np.allclose(grid.a[0], grid.a[1], atol=1e-6) else "wedge")
            for n in fast.a:
                assert np.isclose(np.abs(grid.a @ n), 1.0, atol=1e-7).any()
    assert kinds == {0, "half-plane", "wedge"}, kinds
