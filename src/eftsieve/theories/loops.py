"""The one-loop two-point function Jbar and its analytic derivatives.

In units of the loop mass M (w = s / M^2), Gasser & Leutwyler, Ann. Phys. 158 (1984)
142, Eq. (A.2) (see also Eq. (2.4) of arXiv:hep-ph/9511397):

    16 pi^2 Jbar(s) = j(w) = 2 + sigma ln((sigma - 1)/(sigma + 1)),   sigma = sqrt(1 - 4/w),

equivalently j(w) = -int_0^1 dx ln(1 - x(1-x) w), real below threshold (w < 4) and with
Im j = pi sigma above it (w > 4, on the physical sheet, s + i0).

Derivatives use the exact differential equation that j obeys,

    w (w - 4) j'(w) = 2 j(w) - w,

differentiated n times (Leibniz rule):

    w (w - 4) j^(n+1) = (2 - n (2w - 4)) j^(n) - n (n - 1) j^(n-1) - delta_{n1},

which is exact; near the removable singularity w = 0 the Taylor series
j(w) = sum_{k>=1} w^k (k!)^2 / (k (2k+1)!) is used instead.  Accuracy (1e-10 relative
or better for w in [-50, 3.9] and n <= 3) is verified against direct quadrature of the
Feynman-parameter integral in the tests.
"""

from __future__ import annotations

import math

import numpy as np

#: radius in w below which the Taylor series is used (convergence radius is 4)
_SERIES_RADIUS = 1.0
_N_SERIES = 40
_SERIES = np.array([math.factorial(k) ** 2 / (k * math.factorial(2 * k + 1))
                    for k in range(1, _N_SERIES + 1)])


def jbar_closed(w: np.ndarray | complex | float) -> np.ndarray:
    """16 pi^2 Jbar at w = s/M^2 from the closed form, valid in every region.

    Real for w < 4; complex above threshold with the physical (s + i0) sign,
    Im = pi sqrt(1 - 4/w) > 0.  At w = 0 returns 0.
    """
    w = np.asarray(w, dtype=complex)
    out = np.zeros_like(w)
    nz = w != 0
    ww = w[nz]
    # physical sheet: above threshold approach from s + i0
    ww = np.where((ww.imag == 0) & (ww.real > 4), ww + 0j, ww)
    sigma = np.sqrt(1 - 4 / ww)
    ratio = (sigma - 1) / (sigma + 1)
    log = np.log(ratio)
    # for real w > 4 the ratio is negative real: the s + i0 prescription gives +i pi
    above = (ww.imag == 0) & (ww.real > 4)
    log = np.where(above, np.log(np.abs(ratio)) + 1j * np.pi, log)
    out[nz] = 2 + sigma * log
    return out


def jbar(w: np.ndarray | float) -> np.ndarray:
    """16 pi^2 Jbar(w) for real w, complex-valued above threshold (see :func:`jbar_closed`)."""
    w = np.asarray(w, dtype=float)
    out = jbar_closed(w)
    small = np.abs(w) < _SERIES_RADIUS
    if small.any():
        out[small] = _series_derivative(w[small], 0)
    return out


def _series_derivative(w: np.ndarray, n: int) -> np.ndarray:
    """n-th derivative of the Taylor series of j at w (|w| < 4), by Horner's rule."""
    k = np.arange(1, _N_SERIES + 1)
    coef = _SERIES.copy()
    for i in range(n):
        coef = coef * (k - i)
    coef = coef[k >= n]          # coefficients of w^(k - n), k = max(n, 1) .. N
    out = np.zeros_like(w, dtype=float)
    for c in coef[::-1]:
        out = out * w + c
    if n == 0:                   # the series starts at w^1
        out = out * w
    return out


def jbar_derivatives(w: np.ndarray | float, order: int) -> np.ndarray:
    """j and its derivatives d^n j / dw^n for n = 0..order at real w < 4.

    Returns an array of shape (order + 1,) + shape(w).  Analytic (exact recursion from
    the differential equation, or the Taylor series near w = 0); no finite differences.
    """
    w = np.atleast_1d(np.asarray(w, dtype=float))
    if np.any(w >= 4):
        raise ValueError("jbar_derivatives is for real w < 4 (below threshold)")
    out = np.empty((order + 1,) + w.shape)
    small = np.abs(w) < _SERIES_RADIUS
    big = ~small
    for n in range(order + 1):
        if small.any():
            out[n][small] = _series_derivative(w[small], n)
    if big.any():
        wb = w[big]
        j = [jbar_closed(wb).real]
        den = wb * (wb - 4)
        if order >= 1:
            j.append((2 * j[0] - wb) / den)
        for n in range(1, order):
            num = (2 - n * (2 * wb - 4)) * j[n] - n * (n - 1) * j[n - 1] - (1.0 if n == 1 else 0)
            j.append(num / den)
        for n in range(order + 1):
            out[n][big] = j[n]
    return out
