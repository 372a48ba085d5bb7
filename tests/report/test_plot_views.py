"""What the region plot shows: its window, title, verdict colours, labels and legend.

Oracles: the 95 % ellipse of a bivariate Gaussian is {x : (x - m)^T C^-1 (x - m) <=
chi2_2(0.95)} (scipy.stats.chi2; common practice); verdicts are the region's own
facet inequalities (Region.contains); theory windows are the theories' documented
``typical_window``.
"""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.colors import to_rgba
from scipy import stats

from eftsieve.region.model import Facet, Region
from eftsieve.report.plot_base import VERDICT_COLOURS
from eftsieve.report.plots import region_figure
from eftsieve.theories import get_theory


def _su2_region() -> Region:
    """Two facets of the chpt-su2 shape (values for the test, not the physics)."""
    return Region("chpt-su2", ("lbar1", "lbar2"),
                  {"name": "lbar", "pion_mass_mev": 139.57, "fpi_mev": 92.07},
                  (Facet((0.0, 1.0), 1.35, "second-derivative", "pi+ pi0"),
                   Facet((1.0, 2.0), 3.925, "second-derivative", "pi0 pi0")),
                  settings={"families": ["second-derivative"]})


def _ellipse(mean: np.ndarray, cov: np.ndarray, mass: float = 0.95) -> np.ndarray:
    r = np.sqrt(stats.chi2.ppf(mass, 2))
    ang = np.linspace(0, 2 * np.pi, 361)
    return mean + r * np.column_stack([np.cos(ang), np.sin(ang)]) @ np.linalg.cholesky(cov).T


def _scatters(ax) -> dict[str, np.ndarray]:
    return {c.get_gid(): np.asarray(c.get_offsets()) for c in ax.collections
            if str(c.get_gid()).startswith("posterior-") and c.get_gid() != "posterior-hpd"}


def _legend_texts(ax) -> list[str]:
    leg = ax.get_legend()
    return [t.get_text() for t in leg.get_texts()] if leg else []


@pytest.mark.parametrize("mean, cov", [
    ([1.0, 2.5], [[0.25, 0.05], [0.05, 0.04]]),
    ([-20.0, 9.0], [[4.0, -1.0], [-1.0, 1.0]]),       # far from the region
    ([0.9, 1.4], [[1e-4, 0.0], [0.0, 1e-4]]),          # tiny, at the vertex
])
def test_limits_contain_the_fits_95_percent_ellipse(mean, cov) -> None:
    mean, cov = np.array(mean), np.array(cov)
    x = np.random.default_rng(0).multivariate_normal(mean, cov, 20_000)
    ax = region_figure(_su2_region(), samples=x).axes[0]
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    e = _ellipse(mean, cov)
    assert (e[:, 0] > x0).all() and (e[:, 0] < x1).all()
    assert (e[:, 1] > y0).all() and (e[:, 1] < y1).all()


def test_without_a_fit_the_plot_shows_the_theorys_typical_window() -> None:
    window = get_theory("chpt-su2").typical_window
    ax = region_figure(_su2_region()).axes[0]
    assert ax.get_xlim() == pytest.approx(window["lbar1"])
    assert ax.get_ylim() == pytest.approx(window["lbar2"])
    # the published central values sit inside it: lbar1 = -0.4, lbar2 = 4.3
    # (Colangelo, Gasser & Leutwyler, hep-ph/0103088; from memory)
    assert window["lbar1"][0] < -0.4 < window["lbar1"][1]
    assert window["lbar2"][0] < 4.3 < window["lbar2"][1]


def test_title_carries_the_pion_mass_the_scale_and_the_family() -> None:
    title = region_figure(_su2_region()).axes[0].get_title()
    assert r"$M_\pi$ = 139.57 MeV" in title and "family second-derivative" in title
    su3 = Region("chpt-su3", ("L1", "L2", "L3"),
                 {"name": "Lr", "mu_mev": 770.0, "pion_mass_mev": 139.57},
                 (Facet((0.0, 1.0, 0.0), -1e-3, "t-derivative", "a"),
                  Facet((1.0, 1.0, 0.0), -2e-3, "t-derivative", "b")),
                 settings={"families": ["t-derivative"]})
    title = region_figure(su3, slice_at={"L3": 0.0}).axes[0].get_title()
    assert r"$\mu$ = 770 MeV" in title and r"$M_\pi$ = 139.57 MeV" in title


