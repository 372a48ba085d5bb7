"""The default chpt-su2 region (second-derivative, loop-consistent truncation allowance)
against exactly positive models, physical QCD held fixed in l^r, and excluded points,
run through the library as ``eftsieve check`` runs it (fit_from_samples + run_check).

Requirements (a), (b), (c) of docs/physics.md, Sec. "Truncation study".
"""

from __future__ import annotations

import csv
import math
import warnings
from itertools import combinations

import numpy as np
import pytest

from eftsieve.check.run import run_check
from eftsieve.check.verdicts import CheckSettings
from eftsieve.errors import KinematicsWarning
from eftsieve.fit.model import fit_from_samples
from eftsieve.theories import get_theory
from eftsieve.theories.chpt_su2.conventions import convention
from eftsieve.theories.chpt_su2.truncation import HEAVY_SCALE_MEV, RATIOS, SHIFTS
from tests.check_values import GAMMA, M_PI_MEV, MU_MEV
from tests.theories.chpt_su2 import loop_consistent as lc

THEORY = get_theory("chpt-su2")
#: Colangelo, Gasser & Leutwyler, hep-ph/0103088: lbar1 = -0.4, lbar2 = 4.3 at the
#: physical pion mass (from memory)
CGL_LBAR = (-0.4, 4.3)
#: the stated multiple: loop-consistent models with Lambda >= R M_pi are never outside
R_MULTIPLE = 3.2
MASSES = (139.57, 200.0, 250.0, 300.0)


def _verdicts(tmp_path, names, points, convention, settings):
    """Per-row verdicts of ``points`` from run_check (the flagged rows carry them)."""
    tmp_path.mkdir(parents=True, exist_ok=True)
    path = tmp_path / "points.csv"
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    # each point three times with a small jitter (verdicts checked unchanged), so that the
    # sample covariance (used by the tension statistics) is not singular
    jitter = np.random.default_rng(0).normal(0.0, 1e-3 * np.abs(pts).max(), (3,) + pts.shape)
    rows = np.concatenate([pts + jitter[k] for k in range(3)])
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(names)
        w.writerows(rows.tolist())
    fit = fit_from_samples(path, get_theory("chpt-su2"), convention)
    with warnings.catch_warnings():
        warnings.simplefilter("error", KinematicsWarning)   # accepted without a warning
        region = THEORY.build_region(settings)
    out = tmp_path / "out"
    res = run_check(fit, region, CheckSettings(seed=0), out)
    verdict = ["inside"] * len(rows)
    with open(out / "flagged.csv", newline="") as fh:
        for row in csv.DictReader(fh):
            verdict[int(row["row"])] = row["verdict"]
    counts = res.summary
    assert counts["n_inside"] + counts["n_uncertain"] + counts["n_outside"] + \
        counts["n_marginal"] == len(verdict)
    n = len(pts)
    if any(verdict[i] != verdict[i % n] for i in range(len(verdict))):
        raise AssertionError("the jitter changed a verdict; lower it")
    return verdict[:n], region


def _lr(lbar, m_mev):
    """l_i^r(mu) from lbar_i at M: Gasser & Leutwyler (1984), Eq. (9.6), by hand."""
    return [GAMMA[i] / (32 * math.pi**2) * (lbar[i - 1] + math.log(m_mev**2 / MU_MEV**2))
            for i in (1, 2)]


def test_default_settings_are_the_study_choice():
    reg = THEORY.build_region({})
    assert reg.settings["families"] == ["second-derivative"]
    assert reg.settings["truncation"] == "loop-consistent"
    assert reg.settings["heavy_scale_mev"] == HEAVY_SCALE_MEV
    # the inner set is the one-loop bound of Manohar & Mateu, arXiv:0801.3222
    offsets = sorted(f.offset for f in reg.inner_facets)
    assert offsets == pytest.approx([27 / 20, 157 / 40, 5.604], abs=1e-3)
    for f in reg.facets:     # each facet's truncation estimate is in its certificate
        assert f.extra["truncation_shift"] > 0
        assert f.offset == pytest.approx(f.extra["one_loop_offset"] - f.extra["truncation_shift"])


