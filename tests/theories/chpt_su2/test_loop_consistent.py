"""Loop-consistent rule-in models (tests/theories/loop_consistent.py) against independent
constructions: mpmath quadrature of the dispersive Jbar, the closed-form Jbar of Gasser &
Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (A.2), and the twice-subtracted dispersion
relation evaluated with scipy quad on the model's own absorptive parts."""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy.integrate import quad

from eftsieve.theories.chpt_su2 import amplitude as pipi
from tests.theories.chpt_su2 import loop_consistent as lc

RATIOS = (2.3, 3.0, 4.0, 7.0, 15.0, 40.0)


def _mp_jbar_cut(w: float, big_l: float, n: int) -> float:
    """n-th derivative of w int_4^L sigma/(x (x - w)) dx, by mpmath quadrature."""
    mp.mp.dps = 30
    sig = lambda x: mp.sqrt(1 - 4 / x)  # noqa: E731
    if n == 0:
        return float(w * mp.quad(lambda x: sig(x) / (x * (x - w)), [4, 5, big_l]))
    return float(mp.factorial(n) * mp.quad(lambda x: sig(x) / (x - w) ** (n + 1), [4, 5, big_l]))


@pytest.mark.parametrize("ratio", [2.3, 3.0, 6.0, 25.0])
def test_dispersive_jbar_and_derivatives_against_mpmath(ratio):
    w = np.array([-40.0, -3.0, -0.2, 0.0, 0.5, 2.5, 3.9])
    got = lc.jbar_cut_derivatives(w, ratio, 3)
    for k, wk in enumerate(w):
        for n in range(4):
            ref = _mp_jbar_cut(float(wk), ratio**2, n)
            assert got[n, k] == pytest.approx(ref, rel=1e-9, abs=1e-12)


def test_closed_form_of_the_cut_jbar():
    w = np.array([-50.0, -4.0, -0.5, 0.3, 1.0, 3.5])
    for ratio in (2.5, 5.0, 30.0):
        np.testing.assert_allclose(lc.jbar_cut_closed(w, ratio),
                                   lc.jbar_cut_derivatives(w, ratio, 0)[0], rtol=1e-11)


def test_cut_jbar_tends_to_the_closed_form_jbar():
    """As Lambda -> infinity, j_L -> j = 2 + sigma ln((sigma - 1)/(sigma + 1)) (GL 1984,
    Eq. (A.2)), written here for w < 0 and as the arctan form for 0 < w < 4; the gap
    falls like w/L (the first term of the tail above L)."""
    w = np.array([-10.0, -1.0, 0.7, 3.0])
    sig = np.sqrt(1 - 4 / w[:2].astype(complex)).real
    b = np.sqrt(4 / w[2:] - 1)
    closed = np.concatenate([2 + sig * np.log((sig - 1) / (sig + 1)), 2 - 2 * b * np.arctan(1 / b)])
    gaps = []
    for ratio in (10.0, 100.0, 1000.0):
        gaps.append(np.abs(lc.jbar_cut_derivatives(w, ratio, 0)[0] - closed))
    assert gaps[-1].max() < 2e-5
    np.testing.assert_allclose(gaps[1] / gaps[0], 0.01, rtol=0.1)   # ~ 1/L


def test_lambda_is_the_integral_of_sigma_over_mu():
    for ratio in RATIOS:
        ref, _ = quad(lambda x: math.sqrt(1 - 4 / x) / x, 4, ratio**2, limit=200)
        assert lc.lambda_shift(ratio) == pytest.approx(ref, rel=1e-10)
    # the large-Lambda form ln(Lambda^2/M^2) - 2 (our derivation, docs/physics.md)
    assert lc.lambda_shift(1e4) == pytest.approx(math.log(1e8) - 2, abs=1e-6)


def _dispersive_second(x1, x2, ratio, s, t):
    """(2/pi) int [Im T_s/(mu - s)^3 + Im T_u/(mu - u)^3] dmu over 4 < mu < L (scipy quad,
    in v = sqrt(mu - 4), which removes the square-root threshold behaviour)."""
    u = 4 - s - t
    amp = lc.model_amplitude(x1, x2, ratio)

    def f(v, ch, at):
        mu = 4.0 + v * v
        x = np.array([[mu, t, 4 - mu - t]]) if ch == "s" else np.array([[4 - mu - t, t, mu]])
        return float(pipi.evaluate(amp, x)[0].imag) / (mu - at) ** 3 * 2 * v
    total = 0.0
    for ch, at in (("s", s), ("u", u)):
        val, _ = quad(f, 0.0, math.sqrt(ratio**2 - 4), args=(ch, at), limit=200,
                      epsabs=1e-14, epsrel=1e-11)
        total += val
    return 2 / math.pi * total


@pytest.mark.parametrize("channel", list(lc.CHANNELS))
def test_second_derivative_equals_its_twice_subtracted_dispersive_integral(channel):
    x1, x2 = lc.CHANNELS[channel]
    for ratio in (3.0, 8.0):
        for s, t in ((0.0, 1.0), (1.5, 2.0), (0.2, 3.9)):
            x = np.array([[s, t, 4 - s - t]])
            sec, _ = lc.exact_functionals(x1, x2, ratio, x)
            assert sec[0] == pytest.approx(_dispersive_second(x1, x2, ratio, s, t), rel=1e-7)


def test_other_constants_violate_the_dispersion_relation():
    """The check can fail: lbar shifted by 0.1 from the derived ones breaks the equality."""
    x1, x2 = lc.CHANNELS["pi0 pi0"]
    ratio, s, t = 5.0, 0.5, 2.0
    x = np.array([[s, t, 4 - s - t]])
    lb = lc.model_lbar(ratio)
    amp = pipi.channel_amplitude((float(lb[0]) + 0.1, float(lb[1]), 0, 0), x1, x2)
    sec = pipi.second(amp, x, lc.E_S, lc.model_jets(x, ratio, 2))
    assert abs(sec[0] - _dispersive_second(x1, x2, ratio, s, t)) > 1e-5


@pytest.mark.parametrize("channel", list(lc.CHANNELS))
def test_absorptive_parts_and_their_t_slopes_are_positive(channel):
    x1, x2 = lc.CHANNELS[channel]
    ratio = 6.0
    mu, t = np.meshgrid(np.linspace(4.001, 35.9, 120), np.linspace(0.0, 3.99, 40))
    for ch in ("s", "u"):
        im = lc.absorptive_part(x1, x2, mu, t, ratio, ch)
        slope = (lc.absorptive_part(x1, x2, mu, t + 1e-4, ratio, ch) - im) / 1e-4
        assert im.min() >= -1e-15
        assert slope.min() >= -1e-9


@pytest.mark.parametrize("ratio", RATIOS)
def test_models_satisfy_both_exact_inequalities_everywhere(ratio):
    x = lc.domain_points(121, 61)
    for x1, x2 in lc.CHANNELS.values():
        sec, comb = lc.exact_functionals(x1, x2, ratio, x)
        assert sec.min() > 0
        assert comb.min() > 0


def test_model_constants_grow_like_the_chiral_log():
    """lbar_i(Lambda/M) = (4/3, 5/6) + ln(Lambda^2/M^2) - 2 + O(M^2/Lambda^2)."""
    for ratio in (20.0, 80.0):
        lb = lc.model_lbar(ratio)
        log = math.log(ratio**2) - 2
        assert lb == pytest.approx([4 / 3 + log, 5 / 6 + log], abs=4.5 / ratio**2)
