"""The eighteen dimension-8 quartic-gauge-coupling operators of ``aqgc-dim8`` and their modes.

Basis of vector-boson-scattering analyses: Eboli, Gonzalez-Garcia & Mizukoshi,
arXiv:hep-ph/0606118, Eqs. (2)-(16), with the later update by Eboli & Gonzalez-Garcia,
arXiv:1604.03555, which adds O_S2 and writes O_M5 with its hermitian conjugate
(definitions from memory; checked term by term against docs/physics_aqgc.md):

    O_S0 = [(D_mu Phi)^+ D_nu Phi] [(D^mu Phi)^+ D^nu Phi]
    O_S1 = [(D_mu Phi)^+ D^mu Phi] [(D_nu Phi)^+ D^nu Phi]
    O_S2 = [(D_mu Phi)^+ D_nu Phi] [(D^nu Phi)^+ D^mu Phi]
    O_M0 = Tr[W_mn W^mn] [(D_b Phi)^+ D^b Phi]      O_M1 = Tr[W_mn W^nb] [(D_b Phi)^+ D^m Phi]
    O_M2 = [B_mn B^mn] [(D_b Phi)^+ D^b Phi]        O_M3 = [B_mn B^nb] [(D_b Phi)^+ D^m Phi]
    O_M4 = [(D_m Phi)^+ W_bn D^m Phi] B^bn           O_M5 = [(D_m Phi)^+ W_bn D^n Phi] B^bm + h.c.
    O_M6 = [(D_m Phi)^+ W_bn W^bn D^m Phi]           O_M7 = [(D_m Phi)^+ W_bn W^bm D^n Phi]
    O_T0 = Tr[W_mn W^mn] Tr[W_ab W^ab]               O_T1 = Tr[W_an W^mb] Tr[W_mb W^an]
    O_T2 = Tr[W_am W^mb] Tr[W_bn W^na]               O_T5 = Tr[W_mn W^mn] B_ab B^ab
    O_T6 = Tr[W_an W^mb] B_mb B^an                   O_T7 = Tr[W_am W^mb] B_bn B^na
    O_T8 = B_mn B^mn B_ab B^ab                       O_T9 = B_am B^mb B_bn B^na

with the normalised field strengths W_mn = i g (sigma^a/2) W^a_mn, B_mn = i (g'/2) B_mn
(convention ``hat-i``, :mod:`eftsieve.theories.aqgc_dim8.conventions`) and
L = sum_i (f_i / Lambda^4) O_i.

* **O_M6 is redundant**: W_bn W^bn = (1/2) Tr[W_bn W^bn] 1 for SU(2) (sigma^a sigma^b +
  sigma^b sigma^a = 2 delta^ab), so O_M6 = O_M0 / 2 exactly.  fM6 is accepted in cards and
  folded into fM0 + fM6/2; it is no coordinate of the region.
* **Gauge couplings.**  In the massless, unbroken phase D_mu -> d_mu in a four-point
  contact (a gauge field in D_mu adds a fifth field).  g and g' enter only through the
  hatted field strengths.  Rescaling the W modes by 1/g and the B modes by 1/g' is a
  congruence of the forward tensor that maps the positivity cone onto itself, so the cone
  in the f_i does not depend on g, g' or the weak angle (docs/physics_aqgc.md); the
  forward tensors do, and we keep g = 1, g' = tan(theta_W) from the theory setting.

Modes (12): W^1, W^2, W^3 and B with the two linear polarisations x, y each (8 vector
modes) and the four real Higgs components Phi = (phi1 + i phi2, phi3 + i phi4)/sqrt(2).
Real components and real polarisations are self-conjugate: crossing maps each mode to
itself.  The conjugate doublet is formed algebraically (W^+ = -W for the hatted
W, B^+ = -B), never by complex conjugation, so the amplitude stays analytic in s.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import cached_property
from typing import Any

import numpy as np

from eftsieve.bounds.contact import ModeGroups, ModeSet, lower

MODES = ModeGroups((("W", ModeSet("vector", 3, ("W1", "W2", "W3"))),
                    ("B", ModeSet("vector", 1, ("B",))),
                    ("H", ModeSet("scalar", 4, ("phi1", "phi2", "phi3", "phi4")))))
S_COEFFICIENTS = ("fS0", "fS1", "fS2")
M_COEFFICIENTS = ("fM0", "fM1", "fM2", "fM3", "fM4", "fM5", "fM7")
T_COEFFICIENTS = ("fT0", "fT1", "fT2", "fT5", "fT6", "fT7", "fT8", "fT9")
#: the 18 independent coefficients (the region's coordinates)
COEFFICIENTS = S_COEFFICIENTS + M_COEFFICIENTS + T_COEFFICIENTS
#: every name a card may use: the 18 and the redundant fM6
PARAMETERS = S_COEFFICIENTS + M_COEFFICIENTS[:-1] + ("fM6", "fM7") + T_COEFFICIENTS
_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])
_EPS = np.zeros((3, 3, 3))
for _i, _j, _k in ((0, 1, 2), (1, 2, 0), (2, 0, 1)):
    _EPS[_i, _j, _k], _EPS[_i, _k, _j] = 1.0, -1.0

Jet = tuple[np.ndarray, np.ndarray]


def couplings(sin2_theta_w: float) -> tuple[float, float]:
    """(g, g') with g = 1 and g'/g = tan(theta_W) (module docstring)."""
    return 1.0, float(np.sqrt(sin2_theta_w / (1.0 - sin2_theta_w)))


def doublet_gradients(h: Jet) -> tuple[np.ndarray, np.ndarray]:
    """d^mu Phi and its formal conjugate d^mu Phi^+, each (..., 2, 4)."""
    d = h[1] / np.sqrt(2)
    dp = np.stack([d[..., 0, :] + 1j * d[..., 1, :], d[..., 2, :] + 1j * d[..., 3, :]], axis=-2)
    dpc = np.stack([d[..., 0, :] - 1j * d[..., 1, :], d[..., 2, :] - 1j * d[..., 3, :]], axis=-2)
    return dp, dpc


def _lo(t: np.ndarray) -> np.ndarray:
    return lower(t, (-2, -1))


class _Fields:
    """The contractions the 18 densities are made of, at one field configuration.

    With W_mn = i g (sigma^a/2) W^a_mn and B_mn = i (g'/2) B_mn (hat-i) and
    Tr[sigma^a sigma^b] = 2 delta^ab, sigma^a sigma^b = delta^ab + i eps^abc sigma^c:

    * Tr[W_X W_Y] = -(g^2/2) W^a_X W^a_Y and B_X B_Y = -(g'^2/4) B_X B_Y;
    * (D_m Phi)^+ W_X D_n Phi = (i g/2) W^a_X V^a_mn with V^a_mn = (D_m Phi)^+ sigma^a D_n Phi;
    * (D_m Phi)^+ W_X W_Y D_n Phi = -(g^2/4) (W^a_X W^a_Y X_mn + i eps^abc W^a_X W^b_Y V^c_mn)
      with X_mn = (D_m Phi)^+ D_n Phi.
    """

    def __init__(self, w: Jet, b: Jet, h: Jet, g: float, gp: float) -> None:
        self.g2, self.gp2, self.ggp = g * g, gp * gp, g * gp
        self.w, self.b = w[1], b[1][..., 0, :, :]                    # F^{mu nu}, indices up
        self.wl, self.bl = _lo(self.w), _lo(self.b)
        self.h = h
        self.shape = np.broadcast_shapes(self.w.shape[:-3], self.b.shape[:-2], h[1].shape[:-2])

    @cached_property
    def x(self) -> np.ndarray:
        """X^{mu nu} = (D^mu Phi)^+ D^nu Phi."""
        dp, dpc = doublet_gradients(self.h)
        return np.einsum("...am,...an->...mn", dpc, dp)

    @cached_property
    def v(self) -> np.ndarray:
        """V^{c, mu nu} = (D^mu Phi)^+ sigma^c D^nu Phi."""
        dp, dpc = doublet_gradients(self.h)
        return np.einsum("...cjm,...jn->...cmn",
                         np.einsum("...im,cij->...cjm", dpc, _PAULI), dp)

    @cached_property
    def gram(self) -> np.ndarray:
        """G_ab = W^a_mn W^{b, mn}."""
        return np.einsum("...amn,...bmn->...ab", self.wl, self.w)

    @cached_property
    def wb(self) -> np.ndarray:
        """W^a_mn B^mn."""
        return np.einsum("...amn,...mn->...a", self.wl, self.b)

    @cached_property
    def bb(self) -> np.ndarray:
        return np.einsum("...mn,...mn->...", self.bl, self.b)

    @cached_property
    def k(self) -> np.ndarray:
        """K_a^b = sum_c W^c_{a m} W^{c, m b}."""
        return np.einsum("...cam,...cmb->...ab", self.wl, self.w)

    @cached_property
    def bchain(self) -> np.ndarray:
        """L_a^b = B_{a m} B^{m b}."""
        return np.einsum("...am,...mb->...ab", self.bl, self.b)

    @cached_property
    def xx(self) -> np.ndarray:
        """(D_b Phi)^+ D^b Phi."""
        return np.einsum("...mm->...", lower(self.x, (-2,)))

    @cached_property
    def x_mixed(self) -> np.ndarray:
        """X_b^m = (D_b Phi)^+ D^m Phi as [b, m]."""
        return lower(self.x, (-2,))


def _tr(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """A_a^b B_b^a."""
    return np.einsum("...ab,...ba->...", a, b)


def _forms() -> dict[str, Callable[[_Fields], Any]]:
    """Coefficient name -> the operator as a function of the contractions (:class:`_Fields`),
    each written out with the identities in its docstring."""

    def s0(f: _Fields) -> Any:
        x = f.x
        return np.einsum("...mn,...mn->...", _lo(x), x)

    def s1(f: _Fields) -> Any:
        return f.xx ** 2

    def s2(f: _Fields) -> Any:
        x = f.x
        return np.einsum("...mn,...nm->...", _lo(x), x)

    def m0(f: _Fields) -> Any:
        return -f.g2 / 2 * np.einsum("...aa->...", f.gram) * f.xx

    def m1(f: _Fields) -> Any:
        return -f.g2 / 2 * np.einsum("...mb,...bm->...", f.k, f.x_mixed)

    def m2(f: _Fields) -> Any:
        return -f.gp2 / 4 * f.bb * f.xx

    def m3(f: _Fields) -> Any:
        return -f.gp2 / 4 * np.einsum("...mb,...bm->...", f.bchain, f.x_mixed)

    def m4(f: _Fields) -> Any:
        trace_v = np.einsum("...cmm->...c", lower(f.v, (-2,)))
        return -f.ggp / 4 * np.einsum("...c,...c->...", f.wb, trace_v)

    def m5(f: _Fields) -> Any:
        # W^a_{b n} B^{b m} (V^a_m^n + V^{a, n}_m), the second term being the h.c.
        wbm = np.einsum("...cbn,...bm->...cnm", lower(f.w, (-2,)), f.b)   # W^a_b^n B^{b m}
        vl = lower(f.v, (-2, -1))
        return -f.ggp / 4 * (np.einsum("...cnm,...cmn->...", wbm, vl)
                             + np.einsum("...cnm,...cnm->...", wbm, vl))

    def m7(f: _Fields) -> Any:
        # W^a_{b n} W^{b', b m} contracted with X_m^n, V_m^n (indices m, n of D_m, D^n)
        ww = np.einsum("...abn,...cbm->...acnm", lower(f.w, (-2,)), f.w)   # W^a_b^n W^{c,b m}
        xl = _lo(f.x)                                                     # X_{m n}
        vl = _lo(f.v)
        sym = np.einsum("...aanm,...mn->...", ww, xl)
        anti = np.einsum("abc,...abnm,...cmn->...", _EPS, ww, vl)
        return -f.g2 / 4 * (sym + 1j * anti)

    def t0(f: _Fields) -> Any:
        return f.g2**2 / 4 * np.einsum("...aa->...", f.gram) ** 2

    def t1(f: _Fields) -> Any:
        return f.g2**2 / 4 * np.einsum("...ab,...ab->...", f.gram, f.gram)

    def t2(f: _Fields) -> Any:
        k = f.k
        return f.g2**2 / 4 * _tr(k, k)

    def t5(f: _Fields) -> Any:
        return f.g2 * f.gp2 / 8 * np.einsum("...aa->...", f.gram) * f.bb

    def t6(f: _Fields) -> Any:
        return f.g2 * f.gp2 / 8 * np.einsum("...a,...a->...", f.wb, f.wb)

    def t7(f: _Fields) -> Any:
        return f.g2 * f.gp2 / 8 * _tr(f.k, f.bchain)

    def t8(f: _Fields) -> Any:
        return f.gp2**2 / 16 * f.bb ** 2

    def t9(f: _Fields) -> Any:
        lm = f.bchain
        return f.gp2**2 / 16 * _tr(lm, lm)

    forms: dict[str, Callable[[_Fields], Any]] = {
            "fS0": s0, "fS1": s1, "fS2": s2, "fM0": m0, "fM1": m1, "fM2": m2, "fM3": m3,
            "fM4": m4, "fM5": m5, "fM7": m7, "fT0": t0, "fT1": t1, "fT2": t2, "fT5": t5,
            "fT6": t6, "fT7": t7, "fT8": t8, "fT9": t9}
    return forms


def make_operators(sin2_theta_w: float) -> dict[str, Callable[..., Any]]:
    """Coefficient name -> density f(w, b, h) of the 18 coefficients at a weak angle."""
    g, gp = couplings(sin2_theta_w)
    forms = _forms()

    def one(form: Callable[[_Fields], Any]) -> Callable[..., Any]:
        def density(w: Jet, b: Jet, h: Jet) -> Any:
            return form(_Fields(w, b, h, g, gp))
        return density
    return {name: one(form) for name, form in forms.items()}


def stacked_density(coefficients: tuple[str, ...], sin2_theta_w: float) -> Callable[..., Any]:
    """One density returning the operators ``coefficients`` stacked on a last axis (the
    contractions are shared, so one forward-tensor pass computes all of them)."""
    g, gp = couplings(sin2_theta_w)
    forms = _forms()
    chosen = [forms[c] for c in coefficients]

    def density(w: Jet, b: Jet, h: Jet) -> Any:
        f = _Fields(w, b, h, g, gp)
        return np.stack([np.broadcast_to(form(f), f.shape) for form in chosen], axis=-1)
    return density
