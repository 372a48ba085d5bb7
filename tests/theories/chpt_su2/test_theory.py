"""The chpt-su2 region against published bounds, UV-complete amplitudes and itself."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest

from eftsieve.fit.conventions import Convention
from eftsieve.theories import get_theory
from eftsieve.theories.chpt_su2 import amplitude as pipi
from eftsieve.theories.chpt_su2.conventions import affine_map
from eftsieve.theories.chpt_su2.theory import CHANNELS, ChannelFunctionals, t_derivative_combination
from tests.check_values import (
    A20_CONST,
    A22_CONST,
    MM_L1_PLUS_2L2_MIN,
    MM_L1_PLUS_3L2_MIN,
    MM_LBAR2_MIN,
    MU_MEV,
)

THEORY = get_theory("chpt-su2")


@pytest.fixture(scope="module")
def second_only():
    return THEORY.build_region({"families": ["second-derivative"], "truncation": "none"})


def _offset(region, normal):
    for f in region.facets:
        n = np.asarray(f.normal)
        if np.allclose(n / np.linalg.norm(n), np.asarray(normal) / np.linalg.norm(normal)):
            return f.offset / n[np.nonzero(normal)[0][0]] * normal[np.nonzero(normal)[0][0]]
    raise AssertionError(f"no facet with normal {normal}")


def test_manohar_mateu_bounds(second_only):
    # arXiv:0801.3222: lbar2 >= 27/20, lbar1 + 2 lbar2 >= 157/40, lbar1 + 3 lbar2 >= 5.604
    assert _offset(second_only, (0, 1)) == pytest.approx(MM_LBAR2_MIN, abs=1e-4)
    assert _offset(second_only, (1, 2)) == pytest.approx(MM_L1_PLUS_2L2_MIN, abs=1e-4)
    assert _offset(second_only, (1, 3)) == pytest.approx(MM_L1_PLUS_3L2_MIN, abs=1e-3)
    assert len(second_only.facets) == 3


def test_certificates_are_attained(su2_region):
    """At each facet's kinematic point, lbar on the facet gives a zero bound functional
    (the one-loop facets: the inner set of the default region)."""
    assert su2_region.inner_facets
    for f in su2_region.inner_facets:
        fn = ChannelFunctionals(*CHANNELS[f.channel])
        cube = np.array([[(f.point["s"] + f.point["t"] - 1e-3) / (4 + f.point["t"] - 2e-3),
                          f.point["t"] / 4]])
        ev = fn.second_derivative if f.family == "second-derivative" else fn.t_derivative
        k0, k, _ = ev(cube)
        n = np.asarray(f.normal)
        on = n * f.offset / (n @ n)
        assert k0[0] + k[0] @ on == pytest.approx(0.0, abs=1e-7)
        out = on - 1e-3 * n
        assert k0[0] + k[0] @ out < 0


def test_lbar3_lbar4_and_fpi_drop_out():
    base = THEORY.build_region({"fpi_mev": 92.07})
    other = THEORY.build_region({"fpi_mev": 80.0})
    np.testing.assert_allclose([f.offset for f in base.facets], [f.offset for f in other.facets],
                               rtol=1e-12)
    amp = pipi.channel_amplitude((0, 0, 3.0, 4.0), 1.0, 1.0)
    amp0 = pipi.channel_amplitude((0, 0, 0, 0), 1.0, 1.0)
    es = np.array([1.0, 0, -1.0])
    assert amp.poly.d2(es, es) == pytest.approx(amp0.poly.d2(es, es), abs=1e-15)


def test_two_pion_masses_map_exactly():
    """The region at M' stated in lbar(M') maps exactly onto it stated in l^r(mu)."""
    m2 = 250.0
    lbar = THEORY.build_region({"pion_masses_mev": [m2]})
    lr = THEORY.build_region({"pion_masses_mev": [m2], "convention": "lr", "mu_mev": MU_MEV})
    amap = affine_map(("l1", "l2"), (Convention("lr", mu_mev=MU_MEV),) * 2,
                      (Convention("lbar", pion_mass_mev=m2),) * 2)
    rng = np.random.default_rng(3)
    pts_lr = rng.normal(0, 0.01, (20000, 2))
    pts_lbar = amap.apply_points(pts_lr)
    assert np.array_equal(lr.contains(pts_lr), lbar.contains(pts_lbar))
    # ... and the one-loop lbar bounds are the same numbers at every pion mass (units of M)
    phys = THEORY.build_region({})
    np.testing.assert_allclose([f.offset for f in lbar.inner_facets],
                               [f.offset for f in phys.inner_facets], rtol=1e-12)


def test_several_masses_intersect_in_lr():
    reg = THEORY.build_region({"pion_masses_mev": [139.57, 250.0, 300.0], "convention": "lr"})
    assert reg.coordinates == ("l1", "l2")
    # with positive coefficients of lbar in every facet, the heaviest mass binds
    assert {f.point["pion_mass_mev"] for f in reg.facets} == {300.0}
    assert {f.point["pion_mass_mev"] for f in reg.inner_facets} == {300.0}


def test_list_of_masses_needs_lr():
    from eftsieve.errors import InputError

    with pytest.raises(InputError, match="mass-independent"):
        THEORY.build_region({"pion_masses_mev": [139.57, 250.0]})


def test_heavy_mass_warns():
    from eftsieve.errors import KinematicsWarning

    with pytest.warns(KinematicsWarning, match="not trusted"):
        THEORY.build_region({"pion_masses_mev": [500.0], "families": ["second-derivative"]})


def test_points_just_outside_fail(su2_region):
    a, b = su2_region.arrays()
    centre, radius = su2_region.chebyshev_center()
    assert radius > 0 and su2_region.contains(centre[None, :])[0]
    for j in range(len(b)):
        # the projection of the centre onto facet j, then a step of 1e-6 outwards
        p = centre - a[j] * (a[j] @ centre - b[j])
        assert su2_region.margins(p[None, :])[0, j] == pytest.approx(0.0, abs=1e-9)
        assert not su2_region.contains((p - 1e-6 * a[j])[None, :])[0]


# ---- rule-in: amplitudes UV-complete by construction -------------------------------
def _resonance_amplitude(masses2, spins, couplings):
    """Sum of s- and u-channel exchanges g (2J+1) P_J(1 + 2t/(m^2-4)) [1/(m^2-s) + 1/(m^2-u)].

    Its absorptive parts are positive for 0 <= t < 4 (g > 0, P_J(x) >= 1 for x >= 1), so it
    obeys every positivity bound exactly (units M = 1).
    """
    def amp(s, t):
        u = 4 - s - t
        tot = mp.mpf(0)
        for m2, j, g in zip(masses2, spins, couplings, strict=True):
            tot += g * (2 * j + 1) * mp.legendre(j, 1 + 2 * t / (m2 - 4)) * (
                1 / (m2 - s) + 1 / (m2 - u))
        return tot
    return amp


def _functionals(amp, s, t):
    mp.mp.dps = 40
    s, t = mp.mpf(s), mp.mpf(t)
    second = mp.diff(lambda x: amp(x, t), s, 2)
    d_fixed_s = mp.diff(lambda y: mp.diff(lambda x: amp(x, y), s, 2), t, 1)
    d_s3 = mp.diff(lambda x: amp(x, t), s, 3)
    return float(second), float(d_fixed_s), float(d_s3)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_rule_in_resonance_sums(seed):
    rng = np.random.default_rng(seed)
    n = 3
    masses2 = list(4 + rng.uniform(0.5, 30, n))
    spins = list(rng.integers(0, 5, n))
    g = list(rng.uniform(0.1, 2.0, n))
    amp = _resonance_amplitude(masses2, spins, g)
    for t in (0.0, 1.3, 3.2, 3.99):
        for frac in (0.05, 0.3, 0.5, 0.8, 0.95):
            s = -t + frac * (4 + t)
            u = 4 - s - t
            sec, dfs, ds3 = _functionals(amp, s, t)
            assert sec >= 0
            comb, _ = t_derivative_combination(np.array([sec]), np.array([dfs]),
                                               np.array([ds3]), np.array([s]), np.array([u]))
            assert comb[0] >= -1e-12 * abs(sec)


def test_t_derivative_bound_is_tight_for_a_threshold_state():
    """A spin-0 state at the threshold m^2 -> 4 (x-independent) nearly saturates it."""
    amp = _resonance_amplitude([4.0001], [0], [1.0])
    sec, dfs, ds3 = _functionals(amp, 0.0, 2.0)
    comb, _ = t_derivative_combination(np.array([sec]), np.array([dfs]), np.array([ds3]),
                                       np.array([0.0]), np.array([2.0]))
    assert 0 <= comb[0] < 0.01 * sec


def test_d_wave_scattering_lengths_from_the_amplitude():
    """Projection of the implemented amplitude reproduces Gasser-Leutwyler's a_2^0, a_2^2."""
    from numpy.polynomial.legendre import leggauss

    f = 92.07 / 139.57
    z, w = leggauss(40)
    lb = (-0.4, 4.3, 2.9, 4.4)

    def a2(iso):
        vals = []
        qs = np.array([0.004, 0.002, 0.001])
        for q2 in qs:
            s, t = 4 * (1 + q2), -2 * q2 * (1 - z)
            amp = pipi.full_amplitude(np.full_like(z, s), t, lb, f, isospin=iso).real
            vals.append((w * 0.5 * (3 * z**2 - 1) * amp).sum() / (64 * math.pi) / q2**2)
        return np.polyfit(qs, vals, 2)[-1]

    pref = 1 / (1440 * math.pi**3 * f**4)
    assert a2(0) == pytest.approx(pref * (lb[0] + 4 * lb[1] + A20_CONST), rel=1e-5)
    assert a2(2) == pytest.approx(pref * (lb[0] + lb[1] + A22_CONST), rel=1e-5)


