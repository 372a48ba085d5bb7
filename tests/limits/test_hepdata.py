"""HEPData records (written with hepdata_lib) through eftsieve limits.

Oracles: scipy.stats.norm and truncnorm for a 1-D Gaussian scan against the half-line
fS0 >= 0 (a facet of the higgs-quartic cone: fS0 alone must be non-negative); scipy's
dblquad of a bivariate normal over the wedge fS0 >= 0, fS0 + fS1 >= 0 for 2-D scans and
for central values with a correlation table; exact polygon areas for contours.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, optimize
from scipy.stats import multivariate_normal, norm, truncnorm

from eftsieve.errors import InputError
from eftsieve.fit.conventions import Convention
from eftsieve.limits.run import limits_from_record
from tests.limits.records import (
    central_tables,
    contour_table,
    scan_1d_table,
    scan_2d_table,
    variable,
    write_record,
)

THEORY = "higgs-quartic"
NONE = Convention("none")
MU, SIGMA = 0.4, 0.7


@pytest.fixture(scope="module")
def higgs(cone_regions):
    return cone_regions(THEORY)


def run(path, region, **kw):
    return limits_from_record(path, THEORY, NONE, region, **kw)


@pytest.mark.parametrize("quantity,factor", [("-2\\Delta\\ln L", 1.0), ("\\Delta NLL", 0.5),
                                             ("\\Delta\\chi^2", 1.0)])
def test_gaussian_scan_p_inside_against_scipy(tmp_path, higgs, quantity, factor):
    x = np.linspace(MU - 12 * SIGMA, MU + 12 * SIGMA, 961)
    q = ((x - MU) / SIGMA) ** 2 * factor
    sub = write_record(tmp_path, [scan_1d_table("Scan fS0", "f_{S0}/\\Lambda^4", x, q,
                                                quantity)])
    (scan,) = run(sub, higgs).scans
    assert scan.p_inside == pytest.approx(norm.sf(0.0, loc=MU, scale=SIGMA), abs=1e-6)
    assert scan.p_inside_sure == scan.p_inside
    assert "flat in fS0" in scan.prior


def test_truncated_hpd_interval_against_truncnorm(tmp_path, higgs):
    x = np.linspace(MU - 12 * SIGMA, MU + 12 * SIGMA, 961)
    sub = write_record(tmp_path, [scan_1d_table("Scan fS0", "f_{S0}", x,
                                                ((x - MU) / SIGMA) ** 2)])
    (scan,) = run(sub, higgs).scans
    tn = truncnorm(-MU / SIGMA, np.inf, loc=MU, scale=SIGMA)

    def mass(d):  # HPD of a normal truncated below its mode: [max(0, MU - d), MU + d]
        return tn.cdf(MU + d) - tn.cdf(max(0.0, MU - d)) - 0.95
    d = optimize.brentq(mass, 1e-6, 10 * SIGMA)
    ((lo, hi),) = scan.intervals["fS0"]["0.95"]
    spacing = (x[-1] - x[0]) / 20_000
    assert lo == pytest.approx(max(0.0, MU - d), abs=2 * spacing)
    assert hi == pytest.approx(MU + d, abs=2 * spacing)
    ((blo, bhi),) = scan.intervals_before["fS0"]["0.95"]
    assert (blo, bhi) == pytest.approx(norm.interval(0.95, MU, SIGMA), abs=2 * spacing)


def wedge_probability(mean, cov, box):
    f = multivariate_normal(mean, cov).pdf
    inside = integrate.dblquad(lambda y, x: f([x, y]), 0.0, box[1],
                               lambda x: max(-x, box[0]), lambda x: box[1], epsabs=1e-11)[0]
    total = integrate.dblquad(lambda y, x: f([x, y]), box[0], box[1], box[0], box[1],
                              epsabs=1e-11)[0]
    return inside / total


def test_2d_scan_against_dblquad(tmp_path, higgs):
    mean, cov = np.array([0.3, -0.2]), np.array([[1.0, 0.4], [0.4, 0.8]])
    g = np.linspace(-4, 4, 41)
    gx, gy = np.meshgrid(g, g, indexing="ij")
    d = np.stack([gx - mean[0], gy - mean[1]], axis=-1)
    q = np.einsum("...i,ij,...j->...", d, np.linalg.inv(cov), d)
    sub = write_record(tmp_path, [scan_2d_table("Scan", ("f_{S0}", "f_{S1}"), g, g, q)])
    (scan,) = run(sub, higgs).scans
    assert scan.coefficients == ("fS0", "fS1")
    assert scan.p_inside == pytest.approx(wedge_probability(mean, cov, (-4, 4)), abs=2e-5)
    assert set(scan.contours) == {"0.68", "0.95"} and scan.contours["0.95"]


def test_contour_area_fraction_exact(tmp_path, higgs):
    # the square [-1, 1]^2 against fS0 >= 0, fS0 + fS1 >= 0 keeps area 1.5 of 4
    sq_x, sq_y = [-1.0, 1.0, 1.0, -1.0], [-1.0, -1.0, 1.0, 1.0]
    sub = write_record(tmp_path, [contour_table("Contour", ("f_{S0}", "f_{S1}"), sq_x, sq_y)])
    (c,) = run(sub, higgs).contours
    assert c.label == "CL: 95%" and c.area == pytest.approx(4.0)
    assert c.fraction_inside == pytest.approx(0.375, abs=1e-7)


def test_central_values_with_correlations_go_through_check(tmp_path, higgs):
    mean, err, rho = np.array([0.2, 0.1]), np.array([0.3, 0.4]), -0.3
    corr = np.array([[1.0, rho], [rho, 1.0]])
    sub = write_record(tmp_path, central_tables(["fS0", "fS1"], mean, err, corr))
    res = run(sub, higgs, draws=100_000)
    g = res.gaussian
    assert g["held_at_zero"] == ["fS2"]
    cov = corr * np.outer(err, err)
    expect = wedge_probability(mean, cov, (-8, 8))
    assert g["p_inside"] == pytest.approx(expect, abs=5 * g["p_inside_err"] + 1e-4)


def refused(tmp_path, higgs, tabs, field_part, **kw):
    sub = write_record(tmp_path, tabs)
    with pytest.raises(InputError) as err:
        run(sub, higgs, **kw)
    assert err.value.path is not None and field_part in (err.value.field or "")
    assert err.value.hint
    return err.value


def test_refuses_binned_values(tmp_path, higgs):
    from hepdata_lib import Table, Variable

    t = Table("Binned")
    x = Variable("$f_{S0}$", is_independent=True, is_binned=True)
    x.values = [(0, 1), (1, 2), (2, 3)]
    t.add_variable(x)
    t.add_variable(variable("$\\Delta\\chi^2$", [1, 0, 1], False))
    e = refused(tmp_path, higgs, [t], "values[0]")
    assert "bin centres" in e.hint


def test_refuses_an_unknown_quantity(tmp_path, higgs):
    t = scan_1d_table("Xsec", "f_{S0}", [0, 1, 2], [1, 2, 3], quantity="\\sigma\\ [fb]")
    refused(tmp_path, higgs, [t], "dependent_variables[0].header.name")


def test_refuses_an_incomplete_grid(tmp_path, higgs):
    t = scan_2d_table("Scan", ("f_{S0}", "f_{S1}"), [0, 1, 2], [0, 1, 2], np.zeros(9))
    t.variables[0].values = t.variables[0].values[:-1]
    t.variables[1].values = t.variables[1].values[:-1]
    t.variables[2].values = t.variables[2].values[:-1]
    refused(tmp_path, higgs, [t], "independent_variables")


def test_refuses_delta_ln_l_with_the_wrong_sign(tmp_path, higgs):
    t = scan_1d_table("Scan", "f_{S0}", [0, 1, 2], [-1, 0, -1], quantity="\\Delta\\ln L")
    refused(tmp_path, higgs, [t], "header.name")


def test_refuses_unknown_table_and_names(tmp_path, higgs):
    t = scan_1d_table("Scan", "f_{S0}", [0, 1, 2], [1, 0, 1])
    refused(tmp_path, higgs, [t], "name", tables=["Nope"])
    tabs = central_tables(["fS0", "fX9"], [0, 0], [1, 1], np.eye(2))
    refused(tmp_path, higgs, tabs, "values")


def test_light_by_light_contour_through_photon_quartic(tmp_path, cone_regions):
    # Light-by-light: c1 = zeta1 + zeta2/2 >= 0 and c2 = zeta2/4 >= 0 for
    # L = c1 (F.F)^2 + c2 (F.Ftilde)^2 (Adams et al., arXiv:hep-th/0602178, Sec. 2; with
    # F F F F = (F.F)^2/2 + (F.Ftilde)^2/4, common practice): in the (zeta1, zeta2) plane
    # the wedge from angle 0 to pi - atan(2), so a disc about the origin keeps
    # (pi - atan 2) / (2 pi) of its area.  GeV^-4 units as in CMS-TOTEM, arXiv:2110.05916.
    phi = np.linspace(0, 2 * np.pi, 4000, endpoint=False)
    r = 3e-13
    sub = write_record(tmp_path, [contour_table("LbL", ("\\zeta_1", "\\zeta_2"),
                                                r * np.cos(phi), r * np.sin(phi))])
    region = cone_regions("photon-quartic")
    res = limits_from_record(sub, "photon-quartic", NONE, region)
    (c,) = res.contours
    assert c.coefficients == ("zeta1", "zeta2")
    assert c.fraction_inside == pytest.approx((np.pi - np.arctan(2)) / (2 * np.pi), abs=1e-5)


def test_observed_and_expected_columns_are_two_scans(tmp_path, higgs):
    x = np.linspace(MU - 12 * SIGMA, MU + 12 * SIGMA, 481)
    t = scan_1d_table("Scan fS0", "f_{S0}", x, ((x - MU) / SIGMA) ** 2)
    exp = variable("$-2\\Delta\\ln L$", (x / SIGMA) ** 2, False)
    t.variables[1].add_qualifier("Type", "Observed")
    exp.add_qualifier("Type", "Expected")
    t.add_variable(exp)
    obs, expected = run(write_record(tmp_path, [t]), higgs).scans
    assert obs.table == "Scan fS0 (Type: Observed)"
    assert obs.p_inside == pytest.approx(norm.sf(0.0, MU, SIGMA), abs=1e-6)
    assert expected.p_inside == pytest.approx(0.5, abs=1e-6)


@pytest.mark.parametrize(("xs", "ys", "want"), [
    ([-1, 3, 3, -1], [-2, 1, -1, 2], (0, 2)),           # figure of eight, lobes unequal
    ([0, 2, 2, 0], [0, 0, 1, 1], None),                  # a rectangle
    ([0, 2, 2, 0, 0], [0, 0, 1, 1, 0], None),            # the same, closed explicitly
    ([0, 2, 1, 2, 0], [0, 0, 0.5, 1, 1], None),          # a non-convex simple polygon
    ([0, 1, 2, 2, 1, 0], [0, 0, 0, 1, 0, 1], None),      # touches itself at (1, 0): no cross
])
def test_first_crossing_of_a_contour(xs, ys, want):
    # the crossing test against hand-drawn polygons (their edges checked by eye)
    from eftsieve.fit.formats.hepdata import first_crossing

    assert first_crossing(np.column_stack([xs, ys])) == want


def test_check_never_skips_a_damaged_correlation_table(tmp_path):
    # the correlation table names a coefficient the theory does not have: `check` on the
    # record must refuse it (before, it was skipped and the fit got uncorrelated errors)
    from eftsieve.fit.formats.hepdata import fit_from_record
    from eftsieve.theories import get_theory

    corr = np.array([[1.0, 0.5], [0.5, 1.0]])
    tabs = central_tables(["fS0", "fS1"], [0.2, 0.1], [0.3, 0.4], corr)
    tabs[1].variables[0].values = ["fS0", "fS0", "fX9", "fX9"]
    sub = write_record(tmp_path, tabs)
    theory = get_theory("higgs-quartic")
    with pytest.raises(InputError, match="fX9"):
        fit_from_record(sub, theory, Convention("none"))


def test_a_contour_against_a_projection_with_the_others_free(tmp_path):
    # (fS0, fS1) with fS2 free: only fS0 >= 0 remains (Fourier-Motzkin on Remmen & Rodd,
    # arXiv:1908.09845, from memory; tests/bounds/test_projection.py), so half of the
    # square [-1, 1]^2 is allowed; with fS2 = 0 the slice also needs fS0 + fS1 >= 0
    # (a quarter-square less: 0.25)
    from eftsieve.bounds.projection import project_cone, projection_region
    from eftsieve.theories import get_theory

    problem = get_theory("higgs-quartic").problem()
    region = projection_region("higgs-quartic", project_cone(problem, ["fS0", "fS1"]),
                               {"name": "none"})
    sub = write_record(tmp_path, [contour_table("Square", ("f_{S0}", "f_{S1}"),
                                                [-1, 1, 1, -1], [-1, -1, 1, 1])])
    res = limits_from_record(sub, "higgs-quartic", NONE, region)
    (c,) = res.contours
    assert c.fraction_inside == pytest.approx(0.5, abs=1e-5)
    assert res.notes[0].startswith("The region is a projection with fS2 free")