def test_samples_are_coloured_by_their_verdict() -> None:
    region = _su2_region()
    x = np.random.default_rng(1).multivariate_normal([1.0, 1.4], np.eye(2) * 0.09, 3000)
    ax = region_figure(region, samples=x).axes[0]
    shown = _scatters(ax)
    inside, outside = shown["posterior-inside"], shown["posterior-outside"]
    assert region.contains(inside).all() and not region.contains(outside).any()
    colours = {c.get_gid(): c.get_facecolor()[0][:3] for c in ax.collections
               if c.get_gid() in shown}
    assert colours["posterior-inside"] == pytest.approx(to_rgba(VERDICT_COLOURS[0])[:3])
    assert colours["posterior-outside"] == pytest.approx(to_rgba(VERDICT_COLOURS[2])[:3])
    texts = _legend_texts(ax)
    assert "fit samples: inside" in texts and "fit samples: outside" in texts


def test_facet_labels_stay_outside_the_fits_95_percent_ellipse() -> None:
    mean, cov = np.array([0.2, 2.2]), np.array([[0.3, -0.1], [-0.1, 0.15]])
    x = np.random.default_rng(2).multivariate_normal(mean, cov, 20_000)
    ax = region_figure(_su2_region(), samples=x, limits=((-2.0, 3.0), (0.5, 4.0))).axes[0]
    labels = [t for t in ax.texts if str(t.get_gid()).startswith("facet-label-")]
    assert len(labels) == 2
    inv = np.linalg.inv(cov)
    for t in labels:
        d = np.array(t.get_position()) - mean
        assert d @ inv @ d > stats.chi2.ppf(0.95, 2), t.get_text()


def test_legend_entries_are_the_drawn_artists() -> None:
    region = _su2_region()
    ax = region_figure(region).axes[0]
    texts = _legend_texts(ax)
    assert texts == ["allowed", "excluded"], "nothing undrawn in the legend"
    ax = region_figure(region, bands={1: 0.1}).axes[0]
    leg = ax.get_legend()
    handles = dict(zip((t.get_text() for t in leg.get_texts()), leg.legend_handles,
                       strict=True))
    one = [k for k in handles if "1\u03c3" in k]
    two = [k for k in handles if "2\u03c3" in k]
    assert one and two, "a band drawn has its legend entries"
    facet = [ln for ln in ax.lines if ln.get_gid() == "facet-1"][0]
    for key, gid in ((one[0], "band-1-1sigma"), (two[0], "band-1-2sigma")):
        drawn = [ln for ln in ax.lines if ln.get_gid() == gid][0]
        assert drawn.get_linestyle() == handles[key].get_linestyle()
        assert to_rgba(drawn.get_color()) == to_rgba(facet.get_color())
    assert not [ln for ln in ax.lines if ln.get_gid() == "band-0-1sigma"]


def test_view_in_the_fits_convention_pulls_the_facets_back() -> None:
    """y = J x + s maps the fit's x to region coordinates; the facet lines drawn in x
    must satisfy a.(J x + s) = b."""
    from eftsieve.report.plot_base import PlotView

    region = _su2_region()
    jac, shift = np.array([[2.0, 0.0], [0.0, 0.5]]), np.array([1.0, -1.0])
    view = PlotView(("x1", "x2"), jac, shift, "toy")
    x = np.random.default_rng(3).normal([0.5, 5.0], 0.3, (2000, 2))
    ax = region_figure(region, samples=x, view=view).axes[0]
    assert ax.get_xlabel().startswith("x1")
    for k, f in enumerate(region.facets):
        line = [ln for ln in ax.lines if ln.get_gid() == f"facet-{k}"][0]
        pts = np.column_stack([line.get_xdata(), line.get_ydata()])
        np.testing.assert_allclose((pts @ jac.T + shift) @ np.array(f.normal), f.offset,
                                   atol=1e-9)


def test_one_coordinate_histogram_is_split_by_verdict() -> None:
    region = Region("t1", ("c",), {"name": "y"},
                    (Facet((1.0,), 1.0, "f", "low"), Facet((-1.0,), -4.0, "f", "high")))
    x = np.random.default_rng(4).normal(1.0, 1.0, 5000)
    ax = region_figure(region, samples=x).axes[0]
    parts = {p.get_gid(): p for p in ax.patches if str(p.get_gid()).startswith("posterior-")}
    total = [p for p in ax.patches if p.get_gid() == "posterior-hist"][0]
    assert {"posterior-inside", "posterior-outside"} <= set(parts)
    heights = sum(np.asarray(p.get_data().values) for k, p in parts.items()
                  if k != "posterior-hist")
    np.testing.assert_allclose(heights, total.get_data().values, atol=1e-12)
    # the outside part lies outside 1 <= c <= 4 (to one bin)
    edges = parts["posterior-outside"].get_data().edges
    vals = parts["posterior-outside"].get_data().values
    step = edges[1] - edges[0]
    lo, hi = edges[:-1][vals > 0], edges[1:][vals > 0]
    assert ((hi <= 1.0 + step) | (lo >= 4.0 - step)).all()
