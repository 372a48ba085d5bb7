"""Jbar and its derivatives against direct quadrature of the Feynman-parameter integral."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from eftsieve.theories.loops import jbar, jbar_derivatives


def _ref(w: float, n: int) -> complex:
    """16 pi^2 Jbar^(n)(w) = -d^n/dw^n int_0^1 ln(1 - x(1-x) w) dx, by mpmath quadrature.

    Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, App. A: Jbar(s) = -(1/16pi^2) int_0^1
    dx ln(1 - x(1-x) s/M^2).  Above threshold w -> w + i0.
    """
    mp.mp.dps = 30
    wz = mp.mpc(w, 1e-25) if w > 4 else mp.mpf(w)
    pts = [0, 0.5, 1]
    if w > 4:  # the integrand's logarithmic branch points x = (1 -+ sigma)/2
        sig = mp.sqrt(1 - 4 / mp.mpf(w))
        pts = [0, (1 - sig) / 2, 0.5, (1 + sig) / 2, 1]
    if n == 0:
        return complex(-mp.quad(lambda x: mp.log(1 - x * (1 - x) * wz), pts))
    return complex(mp.factorial(n - 1) * mp.quad(
        lambda x: (x * (1 - x)) ** n / (1 - x * (1 - x) * wz) ** n, [0, 0.5, 1]))


@pytest.mark.parametrize("w", [-40.0, -3.7, -0.9, -1e-3, 0.0, 0.4, 1.0, 2.5, 3.5, 3.9])
@pytest.mark.parametrize("n", [0, 1, 2, 3])
def test_derivatives_below_threshold_to_1e10(w, n):
    got = jbar_derivatives(w, 3)[n, 0]
    ref = _ref(w, n).real
    assert got == pytest.approx(ref, rel=1e-10, abs=1e-14)


@pytest.mark.parametrize("w", [4.5, 6.0, 10.0, 50.0])
def test_above_threshold_complex(w):
    got = complex(jbar(np.array([w]))[0])
    ref = _ref(w, 0)
    assert got.real == pytest.approx(ref.real, rel=1e-9)
    # Im Jbar = sigma/(16 pi) => Im j = pi sigma (unitarity of the bubble)
    assert got.imag == pytest.approx(np.pi * np.sqrt(1 - 4 / w), rel=1e-12)
    assert got.imag == pytest.approx(ref.imag, rel=1e-8)


def test_series_and_closed_form_agree_at_the_switch():
    from eftsieve.theories.loops import _series_derivative

    w = np.array([1.0, -1.0, 1.5, -1.5])
    d = jbar_derivatives(w, 3)        # |w| >= 1: the exact recursion
    for n in range(4):
        np.testing.assert_allclose(_series_derivative(w, n), d[n], rtol=1e-12)


def test_rejects_threshold_and_above():
    with pytest.raises(ValueError):
        jbar_derivatives(4.0, 2)