@pytest.mark.parametrize("mass", MASSES)
def test_a_loop_consistent_models_never_outside(tmp_path, mass):
    """(a) exactly positive models with Lambda >= 3.2 M_pi are inside at every accepted mass,
    and those with Lambda >= Lambda_h are never outside."""
    ratios = [R_MULTIPLE, 3.5, 4.0, 5.0, 8.0, 20.0, 100.0]
    heavy = HEAVY_SCALE_MEV / mass
    extra = [r for r in (heavy, heavy * 1.1, heavy * 1.5) if r < R_MULTIPLE]
    pts = [lc.model_lbar(r) for r in ratios + extra]
    v, _ = _verdicts(tmp_path, ["lbar1", "lbar2"], pts,
                     convention("lbar", pion_mass_mev=mass), {"pion_masses_mev": [mass]})
    assert v[:len(ratios)] == ["inside"] * len(ratios)
    assert "outside" not in v


def test_a_the_multiple_is_where_the_one_loop_facets_start_to_exclude(tmp_path):
    """Below Lambda = 3.17 M_pi the hard one-loop facets do exclude the models (so the
    stated multiple is not loose), and the truncation allowance keeps them uncertain."""
    pts = [lc.model_lbar(3.0), lc.model_lbar(R_MULTIPLE)]
    hard, _ = _verdicts(tmp_path / "h", ["lbar1", "lbar2"], pts,
                        convention("lbar", pion_mass_mev=M_PI_MEV), {"truncation": "none"})
    assert hard == ["outside", "inside"]


@pytest.mark.parametrize("masses", [(m,) for m in MASSES] + list(combinations(MASSES, 2)))
def test_b_physical_qcd_fixed_in_lr_is_never_outside(tmp_path, masses):
    """(b) CGL's lbar at the physical mass, run to l^r(770 MeV) and held fixed."""
    point = _lr(CGL_LBAR, M_PI_MEV)
    v, _ = _verdicts(tmp_path, ["l1", "l2"], [point], convention("lr", mu_mev=MU_MEV),
                     {"pion_masses_mev": list(masses), "convention": "lr", "mu_mev": MU_MEV})
    assert v[0] != "outside"


def test_b_is_not_trivial_hard_edges_exclude_qcd_at_300_mev(tmp_path):
    point = _lr(CGL_LBAR, M_PI_MEV)
    v, _ = _verdicts(tmp_path, ["l1", "l2"], [point], convention("lr", mu_mev=MU_MEV),
                     {"pion_masses_mev": [300.0], "convention": "lr", "truncation": "none"})
    assert v == ["outside"]


def test_c_clearly_excluded_points_stay_outside(tmp_path):
    """(c) points that any one-loop positivity bound clearly excludes (lbar2 < 27/20)."""
    pts = [(0.0, 0.0), (2.0, 0.5), (-3.0, 1.0)]
    v, _ = _verdicts(tmp_path, ["lbar1", "lbar2"], pts,
                     convention("lbar", pion_mass_mev=M_PI_MEV), {})
    assert v == ["outside"] * 3


def test_between_the_facets_is_uncertain(tmp_path):
    """lbar2 = 1.3 is below the one-loop bound 27/20 but within its truncation shift."""
    v, _ = _verdicts(tmp_path, ["lbar1", "lbar2"], [(5.0, 1.3), (5.0, 2.0)],
                     convention("lbar", pion_mass_mev=M_PI_MEV), {})
    assert v == ["uncertain", "inside"]


def test_above_the_threshold_mass_warns():
    with pytest.warns(KinematicsWarning, match="not trusted"):
        THEORY.build_region({"pion_masses_mev": [310.0]})


@pytest.mark.parametrize("key", [("second-derivative", "pi+ pi0"), ("t-derivative", "pi0 pi0")])
def test_calibration_table_is_reproduced_by_the_models(key):
    """The tabulated shifts (src) against a recomputation with the test helper."""
    from eftsieve.theories.chpt_su2.theory import DEFAULT_SCAN, lbar_facets

    fam, ch = key
    f = next(f for f in lbar_facets((fam,), DEFAULT_SCAN) if f.channel == ch)
    x = lc.domain_points(161, 81)
    for i in (1, 7, 12):
        _, shift, slack = lc.facet_excess(fam, ch, np.asarray(f.normal), f.offset, RATIOS[i], x)
        assert slack >= 0
        assert shift == pytest.approx(SHIFTS[key][i], abs=2e-4)
