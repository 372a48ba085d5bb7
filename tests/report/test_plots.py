"""Tests of the region and corner figures: structure and geometry of the drawn artists."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from matplotlib.collections import PathCollection
from matplotlib.contour import ContourSet
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import PathPatch
from matplotlib.path import Path as MplPath

from eftsieve.region.model import Facet, Region
from eftsieve.report.plots import corner_figure, region_figure, save_corner, save_region_plot

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
# the only vertex of the test region: lbar2 = 1.35 and lbar1 + 2 lbar2 = 3.925
VERTEX = np.array([3.925 - 2 * 1.35, 1.35])


def _region() -> Region:
    return Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar", "pion_mass_mev": 139.57},
                  (Facet((0.0, 1.0), 1.35, "second-derivative", "pi+ pi0", {"s": 0.0, "t": 4.0}),
                   Facet((1.0, 2.0), 3.925, "second-derivative", "pi0 pi0",
                         {"s": 0.0, "t": 4.0})))


def _inner_region() -> Region:
    inner = (Facet((0.0, 1.0), 1.6, "sum-rule", "inner a"),
             Facet((1.0, 2.0), 4.4, "sum-rule", "inner b"))
    return Region("scalar-eft", ("g2", "g3"), {"name": "g"}, _region().facets,
                  inner_facets=inner)


def _samples(n: int = 4000, seed: int = 0, shift: tuple[float, float] = (0.0, 0.0)) -> np.ndarray:
    rng = np.random.default_rng(seed)
    mean = np.array([-0.4, 4.3]) + np.array(shift)
    return rng.multivariate_normal(mean, [[0.4, 0.1], [0.1, 0.09]], n)


def _by_gid(artists, gid: str) -> list:
    return [a for a in artists if a.get_gid() == gid]


def _one(artists, gid: str):
    found = _by_gid(artists, gid)
    assert len(found) == 1, f"expected one artist {gid!r}, found {len(found)}"
    return found[0]


def _legend_texts(fig: Figure) -> list[str]:
    legends = list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend()]
    return [t.get_text() for leg in legends for t in leg.get_texts()]


def _ring_areas(path: MplPath) -> list[float]:
    """Signed (shoelace) areas of the closed rings of a compound path."""
    areas, ring = [], []
    for vertex, code in zip(path.vertices, path.codes, strict=True):
        if code == MplPath.CLOSEPOLY:
            xy = np.array(ring)
            areas.append(0.5 * float(np.sum(xy[:, 0] * np.roll(xy[:, 1], -1)
                                            - np.roll(xy[:, 0], -1) * xy[:, 1])))
            ring = []
        else:
            ring.append(vertex)
    return areas


def _polygon_area(xy: np.ndarray) -> float:
    return 0.5 * abs(float(np.sum(xy[:, 0] * np.roll(xy[:, 1], -1)
                                  - np.roll(xy[:, 0], -1) * xy[:, 1])))


def _scatters(ax) -> list:
    return [c for c in ax.collections if str(c.get_gid()).startswith("posterior-")
            and c.get_gid() != "posterior-hpd"]


def _shown(ax) -> np.ndarray:
    """Every drawn sample (the scatters of every verdict)."""
    return np.vstack([np.asarray(c.get_offsets()) for c in _scatters(ax)])


def _points(line: Line2D) -> np.ndarray:
    xy = np.column_stack([line.get_xdata(), line.get_ydata()]).astype(float)
    return xy[np.isfinite(xy).all(axis=1)]


# ---- region figure, 2-D ----------------------------------------------------------------
def test_region_figure_draws_every_facet_line_on_its_boundary() -> None:
    region = _region()
    fig = region_figure(region)
    assert isinstance(fig, Figure)
    assert len(fig.axes) == 1
    ax = fig.axes[0]
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    for k, facet in enumerate(region.facets):
        ends = _points(_one(ax.lines, f"facet-{k}"))
        assert ends.shape == (2, 2)
        np.testing.assert_allclose(ends @ np.array(facet.normal), facet.offset, atol=1e-9)
        # the segment runs across the whole view: both ends on the frame
        on_frame = (np.isclose(ends[:, 0], x0) | np.isclose(ends[:, 0], x1)
                    | np.isclose(ends[:, 1], y0) | np.isclose(ends[:, 1], y1))
        assert on_frame.all()


def test_region_figure_auto_limits_show_the_vertex() -> None:
    ax = region_figure(_region()).axes[0]
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    assert x0 < VERTEX[0] < x1 and y0 < VERTEX[1] < y1


def test_region_figure_hatches_the_excluded_union_without_per_facet_tints() -> None:
    region = _region()
    ax = region_figure(region).axes[0]
    for k in range(len(region.facets)):
        assert not _by_gid(ax.patches, f"excluded-{k}"), "one hatch, no overlapping tints"
    union = _one(ax.patches, "excluded")
    assert isinstance(union, PathPatch)
    assert union.get_hatch()
    # the box with the allowed polygon cut out: two rings of opposite orientation, so
    # that the non-zero fill rule leaves the allowed polygon unshaded
    outer, hole = _ring_areas(union.get_path())
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    assert outer == pytest.approx((x1 - x0) * (y1 - y0))
    assert hole == pytest.approx(-_polygon_area(_one(ax.patches, "allowed").get_xy()))


def test_region_figure_allowed_polygon_and_boundary() -> None:
    region = _region()
    ax = region_figure(region).axes[0]
    a, b = region.arrays()
    allowed = _one(ax.patches, "allowed").get_xy()
    assert (allowed @ a.T - b >= -1e-9).all()
    assert np.isclose(allowed, VERTEX).all(axis=1).any(), "the vertex is a polygon corner"
    edge_pts = _points(_one(ax.lines, "allowed-boundary"))
    margins = edge_pts @ a.T - b
    assert (margins >= -1e-9).all()
    assert (np.abs(margins).min(axis=1) <= 1e-9).all(), "boundary points lie on a facet"


def test_region_figure_labels_facets_by_channel_and_family() -> None:
    region = _region()
    fig = region_figure(region)
    ax = fig.axes[0]
    for k, facet in enumerate(region.facets):
        text = _one(ax.texts, f"facet-label-{k}").get_text()
        assert facet.channel in text and facet.family in text
    assert ax.get_xlabel() == "lbar1 (dimensionless)"
    assert ax.get_ylabel() == "lbar2 (dimensionless)"
    assert "chpt-su2" in ax.get_title()
    assert {"allowed", "excluded"} <= set(_legend_texts(fig))


def test_region_figure_title_and_limits_are_honoured() -> None:
    ax = region_figure(_region(), limits=((-3.0, 4.0), (0.0, 6.0)), title="my title").axes[0]
    assert ax.get_title() == "my title"
    assert ax.get_xlim() == (-3.0, 4.0) and ax.get_ylim() == (0.0, 6.0)


def test_region_figure_with_samples_draws_hpd_contours_and_scatter() -> None:
    fig = region_figure(_region(), samples=_samples(5000))
    ax = fig.axes[0]
    contours = _one(ax.collections, "posterior-hpd")
    assert isinstance(contours, ContourSet)
    assert len(contours.levels) == 2 and contours.levels[0] < contours.levels[1]
    filled = [c for c in ax.collections if isinstance(c, ContourSet) and c.filled]
    assert not filled, "contour lines only: the region's tints stay readable"
    assert all(isinstance(s, PathCollection) for s in _scatters(ax))
    assert len(_shown(ax)) == 2000
    assert "fit: 68% / 95% HPD" in _legend_texts(fig)


def test_region_figure_weighted_samples() -> None:
    x = _samples(1500)
    w = np.random.default_rng(1).uniform(0.0, 1.0, len(x))
    w[:100] = 0.0
    ax = region_figure(_region(), samples=x, weights=w).axes[0]
    assert isinstance(_one(ax.collections, "posterior-hpd"), ContourSet)
    shown = _shown(ax)
    assert len(shown) == 1400, "points of zero weight are not drawn"
    assert not (shown[:, None, :] == x[None, :100, :]).all(axis=2).any()


def test_region_figure_few_samples_show_points_only() -> None:
    fig = region_figure(_region(), samples=_samples(12))
    ax = fig.axes[0]
    assert not _by_gid(ax.collections, "posterior-hpd")
    assert len(_shown(ax)) == 12
    assert any(t.startswith("fit samples: ") for t in _legend_texts(fig))


def test_region_figure_limits_cover_far_samples_and_the_region() -> None:
    x = _samples(3000, shift=(50.0, -30.0))
    ax = region_figure(_region(), samples=x).axes[0]
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    lo, hi = np.quantile(x, [0.005, 0.995], axis=0)
    assert x0 <= lo[0] and hi[0] <= x1 and y0 <= lo[1] and hi[1] <= y1
    # some allowed part (or at least a boundary) stays in view
    assert _by_gid(ax.lines, "facet-0") or _by_gid(ax.lines, "facet-1")
    assert y1 > 1.35


def test_region_figure_band_edges_are_parallel_lines() -> None:
    region = _region()
    sigma = 0.2
    ax = region_figure(region, bands={1: sigma}).axes[0]
    n = np.array(region.facets[1].normal)
    for k in (1, 2):
        pts = _points(_one(ax.lines, f"band-1-{k}sigma"))
        dist = pts @ n - region.facets[1].offset
        np.testing.assert_allclose(np.abs(dist), k * sigma, rtol=1e-9)
        assert (dist > 0).any() and (dist < 0).any(), "both edges of the band"
    assert not _by_gid(ax.lines, "band-0-1sigma")


def test_region_figure_inner_outer_band_is_drawn() -> None:
    region = _inner_region()
    fig = region_figure(region)
    ax = fig.axes[0]
    band = _one(ax.patches, "undecided")
    assert isinstance(band, PathPatch)
    outer, hole = _ring_areas(band.get_path())
    assert outer == pytest.approx(_polygon_area(_one(ax.patches, "allowed").get_xy()))
    assert hole < 0 < outer + hole, "the inner set is cut out of the allowed polygon"
    a_in, b_in = region.arrays(inner=True)
    inner_pts = _points(_one(ax.lines, "inner-boundary"))
    margins = inner_pts @ a_in.T - b_in
    assert (margins >= -1e-9).all() and (np.abs(margins).min(axis=1) <= 1e-9).all()
    assert "numerically undecided" in _legend_texts(fig)
    plain = region_figure(_region()).axes[0]
    assert not _by_gid(plain.patches, "undecided")


def test_region_figure_nearly_axis_parallel_facets() -> None:
    facets = (Facet((1e-9, 1.0), 1.0, "f", "flat"), Facet((1.0, -1e-9), -2.0, "f", "steep"))
    region = Region("t", ("a", "b"), {}, facets)
    ax = region_figure(region).axes[0]
    for k, facet in enumerate(facets):
        ends = _points(_one(ax.lines, f"facet-{k}"))
        np.testing.assert_allclose(ends @ np.array(facet.normal), facet.offset, atol=1e-9)
    assert _one(ax.patches, "allowed")


def test_region_figure_half_plane_and_empty_region() -> None:
    half = Region("t", ("a", "b"), {}, (Facet((1.0, 1.0), 1.0, "f", "c"),))
    ax = region_figure(half).axes[0]
    assert len(_one(ax.patches, "allowed").get_xy()) >= 3
    empty = Region("t", ("a", "b"), {}, (Facet((1.0, 0.0), 1.0, "f", "c"),
                                         Facet((-1.0, 0.0), 0.0, "f", "d")))
    ax = region_figure(empty).axes[0]
    assert not _by_gid(ax.patches, "allowed")
    assert list(_one(ax.patches, "excluded").get_path().codes).count(MplPath.CLOSEPOLY) == 1
    assert _one(ax.texts, "empty-note")


def test_region_figure_slices_a_three_coordinate_region() -> None:
    facets = (Facet((1.0, 0.0, 0.5), 0.0, "f", "x"), Facet((0.0, 1.0, 0.0), 0.0, "f", "y"),
              Facet((-1.0, -1.0, 0.0), -5.0, "f", "z"), Facet((0.0, 0.0, 1.0), 0.0, "f", "w"),
              Facet((0.0, 0.0, -1.0), -2.0, "f", "v"))
    region = Region("t3", ("a", "b", "c"), {}, facets)
    ax = region_figure(region, coords=(0, 1)).axes[0]
    assert "slice at c=" in ax.get_title()
    assert len(_by_gid(ax.lines, "facet-0")) == 1
    assert not _by_gid(ax.lines, "facet-3"), "facets of c alone do not cross the plane"


def test_region_figure_swapped_coords() -> None:
    region = _region()
    ax = region_figure(region, coords=(1, 0)).axes[0]
    assert ax.get_xlabel() == "lbar2 (dimensionless)"
    ends = _points(_one(ax.lines, "facet-1"))
    np.testing.assert_allclose(ends[:, ::-1] @ np.array(region.facets[1].normal),
                               region.facets[1].offset, atol=1e-9)


# ---- region figure, 1-D ----------------------------------------------------------------
def _line_region(inner: bool = False) -> Region:
    facets = (Facet((1.0,), 1.35, "second-derivative", "pi+ pi0"),
              Facet((-2.0,), -9.0, "positivity", "upper"))
    inner_facets = (Facet((1.0,), 1.6, "s", "a"), Facet((-1.0,), -4.0, "s", "b")) if inner else ()
    return Region("t1", ("c",), {"name": "y"}, facets, inner_facets=inner_facets)


def test_region_figure_one_coordinate_interval() -> None:
    region = _line_region()
    fig = region_figure(region, samples=np.random.default_rng(0).normal(3.0, 1.0, 500))
    assert len(fig.axes) == 1
    ax = fig.axes[0]
    for k, facet in enumerate(region.facets):
        xs = np.asarray(_one(ax.lines, f"facet-{k}").get_xdata(), dtype=float)
        np.testing.assert_allclose(xs * facet.normal[0], facet.offset, atol=1e-9)
        assert facet.channel in _one(ax.texts, f"facet-label-{k}").get_text()
    bar = np.asarray(_one(ax.lines, "allowed-boundary").get_xdata(), dtype=float)
    np.testing.assert_allclose(bar, [1.35, 4.5], atol=1e-12)
    assert len(_by_gid(ax.patches, "excluded")) == 2
    assert _one(ax.patches, "posterior-hist")
    assert ax.get_xlabel() == "c"


def test_region_figure_one_coordinate_inner_band() -> None:
    fig = region_figure(_line_region(inner=True), limits=(0.0, 6.0))
    ax = fig.axes[0]
    assert ax.get_xlim() == (0.0, 6.0)
    assert len(_by_gid(ax.patches, "undecided")) == 2
    inner = np.asarray(_one(ax.lines, "inner-boundary").get_xdata(), dtype=float)
    np.testing.assert_allclose(inner, [1.6, 4.0], atol=1e-12)
    assert "numerically undecided" in _legend_texts(fig)


def test_region_figure_one_coordinate_unbounded_side() -> None:
    region = Region("t1", ("c",), {}, (Facet((1.0,), 1.35, "f", "lo"),), )
    ax = region_figure(region).axes[0]
    bar = np.asarray(_one(ax.lines, "allowed-boundary").get_xdata(), dtype=float)
    assert bar[0] == pytest.approx(1.35) and bar[1] == pytest.approx(ax.get_xlim()[1])
    assert len(_by_gid(ax.patches, "excluded")) == 1


# ---- input checks ----------------------------------------------------------------------
@pytest.mark.parametrize("kwargs", [
    {"samples": np.array([[0.0, 1.0], [np.nan, 2.0]])},
    {"samples": np.zeros((5, 3))},
    {"samples": np.zeros((3, 2)), "weights": [1.0, np.inf, 1.0]},
    {"samples": np.zeros((3, 2)), "weights": [1.0, -1.0, 1.0]},
    {"samples": np.zeros((3, 2)), "weights": [1.0, 1.0]},
    {"weights": [1.0]},
    {"coords": (0, 0)},
    {"bands": {7: 0.1}},
    {"bands": {0: np.nan}},
    {"limits": ((1.0, 0.0), (0.0, 1.0))},
])
def test_region_figure_rejects_bad_inputs(kwargs: dict) -> None:
    with pytest.raises(ValueError):
        region_figure(_region(), **kwargs)


@pytest.mark.parametrize("kwargs", [
    {"samples": np.array([[0.0, 1.0], [np.nan, 2.0]]), "names": ["a", "b"]},
    {"samples": np.zeros((10, 2)), "names": ["a", "b", "c"]},
    {"samples": np.zeros((2, 3)), "names": ["a", "b", "c"]},
    {"samples": np.zeros((10, 2)), "names": ["a", "b"], "overlay": np.full((10, 2), np.inf)},
    {"samples": np.zeros((10, 2)), "names": ["a", "b"], "region": "named"},
    {"samples": np.zeros((10, 2)), "names": ["a", "b"], "region": "named",
     "region_coords": {0: 0, 1: 0}},
])
def test_corner_figure_rejects_bad_inputs(kwargs: dict) -> None:
    if kwargs.get("region") == "named":
        kwargs["region"] = _region()  # names a, b are not lbar1, lbar2
    with pytest.raises(ValueError):
        corner_figure(kwargs.pop("samples"), kwargs.pop("names"), **kwargs)


# ---- corner figure ---------------------------------------------------------------------
@pytest.mark.parametrize("k", [1, 2, 3])
def test_corner_figure_has_k_by_k_axes(k: int) -> None:
    x = np.random.default_rng(k).normal(size=(800, k))
    names = [f"p{i}" for i in range(k)]
    fig = corner_figure(x, names)
    assert len(fig.axes) == k * k
    assert fig.axes[-1].get_xlabel() == names[-1]
    assert not _legend_texts(fig)


def test_corner_figure_one_parameter_from_a_flat_array() -> None:
    fig = corner_figure(np.random.default_rng(0).normal(size=300), ["only"])
    assert len(fig.axes) == 1 and fig.axes[0].patches


def test_corner_figure_overlay_legend_and_colours() -> None:
    x = _samples(2000)
    after = 2.0 * x  # wider, so its histogram is lower than the first one
    fig = corner_figure(x, ["lbar1", "lbar2"], overlay=after, labels=("fit", "with bounds"))
    assert _legend_texts(fig) == ["fit", "with bounds"]
    diag = fig.axes[0]
    colours = {tuple(np.round(p.get_edgecolor()[:3], 3)) for p in diag.patches}
    assert len(colours) == 2, "two histograms in two colours"
    top = max(float(np.max(p.get_path().vertices[:, 1])) for p in diag.patches)
    assert diag.get_ylim()[1] >= top, "both histograms fit the panel"
    panel = fig.axes[2]
    assert len([c for c in panel.collections if isinstance(c, ContourSet)]) >= 4


def test_corner_figure_draws_region_in_the_region_panels() -> None:
    region = _region()
    x = np.random.default_rng(0).normal([0.0, 2.0, 0.0], 1.0, size=(2000, 3))
    fig = corner_figure(x, ["lbar1", "lbar2", "other"], region=region)
    axes = np.array(fig.axes).reshape(3, 3)
    panel = axes[1, 0]
    excluded = _one(panel.patches, "excluded")
    assert excluded.get_hatch()
    a, b = region.arrays()
    pts = _points(_one(panel.lines, "boundary"))
    margins = pts @ a.T - b
    assert (margins >= -1e-9).all() and (np.abs(margins).min(axis=1) <= 1e-9).all()
    # lbar2 >= 1.35 alone bounds the lbar2 histogram; lbar1 has no facet of its own
    assert _by_gid(axes[1, 1].patches, "excluded")
    np.testing.assert_allclose(_one(axes[1, 1].lines, "boundary").get_xdata(), 1.35)
    assert not _by_gid(axes[0, 0].patches, "excluded")
    for r, c in ((2, 0), (2, 1), (2, 2)):
        assert not _by_gid(axes[r, c].patches, "excluded")
    assert "excluded by the bounds" in _legend_texts(fig)


def test_corner_figure_region_coords_map_region_to_columns() -> None:
    x = np.random.default_rng(0).normal([2.0, 0.0, 0.0], 1.0, size=(1500, 3))
    fig = corner_figure(x, ["y", "z", "x"], region=_region(), region_coords={0: 2, 1: 0})
    axes = np.array(fig.axes).reshape(3, 3)
    panel = axes[2, 0]  # x axis column 0 (region 1), y axis column 2 (region 0)
    assert _by_gid(panel.patches, "excluded")
    pts = _points(_one(panel.lines, "boundary"))[:, ::-1]  # back to (lbar1, lbar2)
    a, b = _region().arrays()
    assert (np.abs(pts @ a.T - b).min(axis=1) <= 1e-9).all()
    assert not _by_gid(axes[1, 0].patches, "excluded")


def test_corner_figure_samples_far_outside_the_region() -> None:
    x = _samples(2000, shift=(50.0, -30.0))
    fig = corner_figure(x, ["lbar1", "lbar2"], region=_region())
    panel = np.array(fig.axes).reshape(2, 2)[1, 0]
    excluded = _one(panel.patches, "excluded")
    assert list(excluded.get_path().codes).count(MplPath.CLOSEPOLY) == 1, "all excluded"
    assert not _by_gid(panel.lines, "boundary")


def test_corner_figure_weighted_few_and_six_parameters() -> None:
    rng = np.random.default_rng(3)
    x = rng.normal(size=(1500, 6))
    w = rng.uniform(size=1500)
    fig = corner_figure(x, list("abcdef"), weights=w, overlay=x[:400] * 0.5)
    assert len(fig.axes) == 36
    few = corner_figure(rng.normal(size=(8, 2)), ["a", "b"], weights=np.r_[np.zeros(4), np.ones(4)])
    panel = few.axes[2]
    assert not [c for c in panel.collections if isinstance(c, ContourSet)]
    assert panel.lines, "few samples are drawn as points"


def test_corner_figure_one_dimensional_region() -> None:
    region = Region("t1", ("lbar2",), {}, (Facet((1.0,), 1.35, "f", "lo"),))
    x = np.random.default_rng(0).normal(1.5, 1.0, size=(600, 1))
    fig = corner_figure(x, ["lbar2"], region=region, overlay=x[x[:, 0] > 1.35])
    ax = fig.axes[0]
    assert _by_gid(ax.patches, "excluded")
    np.testing.assert_allclose(_one(ax.lines, "boundary").get_xdata(), 1.35)
    assert _legend_texts(fig) == ["before", "after", "excluded by the bounds"]


# ---- files -----------------------------------------------------------------------------
def test_save_region_plot_writes_a_png(tmp_path: Path) -> None:
    out = save_region_plot(_inner_region(), tmp_path / "sub" / "region.png",
                           samples=_samples(1000), bands={0: 0.05}, dpi=60)
    assert out == tmp_path / "sub" / "region.png"
    assert out.read_bytes()[:8] == PNG_SIGNATURE
    assert sorted(p.name for p in out.parent.iterdir()) == ["region.png"]


def test_save_region_plot_one_coordinate(tmp_path: Path) -> None:
    out = save_region_plot(_line_region(inner=True), tmp_path / "line.png", dpi=60)
    assert out.read_bytes()[:8] == PNG_SIGNATURE


def test_save_corner_writes_a_png(tmp_path: Path) -> None:
    x = _samples(1000)
    out = save_corner(tmp_path / "corner.png", x, ["lbar1", "lbar2"], region=_region(),
                      overlay=x[x[:, 1] > 4.3], dpi=60)
    assert out == tmp_path / "corner.png"
    assert out.read_bytes()[:8] == PNG_SIGNATURE
    assert [p.name for p in tmp_path.iterdir()] == ["corner.png"]


def test_region_figure_unbounded_small_scale_region_is_cut_at_the_origin() -> None:
    """Regression: an unbounded 3-D region with offsets of order 1e-3 (as chpt-su3's L_i^r)
    was cut at the Chebyshev centre clipped to the 1e3 search box, and a lone vertex
    gave a zero-width view with zero-length facet lines."""
    facets = (Facet((0.0, 1.0, 0.0), -0.9e-3, "f", "a"),
              Facet((2.0, 2.0, 1.0), -2.4e-3, "f", "b"),
              Facet((0.0, 4.0, 1.0), -1.2e-3, "f", "c"))
    region = Region("t3", ("L1", "L2", "L3"), {}, facets)
    ax = region_figure(region, coords=(0, 1)).axes[0]
    assert "slice at L3=0" in ax.get_title()
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    assert 1e-4 < x1 - x0 < 1e-1 and 1e-4 < y1 - y0 < 1e-1
    for gid in ("facet-1", "facet-2"):
        (line,) = _by_gid(ax.lines, gid)
        xs, ys = line.get_xdata(), line.get_ydata()
        assert np.hypot(xs[1] - xs[0], ys[1] - ys[0]) > 1e-4, gid
    ax = region_figure(region, coords=(0, 1), slice_at={"L3": -3e-3}).axes[0]
    assert "slice at L3=-0.003" in ax.get_title()
    with pytest.raises(ValueError, match="slice_at"):
        region_figure(region, coords=(0, 1), slice_at={"L9": 0.0})


def test_region_figure_with_many_facets_draws_their_envelope_only() -> None:
    """Regression: a 68-facet support-function region drew 68 labelled lines over the plot."""
    ang = np.linspace(0, 2 * np.pi, 40, endpoint=False)
    facets = tuple(Facet((float(np.cos(a)), float(np.sin(a))), -1.0, "f", f"d{k}")
                   for k, a in enumerate(ang))
    region = Region("t2", ("x", "y"), {}, facets)
    ax = region_figure(region).axes[0]
    assert not _by_gid(ax.lines, "facet-0") and not _by_gid(ax.texts, "facet-label-0")
    assert "40 facets" in ax.get_title()
    assert _one(ax.patches, "allowed") is not None
    few = Region("t2", ("x", "y"), {}, facets[::10])
    assert _by_gid(region_figure(few).axes[0].lines, "facet-0")


def test_corner_figure_keeps_each_column_at_its_own_scale() -> None:
    """Regression: dimensionful couplings (g2 ~ 1e-12, g4 ~ 1e-25) were all drawn on
    [-0.6, 0.6], or on the span of the widest column."""
    rng = np.random.default_rng(0)
    x = np.column_stack([rng.normal(1e-12, 1e-13, 2000), rng.normal(1e-25, 1e-25, 2000)])
    axes = np.array(corner_figure(x, ["g2", "g4"]).axes).reshape(2, 2)
    for k, sd in ((0, 1e-13), (1, 1e-25)):
        lo, hi = axes[1, k].get_xlim() if k == 0 else axes[1, 1].get_xlim()
        assert 3 * sd < hi - lo < 30 * sd, (k, lo, hi)
        assert lo < x[:, k].mean() < hi
