"""The fit verdict, first in the terminal and at the top of the report (issue 16, items
6-10), on three invented cards (tests/report/verdict_cases/, labelled as invented data):
a fit inside, one in tension and one excluded, against the chpt-su2 region at the
physical pion mass.  Golden text: regenerate with EFTSIEVE_REGEN_GOLDEN=1.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import numpy as np
import pytest
from scipy import stats as sps

import eftsieve as es
from eftsieve.bounds.cone_region import BOUNDARY_REASON
from eftsieve.check.verdict import (
    classify_fit,
    facet_violations,
    fit_verdict,
    p_inside_text,
    p_inside_upper,
    tension_text,
)
from eftsieve.cli.check import summary_lines
from eftsieve.region.model import Region
from eftsieve.report.check_report import check_document
from eftsieve.report.document import to_markdown
from tests.helpers import region

CASES = Path(__file__).parent / "verdict_cases"
EXPECTED = {"inside": "consistent", "tension": "tension", "excluded": "excluded"}


@pytest.fixture(scope="module")
def results():
    reg = Region.load(CASES / "su2_physical_region.json")
    return {n: es.check(es.load_fit(CASES / f"{n}.yaml"), reg, draws=20_000, seed=1)
            for n in EXPECTED}


def header_text(res) -> str:
    """The terminal lines and the report up to the fit section."""
    md = to_markdown(check_document(res, {}))
    return ("\n".join(summary_lines(res, "region.json")) + "\n\n"
            + md.split("\n## Fit\n")[0].rstrip() + "\n")


@pytest.mark.parametrize("case", sorted(EXPECTED))
def test_terminal_and_report_header_match_golden_text(results, case):
    text = header_text(results[case])
    golden = CASES / f"golden_{case}.txt"
    if os.environ.get("EFTSIEVE_REGEN_GOLDEN"):
        golden.write_text(text)
    assert text == golden.read_text()
    first = text.splitlines()[0]
    assert first.startswith(f"verdict: {EXPECTED[case]} - ")
    assert "pion_mass = 139.57 MeV" in text and "families" in text


@pytest.mark.parametrize("case", sorted(EXPECTED))
def test_summary_json_carries_the_verdict_and_kinematics(results, case):
    s = results[case].to_dict()
    assert s["verdict"]["label"] == EXPECTED[case]
    assert s["verdict"]["reason"] in header_text(results[case])
    assert s["kinematics"]["pion_mass_mev"] == 139.57
    assert s["kinematics"]["truncation_model"] == "none"
    assert s["eftsieve_version"] == es.__version__
    assert [f["p_violate"] for f in s["facets"]] == sorted(
        (f["p_violate"] for f in s["facets"]), reverse=True)


def test_no_zero_sigma_and_no_solver_noise(results):
    for res in results.values():
        text = header_text(res)
        assert "0.00 sigma" not in text and "e-1" not in text.split("p_inside")[0]
    assert "the mean is inside" in results["inside"].verdict.tension_text
    assert "inside the nearest facet" in results["inside"].verdict.reason


def test_thresholds_are_the_two_and_three_sigma_tails():
    # one-sided Gaussian tails: Phi(-2) = 0.02275, Phi(-3) = 0.00135 (common practice)
    assert classify_fit(1.99, 0.5) == "consistent"
    assert classify_fit(2.0, 0.5) == "tension"
    assert classify_fit(0.0, 0.02) == "tension"
    assert classify_fit(3.0, 0.5) == "excluded"
    assert classify_fit(0.0, 0.001) == "excluded"


def test_a_label_rests_on_p_inside_beyond_its_error():
    """The thresholds are applied to p + 2 err (a one-sided 97.7% upper end, common
    practice), and for p = 0 to at least the rule-of-three bound 3/n at 95% (Hanley &
    Lippman-Hand 1983), so that sampling error alone cannot make a fit excluded."""
    from eftsieve.stats.tension import tension

    tail3 = sps.norm.sf(3.0)  # Phi(-3) = 0.00135, the excluded threshold
    assert p_inside_upper(1.15e-4, 2.1e-3, 5e4) == pytest.approx(1.15e-4 + 4.2e-3)
    assert p_inside_upper(0.0, 0.0, 1000) == pytest.approx(0.003)
    assert p_inside_upper(0.0, 0.0, 1e5) == pytest.approx(3e-5)
    assert p_inside_upper(0.9, 0.2, 100) == 1.0
    assert classify_fit(0.0, p_inside_upper(0.0, 0.0, 1000)) == "tension"
    assert classify_fit(0.0, p_inside_upper(0.0, 0.0, 1e5)) == "excluded"
    # a mean inside (no tension) with a small p_inside: the error decides the word
    reg = region(((1, 0), 0.0),)
    mean, cov = np.array([1.0, 0.0]), np.eye(2)
    ten = tension(mean, cov, reg, np.random.default_rng(0))
    vague = fit_verdict(reg, mean, cov, ten, 1.15e-4, 2.1e-3, 5e4, exact=True)
    assert vague.label == "tension"
    assert "below the excluded threshold 0.00135 but its upper end" in vague.reason
    assert vague.to_dict()["p_inside_upper"] == pytest.approx(1.15e-4 + 4.2e-3)
    sharp = fit_verdict(reg, mean, cov, ten, 1.15e-4, 1e-5, 5e4, exact=True)
    assert sharp.label == "excluded" and sharp.p_inside_upper < tail3
    assert "upper end" not in sharp.reason


def _verdict_with_shell(p_inside: float, p_err: float, **shell: object):
    """The verdict of a mean inside a one-facet region with a shell summary ``shell``."""
    from types import SimpleNamespace

    from eftsieve.stats.tension import tension

    reg = region(((1, 0), 0.0),)
    mean, cov = np.array([1.0, 0.0]), np.eye(2)
    ten = tension(mean, cov, reg, np.random.default_rng(0))
    return fit_verdict(reg, mean, cov, ten, p_inside, p_err, 2e5, exact=True,
                       shell=SimpleNamespace(**shell))


def test_undecided_shell_points_that_could_change_the_word_make_it_uncertain():
    """Shell points left undecided count as inside, so p_inside is an upper bound; when
    the word at p_inside minus their share differs, the verdict is 'uncertain'
    (docs/verdict.md), with both words and the range in the reason."""
    v = _verdict_with_shell(0.0395, 3.1e-4, marginal_fraction=0.0349, n_marginal=6973,
                            budget=1000, n_solves=1000,
                            reasons=(("shell-solve budget reached", 6950),
                                     (BOUNDARY_REASON, 23)))
    assert v.label == "uncertain"
    assert v.reason.startswith("consistent if the 6973 shell points left undecided are "
                               "inside the cone, tension if they are outside")
    assert "between 0.0046 and 0.0395" in v.reason and "--shell-solves" in v.reason
    few = _verdict_with_shell(0.0395, 3.1e-4, marginal_fraction=0.001, n_marginal=200,
                              budget=1000)
    assert few.label == "consistent", "a share that cannot flip the word"


def test_shell_solves_that_end_on_the_boundary_are_not_sold_as_more_budget():
    """When most exact solves of the shell ended within the solver's accuracy of the
    boundary (a fit whose coordinates lie on a face of the cone, where no solve proves a
    point inside or out: measured for fM0, fM1, fT0, fT1 against the 18-coefficient
    aqgc-dim8 cone, 298 of 300 solves), the reason says so instead of asking for a larger
    --shell-solves budget."""
    v = _verdict_with_shell(0.166, 3e-4, marginal_fraction=0.165, n_marginal=33094,
                            budget=300, n_solves=300,
                            reasons=(("shell-solve budget reached", 32796),
                                     (BOUNDARY_REASON, 298)))
    assert v.label == "uncertain"
    assert ("298 of the 300 exact shell solves ended on the cone's boundary within the "
            "solver's accuracy, which more solves do not settle") in v.reason
    assert "--shell-solves" not in v.reason


def test_facet_probability_is_the_gaussian_tail_along_the_normal():
    """P(a.x < b) for x ~ N(m, C) is Phi((b - a.m)/sqrt(a C a)); checked by scipy draws."""
    reg = region(((0, 1), 1.0), ((1, 2), 3.0))
    mean, cov = np.array([0.5, 1.1]), np.array([[0.5, 0.1], [0.1, 0.2]])
    exact = {v.index: v for v in facet_violations(reg, mean, cov, exact=True)}
    x = sps.multivariate_normal(mean, cov).rvs(400_000, random_state=np.random.default_rng(5))
    rows = {v.index: v for v in facet_violations(reg, mean, cov, False, rows=x)}
    for i, (a, b) in enumerate((((0, 1), 1.0), ((1, 2), 3.0))):
        a = np.array(a, float)
        d = (a @ mean - b) / math.sqrt(a @ cov @ a)
        assert exact[i].distance_sigma == pytest.approx(d, rel=1e-12)
        assert exact[i].p_violate == pytest.approx(sps.norm.cdf(-d), rel=1e-12)
        assert rows[i].p_violate == pytest.approx(np.mean(x @ a < b), abs=1e-12)
        assert abs(rows[i].p_violate - exact[i].p_violate) < 5 * rows[i].p_violate_err


def test_p_inside_one_is_a_bound_by_the_rule_of_three():
    # rule of three: 1 - p < 3/n at 95% when none of n fail (Hanley & Lippman-Hand 1983)
    assert p_inside_text(1.0, 0.0, 20_000) == "> 1 - 0.00015 at 95%"
    assert p_inside_text(0.0, 0.0, 300) == "< 0.01 at 95%"
    assert p_inside_text(0.385, 1.1e-4, 1e4) == "0.385 +- 0.00011"
    assert p_inside_text(0.00587, 4e-17, 1e4) == "0.00587"


def test_infinite_tension_says_why():
    from eftsieve.stats.tension import Tension

    reg = region(((0, 1), 1.0),)
    ten = Tension(math.inf, np.zeros(2), (0,), np.array([0.5, 0.5, 0.0]), 0.0, math.inf, "f")
    degenerate = facet_violations(reg, np.array([0.0, 0.0]), np.diag([1.0, 0.0]), True)
    assert "degenerate covariance" in tension_text(ten, degenerate)
    far = facet_violations(reg, np.array([0.0, -60.0]), np.eye(2), True)
    assert "underflows" in tension_text(ten, far)


def test_a_solver_facet_is_named_by_its_inequality():
    """A cone's facets carry a solver's certificate; the sentence names the facet by its
    inequality, not by the certificate ('dual PSD matrix of rank 4')."""
    from eftsieve.stats.tension import tension
    from eftsieve.theories import get_theory

    reg = get_theory("photon-quartic").build_region({})
    a, _ = reg.arrays()
    mean = -0.3 * a[0] + 0.05 * a[1]          # past the first facet (invented point)
    cov = 0.01 * np.eye(reg.dim)
    ten = tension(mean, cov, reg, np.random.default_rng(0))
    v = fit_verdict(reg, mean, cov, ten, 0.0, 0.0, 1e5, exact=True)
    assert "outside the extremal facet " in v.reason and ">= 0" in v.reason
    assert "PSD" not in v.reason