def test_unitarity_of_the_s_wave():
    """Im t_0^0 = sigma |t_0^0(LO)|^2 at O(p^4) (perturbative unitarity)."""
    from numpy.polynomial.legendre import leggauss

    f = 0.66
    z, w = leggauss(40)
    s = 6.0
    t = -2 * (s / 4 - 1) * (1 - z)
    amp = pipi.full_amplitude(np.full_like(z, s), t, (0, 0, 0, 0), f, isospin=0)
    t00 = (w * amp).sum() / (64 * math.pi)
    lo = (2 * s - 1) / (32 * math.pi * f**2)   # Weinberg's LO S-wave, I = 0 (units M = 1)
    assert t00.imag == pytest.approx(math.sqrt(1 - 4 / s) * lo**2, rel=1e-10)


def test_crossing_of_isospin_amplitudes():
    lb = (0.3, 1.2, 2.0, 3.0)
    s, t = np.array([0.7]), np.array([1.1])
    u = 4 - s - t
    t2 = pipi.full_amplitude(s, t, lb, 0.7, isospin=2)
    t2_swap = pipi.full_amplitude(s, u, lb, 0.7, isospin=2)
    assert complex(t2[0]) == pytest.approx(complex(t2_swap[0]), rel=1e-12)
    t1 = pipi.full_amplitude(s, t, lb, 0.7, isospin=1)
    t1_swap = pipi.full_amplitude(s, u, lb, 0.7, isospin=1)
    assert complex(t1[0]) == pytest.approx(-complex(t1_swap[0]), rel=1e-12)
