"""Truncation allowance of the chpt-su3 facets: loop-consistent models and the eta mass.

The one-loop facets are exact statements about the O(p^4) amplitude; the true amplitude
differs at O(p^6).  As for chpt-su2 (:mod:`eftsieve.theories.chpt_su2.truncation`,
docs/physics.md, Sec. "Truncation study"), the allowance of a facet is measured on
loop-consistent models, here built for every SU(3) channel (ours; derivation in
docs/physics_su3.md, Sec. 7):

* every s- and u-channel bubble moment Lambda_n(z) of :mod:`eftsieve.theories.chpt_su3.loops`
  is replaced by its once-subtracted dispersive integral cut off at Lambda^2,

      Lambda_n^cut(z) = Lambda_n(0)
                        + (z/pi) int_{th}^{Lambda^2} Im Lambda_n(z') / (z' (z' - z)) dz',
      Im Lambda_n(z + i0) = -pi (x_+^{n+1} - x_-^{n+1}) / (n + 1),

  x_+- the roots of D(x, z) = m_e^2 (1 - x) + m_f^2 x - x (1 - x) z (evaluated as
  Lambda_n minus the tail above max(Lambda^2, th), smooth below Lambda^2);
* the constant of d^2T/ds^2 is whatever makes it vanish as s -> infinity at fixed t, so
  that two subtractions suffice.

The model's absorptive parts are the one-loop ones below Lambda^2 (sums of |tree|^2 in
the partial waves, positive with positive t-slope for 0 <= t < 4 M_pi^2) and zero above,
so it satisfies both bound families exactly.  Its difference R(x) from the one-loop
functional is constant (absorbed by the O(p^4) constants) up to O(p^6); the *allowance*
of a facet is half the spread of R over the domain, the part no O(p^4) constant absorbs
(docs/physics_su3.md, Sec. 7, explains why the model's constants are not read off its
large-s limit as for chpt-su2).  With the centred constant |remainder| <= allowance, so
the model is never outside the relaxed facet.  The default allowance is this at
Lambda_h (770 MeV for pi pi, scaled to the K*(892) for pi K) plus the facet's change when
the eta mass in the loops is the Gell-Mann-Okubo one instead of the physical one
(an O(p^6) ambiguity).  tests/theories/chpt_su3/test_truncation.py checks the model
(positivity, one-loop limit, chpt-su2 agreement for pi pi) and the defaults.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eftsieve.bounds.fixed_t import t_derivative_combination, unit_grid
from eftsieve.theories.chpt_su3 import amplitude as amp3
from eftsieve.theories.chpt_su3.channels import ChannelFunctionals

TRUNCATION_MODELS = ("loop-consistent", "none")
#: Lambda_h in MeV: the rho mass (PDG, from memory), as for chpt-su2
HEAVY_SCALE_MEV = 770.0
#: grid on which the spread of the model remainder is taken (its extremes sit on the
#: domain's corners: (121, 61) gives the same allowance to 5 digits)
MODEL_GRID = (41, 21)
_E_S = np.array([1.0, 0.0, -1.0])
_E_T = np.array([0.0, 1.0, -1.0])
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(96)
_W = 0.5 * (_NODES + 1.0)            # Gauss-Legendre nodes on (0, 1)
_WW = 0.5 * _WEIGHTS


def gmo_eta_mass(pion_mass: float, kaon_mass: float) -> float:
    """The Gell-Mann-Okubo eta mass, M_eta^2 = (4 M_K^2 - M_pi^2)/3 (GL 1985, Eq. (10.7),
    equation number from memory), in the units of the inputs."""
    return math.sqrt((4 * kaon_mass**2 - pion_mass**2) / 3)


def im_moments(pair: tuple[float, float], z: np.ndarray) -> np.ndarray:
    """Im Lambda_n(z + i0), n = 0, 1, 2, shape (3, len(z)); zero below the threshold."""
    m_e, m_f = pair
    z = np.asarray(z, dtype=float)
    lam = (z - (m_e + m_f) ** 2) * (z - (m_e - m_f) ** 2)
    above = lam > 0
    root = np.sqrt(np.where(above, lam, 0.0))
    zz = np.where(above, z, 1.0)
    xp = (zz + m_e**2 - m_f**2 + root) / (2 * zz)
    xm = (zz + m_e**2 - m_f**2 - root) / (2 * zz)
    out = np.stack([-math.pi * (xp ** (n + 1) - xm ** (n + 1)) / (n + 1) for n in range(3)])
    return np.where(above[None, :], out, 0.0)


def tail_jets(pair: tuple[float, float], z: np.ndarray, lower: float, order: int,
              ) -> np.ndarray:
    """d^k/dz^k of (z/pi) int_lower^inf Im Lambda_n(z')/(z'(z' - z)) dz', shape
    (3, order + 1, len(z)), for z < lower; by y = lower/z' = 1 - w^2 (smooth at y = 1)."""
    z = np.asarray(z, dtype=float)
    y = 1.0 - _W**2
    wt = 2 * _W * _WW
    im = im_moments(pair, lower / y) * wt[None, :]          # (3, nodes)
    den = lower - np.outer(y, z)                              # (nodes, n)
    out = np.empty((3, order + 1, len(z)))
    out[:, 0] = im @ (z[None, :] / den) / math.pi
    for k in range(1, order + 1):
        kern = lower * math.factorial(k) * y[:, None] ** (k - 1) / den ** (k + 1)
        out[:, k] = im @ kern / math.pi
    return out


def cut_jets(amp: amp3.Amplitude, x: np.ndarray, order: int, cutoff2: float,
             ) -> dict[tuple[int, tuple[float, float]], np.ndarray]:
    """The s- and u-channel jets of the model (uncut jets minus the tails)."""
    jets = amp3.loop_jets(amp, x, order, skip=(2,))
    out = {}
    for (var, pair), jet in jets.items():
        lower = max(cutoff2, (pair[0] + pair[1]) ** 2)
        out[(var, pair)] = jet - tail_jets(pair, x[:, var - 1], lower, order)
    return out


def _functional(fn: ChannelFunctionals, x: np.ndarray, family: str,
                jets: dict[tuple[int, tuple[float, float]], np.ndarray]) -> np.ndarray:
    """d^2T/ds^2 at L = 0, or its t-derivative combination, with the given jets."""
    sec = amp3.second(fn.amp, x, _E_S, jets)
    if family == "second-derivative":
        return sec
    dom = fn._domain()
    d_t = amp3.third_mixed(fn.amp, x, _E_S, _E_T, jets)
    d_s = amp3.third_mixed(fn.amp, x, _E_S, _E_S, jets)
    return t_derivative_combination(sec, d_t, d_s, x[:, 0], x[:, 2], dom.s_th, dom.u_th)[0]


def model_functional(fn: ChannelFunctionals, x: np.ndarray, family: str, cutoff2: float,
                     ) -> np.ndarray:
    """The model's exact functional at x up to its constant K . L (F^4 units): the second
    derivative of the cut amplitude at L = 0 (or its t-derivative combination)."""
    order = 2 if family == "second-derivative" else 3
    return _functional(fn, x, family, cut_jets(fn.amp, x, order, cutoff2))


@dataclass(frozen=True)
class ModelAllowance:
    """The loop-consistent model of one channel seen by one bound family.

    All numbers are in the facet's units (normal with smallest entry 1).

    Attributes
    ----------
    allowance
        Half the spread over the domain of (model functional - one-loop functional): the
        part of the model's O(p^6) remainder that no O(p^4) constant absorbs.  With the
        centred constant below, |remainder| <= allowance everywhere.
    model_value
        n . L of the model, the centred O(p^4) constant (midpoint of the spread).
    slack
        min over the domain of the model's exact functional at ``model_value`` (>= 0: the
        model satisfies the bound exactly).
    """

    allowance: float
    model_value: float
    slack: float

    def to_dict(self) -> dict[str, float]:
        return {"allowance": self.allowance, "model_value": self.model_value,
                "slack": self.slack}


def model_allowance(fn: ChannelFunctionals, family: str, normal: np.ndarray,
                    cutoff_ratio: float, grid: tuple[int, int] = MODEL_GRID,
                    ) -> ModelAllowance:
    """The truncation allowance of a facet with ``normal`` of ``fn``'s channel, from the
    model with Lambda/M_pi = ``cutoff_ratio`` (module docstring)."""
    k = np.asarray(fn.k, dtype=float)
    n = np.asarray(normal, dtype=float)
    big = np.abs(k) > 1e-12 * np.abs(k).max()
    scale = float(np.mean(n[big] / k[big]))
    if scale <= 0 or not np.allclose(n, scale * k, rtol=1e-8, atol=1e-12 * np.abs(n).max()):
        raise ValueError(f"facet normal {n} is not along the channel normal {k}")
    x = fn._domain().points(unit_grid(grid))
    order = 2 if family == "second-derivative" else 3
    one_loop = _functional(fn, x, family, amp3.loop_jets(fn.amp, x, order, skip=(2,)))
    model = model_functional(fn, x, family, cutoff_ratio**2)
    diff = model - one_loop
    lo, hi = float(diff.min()), float(diff.max())
    centre = -(lo + hi) / 2        # K . L_model: model = one_loop + K.L_model + remainder
    return ModelAllowance(scale * (hi - lo) / 2, scale * centre,
                          scale * float((model + centre).min()))
