"""Convention maps: exact round trips and the Gasser-Leutwyler relation."""

from __future__ import annotations

import math

import numpy as np
import pytest

from eftsieve.fit.conventions import Convention
from eftsieve.theories.chpt_su2.conventions import affine_map
from tests.check_values import GAMMA, M_PI_MEV, MU_MEV

NAMES = ("lbar1", "lbar2", "lbar3", "lbar4")
LBAR = tuple(Convention("lbar", pion_mass_mev=M_PI_MEV) for _ in NAMES)
LR = tuple(Convention("lr", mu_mev=MU_MEV) for _ in NAMES)


def test_lr_to_lbar_matches_gasser_leutwyler():
    lr = np.array([-0.004, 0.0045, 0.0008, 0.0062])
    out = affine_map(NAMES, LR, LBAR).apply_points(lr)
    for i in range(4):
        # lbar_i = (32 pi^2/gamma_i) l_i^r(mu) - ln(M^2/mu^2), GL (1984) Eq. (9.6)
        expected = 32 * math.pi**2 / GAMMA[i + 1] * lr[i] - math.log(M_PI_MEV**2 / MU_MEV**2)
        assert out[i] == pytest.approx(expected, rel=1e-13)


def test_round_trip_samples_and_covariance(rng):
    x = rng.normal(size=(1000, 4)) * 1e-3
    fwd = affine_map(NAMES, LR, LBAR)
    back = affine_map(NAMES, LBAR, LR)
    np.testing.assert_allclose(back.apply_points(fwd.apply_points(x)), x, rtol=0, atol=1e-12 * 1e-3)
    cov = np.cov(x.T)
    rt = back.apply_cov(fwd.apply_cov(cov))
    np.testing.assert_allclose(rt, cov, rtol=1e-12)


def test_lbar_between_masses_shifts_by_log():
    m2 = 300.0
    other = tuple(Convention("lbar", pion_mass_mev=m2) for _ in NAMES)
    amap = affine_map(NAMES, LBAR, other)
    np.testing.assert_allclose(amap.jacobian, np.eye(4), atol=1e-15)
    np.testing.assert_allclose(amap.shift, math.log(M_PI_MEV**2 / m2**2), rtol=1e-13)
    x = np.array([[-0.4, 4.3, 2.9, 4.4]])
    back = affine_map(NAMES, other, LBAR)
    np.testing.assert_allclose(back.apply_points(amap.apply_points(x)), x, atol=1e-12)


def test_lr_between_scales_runs_with_gamma():
    mu2 = 1000.0
    other = tuple(Convention("lr", mu_mev=mu2) for _ in NAMES)
    amap = affine_map(NAMES, LR, other)
    for i in range(4):
        run = GAMMA[i + 1] / (32 * math.pi**2) * math.log(MU_MEV**2 / mu2**2)
        assert amap.shift[i] == pytest.approx(run, rel=1e-12)


def test_none_convention_passes_through():
    amap = affine_map(("lbar1", "nuis"), (LBAR[0], Convention("none")),
                      (LR[0], Convention("none")))
    assert amap.jacobian[1, 1] == 1.0 and amap.shift[1] == 0.0
