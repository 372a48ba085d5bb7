"""The truncation-honest default of chpt-su3 (issue 15, item 5; docs/physics_su3.md, Sec. 7).

* the cut loop functions of the loop-consistent models against independent constructions
  (the uncut moments of chpt_su3.loops, checked against mpmath in test_amplitude.py, and
  the closed form of the cut two-point function in tests/theories/chpt_su2/loop_consistent);
* the models are exactly positive and tend to the one-loop amplitude as Lambda grows;
* for pi pi the allowance is of the size of the chpt-su2 calibration (an independent code
  path: tests/theories/chpt_su2/loop_consistent.py and chpt_su2.truncation.SHIFTS);
* rule-in: the models are never ``outside`` the default region; power: points any
  one-loop bound clearly excludes stay ``outside``;
* the eta-mass term of the budget equals the facet shift measured with two builds.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from eftsieve.check.verdicts import VERDICT_NAMES, classify
from eftsieve.errors import KinematicsWarning
from eftsieve.theories import get_theory
from eftsieve.theories.chpt_su2.truncation import truncation_shift
from eftsieve.theories.chpt_su3 import amplitude as amp3
from eftsieve.theories.chpt_su3 import truncation as tr
from eftsieve.theories.chpt_su3.channels import ChannelFunctionals
from tests.theories.chpt_su2 import loop_consistent as lc

THEORY = get_theory("chpt-su3")
#: PDG masses in MeV (from memory): M_pi+, M_K+, M_eta; the rho and K*(892)
M_PI, M_K, M_ETA = 139.57, 493.68, 547.86
CHANNELS = ("pi+ pi0", "pi+ pi+", "pi0 pi0", "pi+ K+", "pi- K+")
#: l^r = gamma (lbar + ln(M^2/mu^2))/(32 pi^2), gamma1 = 1/3, gamma2 = 2/3 (Gasser &
#: Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (9.6), from memory) with l1 = 4L1 + 2L3 + c,
#: l2 = 4L2 + c (GL 1985, Eq. (11.6), from memory): a chpt-su2 facet lbar1 + k lbar2 (or
#: lbar2) is 192 pi^2 times the SU(3) facet 2L1 + kL2 + L3 (or L2)
LBAR_PER_L = 192 * math.pi**2


@pytest.fixture(scope="module")
def region():
    with warnings.catch_warnings():
        warnings.simplefilter("error", KinematicsWarning)
        return THEORY.build_region({})


@pytest.fixture(scope="module")
def one_loop():
    return THEORY.build_region({"truncation": "none"})


def _fn(name, mk=M_K / M_PI, meta=M_ETA / M_PI):
    return ChannelFunctionals(name, mk, meta, 770.0 / M_PI)


# ---- the cut loop functions ------------------------------------------------------------
@pytest.mark.parametrize("pair", [(1.0, 1.0), (1.0, M_K / M_PI), (M_K / M_PI, M_ETA / M_PI)])
def test_full_dispersive_tail_is_the_uncut_moment(pair):
    """Cut at the threshold, the tail is the whole dispersion integral: Lambda_n(z) -
    Lambda_n(0), values and two derivatives, against the series/closed forms of loops.py."""
    th = (pair[0] + pair[1]) ** 2
    z = np.array([-2.0 * th, -0.3 * th, 0.2 * th, 0.7 * th, 0.95 * th])
    pm = amp3.MOMENTS(pair)
    ref = pm.jets(z, 2)
    ref[:, 0] -= pm.jets(np.zeros(1), 0)[:, 0, 0][:, None]
    got = tr.tail_jets(pair, z, th, 2)
    np.testing.assert_allclose(got, ref, rtol=2e-6, atol=2e-8)


def test_cut_two_point_function_is_the_chpt_su2_one():
    """Equal masses: Lambda_0(0) - Lambda_0^cut = 16 pi^2 Jbar_Lambda, closed form of
    tests/theories/chpt_su2/loop_consistent.py (our partial-fraction derivation there)."""
    ratio, z = 5.52, np.array([-6.0, -1.0, 0.5, 2.5, 3.9])
    pm = amp3.MOMENTS((1.0, 1.0))
    cut0 = pm.jets(z, 0)[0, 0] - tr.tail_jets((1.0, 1.0), z, ratio**2, 0)[0, 0]
    np.testing.assert_allclose(pm.jets(np.zeros(1), 0)[0, 0, 0] - cut0,
                               lc.jbar_cut_closed(z, ratio), rtol=1e-9, atol=1e-11)


def test_gmo_eta_mass():
    """M_eta^2 = (4 M_K^2 - M_pi^2)/3 (Gell-Mann-Okubo; GL 1985): 564.33 MeV here."""
    assert tr.gmo_eta_mass(M_PI, M_K) ** 2 * 3 == pytest.approx(4 * M_K**2 - M_PI**2)
    assert tr.gmo_eta_mass(M_PI, M_K) == pytest.approx(564.33, abs=0.01)


# ---- the models ------------------------------------------------------------------------
@pytest.mark.parametrize("family", ["second-derivative", "t-derivative"])
@pytest.mark.parametrize("name", CHANNELS)
def test_models_are_exactly_positive_and_tend_to_one_loop(name, family):
    """The model's exact functional at its centred constant is >= 0 on the domain (it
    satisfies the bound), and the allowance falls like (M_pi/Lambda)^2."""
    fn = _fn(name)
    normal = fn.k / np.abs(fn.k[np.abs(fn.k) > 1e-12]).min()
    got = {r: tr.model_allowance(fn, family, normal, r) for r in (5.52, 6.39, 20.0, 40.0)}
    for m in got.values():
        assert m.slack >= -1e-12 * abs(m.model_value)
        assert m.allowance > 0
    assert got[20.0].allowance / got[40.0].allowance == pytest.approx(4.0, rel=0.2)


@pytest.mark.parametrize("family", ["second-derivative", "t-derivative"])
@pytest.mark.parametrize("name", ["pi+ pi0", "pi+ pi+", "pi0 pi0"])
def test_pi_pi_allowance_has_the_size_of_the_chpt_su2_calibration(name, family):
    """With heavy kaons (M_K = 30 M_pi) the pi pi allowance is within a factor 2.5 of the
    chpt-su2 truncation shift (different definitions of the same O(p^6) remainder:
    docs/physics_su3.md, Sec. 7), at Lambda/M_pi = 5.52 (the rho) and 20."""
    fn = _fn(name, 30.0, 33.0)
    normal = fn.k / np.abs(fn.k[np.abs(fn.k) > 1e-12]).min()
    for ratio in (5.52, 20.0):
        mine = tr.model_allowance(fn, family, normal, ratio).allowance
        su2 = truncation_shift(family, name, M_PI, ratio * M_PI) / LBAR_PER_L
        assert 1 / 2.5 < mine / su2 < 2.5


# ---- the default region ----------------------------------------------------------------
def test_default_is_second_derivative_with_an_allowance(region, one_loop):
    assert region.settings["families"] == ["second-derivative"]
    assert region.settings["truncation"] == "loop-consistent"
    assert {f.label() for f in region.inner_facets} == {f.label() for f in one_loop.facets}
    for f in region.facets:
        e = f.extra
        assert e["one_loop_offset"] - f.offset == pytest.approx(
            e["model_allowance"] + e["eta_mass_shift"], rel=1e-12)
        assert e["truncation_shift_region"] == e["truncation_shift"] > 0


def test_eta_mass_budget_equals_the_measured_facet_shift(region):
    """The eta-mass term of each facet equals |b(GMO eta) - b(physical eta)| of two
    one-loop builds; for pi K it is 1.7e-5, 0.77% of the offset (measured; the issue's
    9e-5 = 7.5% is not reproduced, docs/physics_su3.md, Sec. 7)."""
    gmo = math.sqrt((4 * M_K**2 - M_PI**2) / 3)
    a = THEORY.build_region({"truncation": "none"})
    b = THEORY.build_region({"truncation": "none", "eta_mass_mev": gmo})
    shift = {f.channel: abs(g.offset - f.offset) for f, g in zip(a.facets, b.facets,
                                                                  strict=True)}
    for f in region.facets:
        assert f.extra["eta_mass_shift"] == pytest.approx(shift[f.channel], rel=1e-9,
                                                          abs=1e-15)
    pik = next(f for f in region.facets if "K" in f.channel)
    assert pik.extra["eta_mass_shift"] == pytest.approx(1.71e-5, rel=0.02)
    assert pik.extra["eta_mass_shift"] / abs(pik.extra["one_loop_offset"]) < 0.01


@pytest.mark.parametrize("ratio_factor", [1.0, 1.5, 4.0])
def test_rule_in_models_are_never_outside(region, ratio_factor):
    """Each channel's loop-consistent model with Lambda >= the default heavy scale has
    its O(p^4) value n . L_model on the allowed side of every outer facet of its channel
    (per channel: the models of different channels share no single L, Sec. 7)."""
    for f in region.facets:
        fn = _fn(f.channel)
        ratio = f.extra["heavy_scale_mev"] / M_PI * ratio_factor
        m = tr.model_allowance(fn, f.family, np.asarray(f.normal), ratio)
        assert m.model_value >= f.offset


#: Bijnens & Ecker, arXiv:1405.6488, Table 3, "BE14" (from memory): 10^3 L_i^r(770 MeV)
BE14 = (0.53, 0.81, -3.07)


def _verdict(region, point):
    v = classify(np.atleast_2d(point), region, THEORY.marginal_band(region))
    return VERDICT_NAMES[int(v.verdict[0])]


@pytest.mark.parametrize(("point", "expected"), [
    ((0.53e-3, 0.81e-3, -3.07e-3), "inside"),       # BE14 (from memory), well inside
    ((0.7e-3, 1.3e-3, -4.4e-3), "inside"),          # GL 1985, Table 1 (from memory)
    ((1e-3, -1.1e-3, 4e-3), "uncertain"),           # between the pi+ pi0 facets
    ((0.0, -3e-3, 0.0), "outside"),                 # L2 far below any bound
    ((-5e-3, 1e-3, 0.0), "outside"),                # 2L1 + 3L2 + L3 = -7e-3
    ((0.0, 0.0, -6e-3), "outside"),                 # 2L1 + 2L2 + L3 = -6e-3
])
def test_default_verdicts(region, point, expected):
    """Power: points that the one-loop bounds clearly exclude stay outside."""
    assert _verdict(region, point) == expected


def test_warns_above_300_mev():
    with pytest.warns(KinematicsWarning, match="300"):
        THEORY.build_region({"pion_mass_mev": 320.0, "processes": ["pi pi"],
                             "truncation": "none"})
