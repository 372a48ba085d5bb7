"""Impose against a positivity cone with a shell: the truncation uses the verified outer
facets, and the share of the imposed samples that lie in the cone itself is estimated by
exact solves on a subsample.  Oracle: the higgs-quartic cone is exactly
C2 >= 0, C1 + C2 >= 0, C1 + C2 + C3 >= 0 (Remmen & Rodd, arXiv:1908.09845; from memory, as
in tests/theories/higgs_quartic), so the true share is known for every sample."""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.cone_build import ConeSettings, build_cone
from eftsieve.bounds.cone_region import cone_region
from eftsieve.fit.conventions import Convention
from eftsieve.fit.model import Fit, Parameter
from eftsieve.impose.api import impose
from eftsieve.impose.core import ImposeSettings
from eftsieve.theories import get_theory
from eftsieve.theories.higgs_quartic import operators as ops


def test_shell_share_of_the_imposed_samples_matches_the_published_cone():
    th = get_theory("higgs-quartic")
    problem = th.problem()
    # a deliberately coarse build: a loose (valid) outer set and a large shell
    build = build_cone(problem, ConeSettings(shell_target=0.3, max_rounds=1, rays_per_round=3,
                                             mc_points=20_000))
    region = cone_region("higgs-quartic", build, {"name": "none"})
    # invented demo numbers: a Gaussian fit near the cone's boundary
    mean = np.array([0.4, -0.5, 0.3])
    fit = Fit("higgs-demo", "higgs-quartic",
              tuple(Parameter(c, Convention("none")) for c in problem.coefficients), {},
              mean, 0.25 * np.eye(3))
    res = impose(fit, region, mode="exact", settings=ImposeSettings(n_samples=4000, seed=3))
    note = res.figures["cone_shell"]
    assert 0 < note["shell_fraction"] <= 1 and note["checked"] == 100
    assert note["inside"] + note["outside"] + note["marginal"] == 100
    assert 0 <= note["on_boundary"] <= note["marginal"]
    # the truth from the published inequalities, for every imposed sample
    rr = res.samples @ ops.REMMEN_RODD_FROM_F.T                       # (C1, C2, C3)
    forms = np.column_stack([rr[:, 1], rr[:, 0] + rr[:, 1], rr.sum(axis=1)])
    truth = float((forms >= 0).all(axis=1).mean())
    # binomial error of 100 solves on the shell share, and a little slack
    err = note["shell_fraction"] * 0.5 / np.sqrt(100)
    assert abs(note["in_cone_estimate"] - truth) < 3 * err + 0.01
    # the banner leads with it when much of the result is outside the cone itself
    from eftsieve.report.impose_report import IN_CONE_WARN, impose_banner

    banner = impose_banner(res)
    if note["in_cone_estimate"] < IN_CONE_WARN:
        assert banner.label == "outer facets only"
        assert "not the posterior within the cone" in banner.text
    else:
        assert banner.label in ("imposed", "bounds-driven")
    from dataclasses import replace

    low = replace(res, figures={**res.figures, "cone_shell": {**note,
                                                               "in_cone_estimate": 0.2}})
    assert impose_banner(low).label == "outer facets only"
    assert "about 20% of the result in the cone" in impose_banner(low).text
    # the probability the truncation removed is that of the outer facets, and says so
    assert "p_inside of the outer facets without positivity" in impose_banner(low).text
    # the undecided ones counted outside, then inside, bracket the estimate
    lo_share, hi_share = note["in_cone_range"]
    assert lo_share <= note["in_cone_estimate"] <= hi_share
    # most solves undecided (a fit on a face of a cone: measured for an invented aqgc-dim8
    # fit of fM0, fM1, fT0, fT1, 99 of 100): the few decided ones say little, so the
    # banner and the shell line give the range, not an estimate from one point
    from eftsieve.report.impose_report import cone_shell_text

    face = {**note, "shell_fraction": 1.0, "checked": 100, "inside": 0, "outside": 1,
            "marginal": 99, "on_boundary": 99, "in_cone_estimate": 0.0,
            "in_cone_range": [0.0, 0.99]}
    banner = impose_banner(replace(res, figures={**res.figures, "cone_shell": face}))
    assert banner.label == "outer facets only"
    assert ("exact solves of 100 samples of its shell left 99 undecided (within the "
            "solver's accuracy of the boundary), so between about 0% and 99% of the result "
            "lies in the cone itself: it is not proven to be the posterior") in banner.text
    line = cone_shell_text(face)
    assert "between about 0% and 99% of the imposed samples" in line
    assert "about 0% of the imposed" not in line


def test_regions_without_a_shell_get_no_note():
    region = get_theory("higgs-quartic").build_region({})
    problem = get_theory("higgs-quartic").problem()
    fit = Fit("higgs-demo", "higgs-quartic",
              tuple(Parameter(c, Convention("none")) for c in problem.coefficients), {},
              np.array([0.4, 0.1, 0.3]), 0.04 * np.eye(3))
    res = impose(fit, region, mode="exact", settings=ImposeSettings(n_samples=2000, seed=3))
    note = res.figures["cone_shell"]
    # the fine build's inner and outer cones coincide: every sample is surely inside
    assert note["shell_fraction"] == 0.0 and note["checked"] == 0
