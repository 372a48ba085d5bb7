"""Loop-consistent rule-in models of pi-pi scattering (a test helper, not library code).

The one-loop amplitude of Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (17.5)
(:mod:`eftsieve.theories.chpt_su2.amplitude`) with its two-point function Jbar replaced by the
dispersive integral cut off at a heavy scale Lambda,

    16 pi^2 Jbar_L(s) = j_L(w) = w int_4^L sigma(x) / (x (x - w)) dx,
    w = s/M^2, L = Lambda^2/M^2, sigma(x) = sqrt(1 - 4/x),

and with the O(p^4) polynomial fixed so that, in every channel, d^2T/ds^2 equals its own
twice-subtracted dispersive integral (no contribution from the circle at infinity).

Derivation (ours; docs/physics.md, Sec. "Truncation study").
  * j_L(w) -> -I0(L) as |w| -> infinity, I0(L) = int_4^L sigma(x)/x dx
    = ln((1 + sigma_L)/(1 - sigma_L)) - 2 sigma_L, sigma_L = sqrt(1 - 4/L).
  * At fixed t the Jbar(t) terms of A(s,t,u), A(t,s,u), A(u,t,s) are linear in s, so the
    large-s limit of d^2T/ds^2 is a t-independent constant per crossing term.  Setting it
    to zero in A(s,t,u) and A(t,s,u) (A(u,t,s) gives the same condition as A(s,t,u)):
        2(lbar1 - 4/3) + 2(lbar2 - 5/6) = 4 I0,     4(lbar2 - 5/6) = 4 I0,
    so lbar1 = 4/3 + lambda, lbar2 = 5/6 + lambda with lambda1 = lambda2 = I0(L)
    = ln(Lambda^2/M^2) - 2 + O(M^2/Lambda^2).
  * Then T(s, t) = a(t) s + b(t) + O(1/s) at fixed t: two subtractions suffice.  The
    absorptive parts are those of the one-loop amplitude below Lambda^2 (perturbative
    unitarity: S and P waves, Im t_l = sigma |t_l^LO|^2 >= 0, so Im T >= 0 and
    d Im T/dt >= 0 for 0 <= t < 4) and zero above.  The model therefore satisfies every
    assumption of both bound families exactly, and its O(p^4) constants are
    (4/3 + I0, 5/6 + I0): j_L - j = O(w/L), which only changes the amplitude at O(p^6).

Closed form (ours, by sigma = sqrt(1 - 4/x) and partial fractions), used as a check:
    j_L(w) = 2 sigma_L + sigma_w ln((sigma_w - sigma_L)/(sigma_w + sigma_L))   (w < 0),
    j_L(w) = 2 sigma_L - 2 b arctan(sigma_L / b),  b = sqrt(4/w - 1)          (0 < w < 4).
"""

from __future__ import annotations

import math

import numpy as np

from eftsieve.theories.chpt_su2 import amplitude as pipi
from eftsieve.theories.loops import jbar_derivatives

E_S = np.array([1.0, 0.0, -1.0])        # d/ds at fixed t
E_T = np.array([0.0, 1.0, -1.0])        # d/dt at fixed s
CHANNELS = {"pi+ pi0": (0.0, 0.0), "pi+ pi-": (1.0, 0.0), "pi+ pi+": (0.0, 1.0),
            "pi0 pi0": (1.0, 1.0)}
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(160)
_Y = 0.5 * (_NODES + 1.0)               # Gauss-Legendre on (0, 1)
_WY = 0.5 * _WEIGHTS


def lambda_shift(ratio: float) -> float:
    """lambda1 = lambda2 = I0(L) for Lambda/M = ``ratio`` (module docstring)."""
    big_l = ratio**2
    sl = math.sqrt(1.0 - 4.0 / big_l)
    return math.log((1 + sl) / (1 - sl)) - 2 * sl


