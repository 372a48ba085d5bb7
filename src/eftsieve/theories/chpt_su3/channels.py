"""Processes, kinematic domains and bound functionals of one-loop SU(3) ChPT.

Each elastic process a b -> a b has its own domain (docs/physics_su3.md, Sec. 3): with
s + t + u = 2 m_a^2 + 2 m_b^2, the fixed-t dispersion relation holds for s < s0, u < u0
(s0, u0: the lowest hadronic thresholds of the s- and u-channel), and the absorptive
parts are provably positive only above the *elastic* threshold (m_a + m_b)^2.  A process
is used only when s0 = u0 = (m_a + m_b)^2, i.e. when there is no unphysical region;
with the physical masses that leaves pi pi and pi K (every other process has a lighter
state below its elastic threshold: pi pi under K Kbar, eta eta and, through K -> K
crossing, K K; K pi under K eta; 3 pi under pi eta).  For equal masses every process
qualifies.  The t-range is 0 <= t < 4 M_pi^2 (the pi pi threshold of every t-channel).

Within a process the flavour vectors are superposed; the bounds are linear in the
isospin weights, so the corner channels listed in :data:`CHANNELS` are the extreme ones
(pi pi: the four corners of chpt-su2; pi K: pi+ K+ (I = 3/2) and pi- K+ (I = 3/2 weight
1/3)); the tests check random superpositions against the corners.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eftsieve.bounds.fixed_t import t_derivative_combination as generic_t_derivative
from eftsieve.theories.chpt_su3 import amplitude as amp3

#: distance in units of M_pi^2 kept from the s- and u-channel thresholds in the scan
EDGE = 1e-3
_E_S = np.array([1.0, 0.0, -1.0])      # d/ds at fixed t
_E_T = np.array([0.0, 1.0, -1.0])      # d/dt at fixed s


def _vec(k: int) -> np.ndarray:
    e = np.zeros(8, dtype=complex)
    e[k] = 1.0
    return e


_S2 = math.sqrt(2.0)
PI_PLUS = (_vec(0) - 1j * _vec(1)) / _S2
PI_ZERO = _vec(2)
K_PLUS = (_vec(3) - 1j * _vec(4)) / _S2
K_ZERO = (_vec(5) - 1j * _vec(6)) / _S2
ETA = _vec(7)

#: name -> (process, (kind a, kind b), (vector a, vector b))
CHANNELS: dict[str, tuple[str, tuple[str, str], tuple[np.ndarray, np.ndarray]]] = {
    "pi+ pi0": ("pi pi", ("pi", "pi"), (PI_PLUS, PI_ZERO)),
    "pi+ pi-": ("pi pi", ("pi", "pi"), (PI_PLUS, PI_PLUS.conj())),
    "pi+ pi+": ("pi pi", ("pi", "pi"), (PI_PLUS, PI_PLUS)),
    "pi0 pi0": ("pi pi", ("pi", "pi"), (PI_ZERO, PI_ZERO)),
    "pi+ K+": ("pi K", ("pi", "K"), (PI_PLUS, K_PLUS)),
    "pi- K+": ("pi K", ("pi", "K"), (PI_PLUS.conj(), K_PLUS)),
    "pi0 eta": ("pi eta", ("pi", "eta"), (PI_ZERO, ETA)),
    "K+ K+": ("K K", ("K", "K"), (K_PLUS, K_PLUS)),
    "K+ K-": ("K Kbar", ("K", "K"), (K_PLUS, K_PLUS.conj())),
    "K0 K-": ("K Kbar", ("K", "K"), (K_ZERO, K_PLUS.conj())),
    "K+ eta": ("K eta", ("K", "eta"), (K_PLUS, ETA)),
    "eta eta": ("eta eta", ("eta", "eta"), (ETA, ETA)),
}
PROCESSES = ("pi pi", "pi K", "pi eta", "K K", "K Kbar", "K eta", "eta eta")


def lowest_thresholds(process: str, mk: float, meta: float) -> tuple[float, float]:
    """(s0, u0): the lowest hadronic thresholds of the s- and u-channel (units M_pi^2).

    From the quantum numbers (isospin, strangeness, G-parity) of each channel; the
    lightest states are two-meson states except for pi eta (I = 1, G = -1), which
    couples to three pions.  Equal-mass (SU(3)-symmetric) kinematics included.
    """
    pipi, pik = 4.0, (1.0 + mk) ** 2
    table = {
        "pi pi": (pipi, pipi),
        "pi K": (pik, pik),
        "pi eta": (min(9.0, (1 + meta) ** 2), min(9.0, (1 + meta) ** 2)),
        "K K": (4 * mk**2, min(pipi, 4 * mk**2)),       # u-channel is K Kbar
        "K Kbar": (min(pipi, 4 * mk**2), 4 * mk**2),
        "K eta": (min(pik, (mk + meta) ** 2), min(pik, (mk + meta) ** 2)),
        "eta eta": (min(pipi, 4 * meta**2), min(pipi, 4 * meta**2)),
    }
    return table[process]


@dataclass(frozen=True)
class Domain:
    """The kinematic domain of one process, units M_pi^2.

    Attributes
    ----------
    s_th, u_th
        The s- and u-channel thresholds of the dispersion relation (elastic ones).
    total
        s + t + u = 2 m_a^2 + 2 m_b^2.
    t_max
        Upper end of the t-range (the pi pi threshold of the t-channel).
    """

    s_th: float
    u_th: float
    total: float
    t_max: float = 4.0

    def points(self, cube: np.ndarray) -> np.ndarray:
        """Unit square (c_s, c_t) -> (s, t, u) with 0 <= t <= t_max, s < s_th, u < u_th."""
        t = self.t_max * cube[:, 1]
        lo = self.total - t - self.u_th + EDGE
        hi = self.s_th - EDGE
        s = lo + cube[:, 0] * (hi - lo)
        return np.stack([s, t, self.total - s - t], axis=-1)


def process_domain(process: str, kinds: tuple[str, str], mk: float, meta: float,
                   ) -> tuple[Domain | None, str]:
    """The domain of a process, or None with the reason it has none that is provable."""
    m = {"pi": 1.0, "K": mk, "eta": meta}
    ma, mb = m[kinds[0]], m[kinds[1]]
    elastic = (ma + mb) ** 2
    s0, u0 = lowest_thresholds(process, mk, meta)
    tol = 1e-9 * elastic
    if s0 < elastic - tol or u0 < elastic - tol:
        return None, (f"lowest thresholds s0 = {s0:.4g}, u0 = {u0:.4g} M_pi^2 lie below the "
                      f"elastic threshold {elastic:.4g} M_pi^2 of {process} (unphysical "
                      "region: positivity of the absorptive part is not provable)")
    return Domain(elastic, elastic, 2 * ma**2 + 2 * mb**2), ""


def t_derivative_combination(second: np.ndarray, d_fixed_s: np.ndarray, d_s3: np.ndarray,
                             s: np.ndarray, u: np.ndarray, s_th: float, u_th: float,
                             ) -> tuple[np.ndarray, np.ndarray]:
    """The t-derivative combination with the channel's own thresholds (unequal masses);
    see :func:`eftsieve.bounds.fixed_t.t_derivative_combination` and docs/physics_su3.md."""
    return generic_t_derivative(second, d_fixed_s, d_s3, s, u, s_th, u_th)


class ChannelFunctionals:
    """The bound functionals of one SU(3) channel with the L-dependence precomputed.

    d^2T/ds^2 = K0(s, t) + K . (L1, L2, L3) (times F^4) with K constant; the loops enter
    K0 only, and with ``loops=False`` K0 = 0 (tree level).
    """

    def __init__(self, name: str, mk: float, meta: float, mu: float, loops: bool = True,
                 ) -> None:
        process, kinds, vecs = CHANNELS[name]
        self.name, self.process = name, process
        self.amp = amp3.channel_amplitude(vecs, kinds, mk, meta, mu)
        self.k = amp3.lec_normal(self.amp, _E_S)
        self.loops = loops
        dom, reason = process_domain(process, kinds, mk, meta)
        self.domain, self.reason = dom, reason

    def _loop_parts(self, x: np.ndarray, order: int) -> tuple[np.ndarray, ...]:
        """S, D_t S and D_s S of the loop part at L = 0 (all zero at tree level).

        The t-channel loops do not enter (their polynomials are linear in s at fixed t),
        so Lambda(t) is never evaluated, and t -> 4 M_pi^2 is reached continuously.
        """
        if not self.loops:
            z = np.zeros(len(x))
            return z, z, z
        jets = amp3.loop_jets(self.amp, x, order, skip=(2,))
        k0 = amp3.second(self.amp, x, _E_S, jets)
        if order < 3:
            return k0, k0, k0
        return (k0, amp3.third_mixed(self.amp, x, _E_S, _E_T, jets),
                amp3.third_mixed(self.amp, x, _E_S, _E_S, jets))

    def _domain(self) -> Domain:
        if self.domain is None:
            raise RuntimeError(f"channel {self.name} has no kinematic domain (a skipped process)")
        return self.domain

    def second_derivative(self, cube: np.ndarray):
        """Evaluator of d^2T/ds^2 >= 0 over the domain (Manohar & Mateu, arXiv:0801.3222)."""
        x = self._domain().points(cube)
        k0 = self._loop_parts(x, 2)[0]
        return k0, np.broadcast_to(self.k, (len(x), 3)), {"s": x[:, 0], "t": x[:, 1]}

    def t_derivative(self, cube: np.ndarray):
        """Evaluator of the first t-derivative bound (best alpha), unequal thresholds."""
        domain = self._domain()
        x = domain.points(cube)
        k0, d_fixed_s, d_s3 = self._loop_parts(x, 3)
        cand, alpha = t_derivative_combination(k0, d_fixed_s, d_s3, x[:, 0], x[:, 2],
                                               domain.s_th, domain.u_th)
        return (cand, np.broadcast_to(self.k, (len(x), 3)),
                {"s": x[:, 0], "t": x[:, 1], "alpha": alpha})