def model_lbar(ratio: float) -> np.ndarray:
    """(lbar1, lbar2) of the loop-consistent model with Lambda/M = ``ratio``."""
    lam = lambda_shift(ratio)
    return np.array([4 / 3 + lam, 5 / 6 + lam])


def jbar_cut_closed(w: np.ndarray, ratio: float) -> np.ndarray:
    """16 pi^2 Jbar_Lambda(w) for real w < 4 from the closed form (module docstring)."""
    w = np.asarray(w, dtype=float)
    sl = math.sqrt(1.0 - 4.0 / ratio**2)
    out = np.zeros_like(w)
    neg, pos = w < 0, (w > 0) & (w < 4)
    sw = np.sqrt(1 - 4 / w[neg])
    out[neg] = 2 * sl + sw * np.log((sw - sl) / (sw + sl))
    b = np.sqrt(4 / w[pos] - 1)
    out[pos] = 2 * sl - 2 * b * np.arctan(sl / b)
    return out


def _tail_derivatives(w: np.ndarray, big_l: float, order: int) -> np.ndarray:
    """d^n/dw^n of w int_L^inf sigma(x) / (x (x - w)) dx, n = 0..order, by Gauss-Legendre
    in y = L/x (a smooth integrand for w <= 4 < L)."""
    y = _Y[:, None]
    root = np.sqrt(1.0 - 4.0 * y / big_l)
    den = big_l - w[None, :] * y
    out = np.empty((order + 1, len(w)))
    out[0] = (_WY[:, None] * root * w[None, :] / den).sum(axis=0)
    for n in range(1, order + 1):
        term = math.factorial(n) * big_l * y ** (n - 1) / den ** (n + 1)
        out[n] = (_WY[:, None] * root * term).sum(axis=0)
    return out


def jbar_cut_derivatives(w: np.ndarray, ratio: float, order: int) -> np.ndarray:
    """d^n j_L/dw^n (n = 0..order) at real w < 4: the uncut j minus the tail above L."""
    w = np.atleast_1d(np.asarray(w, dtype=float))
    if ratio <= 2.2:
        raise ValueError("Lambda/M must exceed 2.2 for this quadrature")
    return jbar_derivatives(w, order) - _tail_derivatives(w, ratio**2, order)


def model_amplitude(x1: float, x2: float, ratio: float) -> pipi.Amplitude:
    """F^4 times the O(p^4) part of the model in the channel (x1, x2); the loop terms are
    to be evaluated with j_L (:func:`model_jets`)."""
    l1, l2 = model_lbar(ratio)
    amp = pipi.channel_amplitude((float(l1), float(l2), 0.0, 0.0), x1, x2)
    for term in amp.loops:   # the Jbar(t) terms never enter d^2/ds^2 or its t-derivative
        if term.var == 1 and term.poly.d2(E_S, E_S) != 0:
            raise RuntimeError("a Jbar(t) term is quadratic in s")
    return amp


def model_jets(x: np.ndarray, ratio: float, order: int) -> dict[int, np.ndarray]:
    """LOOP * d^n j_L at s and u (the variables the functionals differentiate)."""
    return {v: pipi.LOOP * jbar_cut_derivatives(x[:, v], ratio, order) for v in (0, 2)}


def domain_points(n_s: int = 121, n_t: int = 61, edge: float = 1e-3,
                  t_max: float = 4.0) -> np.ndarray:
    """(s, t, u) on the bound domain 0 <= t <= t_max, s < 4, u < 4 (units M^2)."""
    cs, ct = np.meshgrid(np.linspace(0, 1, n_s), np.linspace(0, 1, n_t), indexing="ij")
    t = t_max * ct.ravel()
    s = -t + edge + cs.ravel() * (4.0 + t - 2 * edge)
    return np.stack([s, t, 4.0 - s - t], axis=-1)


def exact_functionals(x1: float, x2: float, ratio: float, x: np.ndarray,
                      ) -> tuple[np.ndarray, np.ndarray]:
    """The model's d^2T/ds^2 and its t-derivative combination (both times F^4) at x.

    The second is min over alpha of S + D_alpha S/(3 m_alpha) (docs/physics.md, family
    ``t-derivative``), evaluated with our own transcription of that formula.
    """
    amp = model_amplitude(x1, x2, ratio)
    jets = model_jets(x, ratio, 3)
    sec = pipi.second(amp, x, E_S, jets)
    d_t = pipi.third_mixed(amp, x, E_S, E_T, jets)
    d_s = pipi.third_mixed(amp, x, E_S, E_S, jets)
    a, b = 4.0 - x[:, 0], 4.0 - x[:, 2]
    best = np.full(len(x), np.inf)
    for alpha in (np.zeros(len(x)), a / (a + b), np.ones(len(x))):
        m = np.maximum(alpha / a, (1 - alpha) / b)
        best = np.minimum(best, sec + (d_t - alpha * d_s) / (3 * m))
    return sec, best


def absorptive_part(x1: float, x2: float, mu: np.ndarray, t: np.ndarray, ratio: float,
                    channel: str = "s") -> np.ndarray:
    """F^4 Im T of the model on the s-channel (s = mu + i0) or u-channel (u = mu + i0) cut
    at fixed t: that of the one-loop amplitude below Lambda^2, zero above."""
    amp = model_amplitude(x1, x2, ratio)
    mu, t = np.broadcast_arrays(np.asarray(mu, float), np.asarray(t, float))
    other = 4.0 - mu - t
    x = (np.stack([mu, t, other], axis=-1) if channel == "s"
         else np.stack([other, t, mu], axis=-1))
    im = pipi.evaluate(amp, x).imag
    return np.where(mu < ratio**2, im, 0.0)


def lbar_normal(x1: float, x2: float) -> np.ndarray:
    """K of d^2T/ds^2 = CT (K . (lbar1, lbar2) + ...) in the channel (x1, x2), from the
    polynomial of Gasser & Leutwyler's Eq. (17.5) (pipi.a_stu)."""
    base = pipi.channel_amplitude((0.0, 0.0, 0.0, 0.0), x1, x2).poly.d2(E_S, E_S)
    return np.array([
        pipi.channel_amplitude((1.0, 0.0, 0.0, 0.0), x1, x2).poly.d2(E_S, E_S) - base,
        pipi.channel_amplitude((0.0, 1.0, 0.0, 0.0), x1, x2).poly.d2(E_S, E_S) - base,
    ]) / pipi.CT


def facet_excess(family: str, channel: str, normal: np.ndarray, offset: float, ratio: float,
                 x: np.ndarray | None = None) -> tuple[float, float, float]:
    """How a one-loop facet ``normal . lbar >= offset`` treats the model with Lambda/M = ratio.

    Returns (excess, shift, slack), all in the facet's own normalisation:

    excess = offset - normal . lbar_model: > 0 means the facet calls the exactly positive
        model outside;
    slack  = min over the domain of the model's exact functional / |K| (>= 0);
    shift  = excess + slack = offset - (the exact facet of amplitudes "one loop + this
        model's O(p^6) remainder"), the truncation shift of the facet.
    """
    x = domain_points() if x is None else x
    x1, x2 = CHANNELS[channel]
    k = lbar_normal(x1, x2)
    n = np.asarray(normal, dtype=float)
    nz = np.abs(k) > 1e-12
    scale = float(np.mean(n[nz] / k[nz]))   # facet normal = scale * K
    if not np.allclose(n, scale * k, rtol=1e-9, atol=1e-12):
        raise ValueError(f"the facet normal {n} is not along K = {k} of {channel}")
    sec, comb = exact_functionals(x1, x2, ratio, x)
    f = sec if family == "second-derivative" else comb
    slack = float(f.min()) / pipi.CT * scale
    excess = float(offset - n @ model_lbar(ratio))
    return excess, excess + slack, slack
