"""The electroweak chiral Lagrangian's alpha4, alpha5 in the Goldstone limit (``ew-chiral``).

L4 = alpha4 [Tr(V_mu V_nu)]^2,  L5 = alpha5 [Tr(V_mu V^mu)]^2,  V_mu = (D_mu U) U^dag,
U = exp(i pi^a sigma^a / v) (Longhitano, Phys. Rev. D 22 (1980) 1166; Appelquist & Wu,
Phys. Rev. D 48 (1993) 3235; from memory).  In the Goldstone limit (g, g' -> 0, massless
Goldstones; equivalence theorem for longitudinal W, Z at E >> m_W) only the four-pion term
of U's expansion with four derivatives enters: d_mu U -> i (d_mu pi.sigma)/v.  We set
v = 1 (a positive rescaling).

The same module gives the chiral-limit pi pi contact terms of SU(2) ChPT,
L = (l1/4) [Tr(d_mu U d^mu U^dag)]^2 + (l2/4) [Tr(d_mu U d_nu U^dag)]^2 with F = 1
(Gasser & Leutwyler, Ann. Phys. 158 (1984) 142), for the cross-check against chpt-su2.
"""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.contact import ModeSet, lower

MODES = ModeSet("scalar", 3, ("pi1", "pi2", "pi3"))
COEFFICIENTS = ("alpha4", "alpha5")
CHPT_COEFFICIENTS = ("l1", "l2")
_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])


def du(dphi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """d^mu U and d^mu U^dag at the four-derivative, one-field-per-derivative order:
    i (d pi . sigma) and -i (d pi . sigma), each (..., 2, 2, 4)."""
    m = np.einsum("aij,...am->...ijm", _PAULI, dphi)
    return 1j * m, -1j * m


def _vv(dphi: np.ndarray) -> np.ndarray:
    """Tr(V_mu V^nu) with V = dU U^dag -> dU at this order: (..., 4, 4) mixed indices."""
    d, _ = du(dphi)
    return np.einsum("...ijm,...jin->...mn", lower(d, (-1,)), d)


def density_alpha4(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """[Tr(V_mu V_nu)]^2 = Tr(V_mu V_nu) Tr(V^mu V^nu)."""
    t = _vv(dphi)                      # Tr(V_mu V^nu)
    return np.einsum("...mn,...nm->...", t, t)


def density_alpha5(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """[Tr(V_mu V^mu)]^2."""
    return np.einsum("...mm->...", _vv(dphi)) ** 2


def density_l1(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """(1/4) [Tr(d_mu U d^mu U^dag)]^2."""
    d, dd = du(dphi)
    return 0.25 * np.einsum("...ijm,...jim->...", lower(d, (-1,)), dd) ** 2


def density_l2(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """(1/4) Tr(d_mu U d_nu U^dag) Tr(d^mu U d^nu U^dag)."""
    d, dd = du(dphi)
    t = np.einsum("...ijm,...jin->...mn", lower(d, (-1,)), dd)  # Tr(d_mu U d^nu U^dag)
    return 0.25 * np.einsum("...mn,...nm->...", t, t)


OPERATORS = {"alpha4": density_alpha4, "alpha5": density_alpha5}
CHPT_OPERATORS = {"l1": density_l1, "l2": density_l2}


def current_rho(component: int):
    """J^a_mu = eps^{abc} pi^b d_mu pi^c, the current of a heavy isovector vector (rule-in)."""
    eps = np.zeros((3, 3, 3))
    eps[0, 1, 2] = eps[1, 2, 0] = eps[2, 0, 1] = 1
    eps[0, 2, 1] = eps[2, 1, 0] = eps[1, 0, 2] = -1

    def current(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
        return np.einsum("bc,...b,...cm->...m", eps[component], phi, dphi)
    return current


def current_sigma(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """J = d_mu pi . d^mu pi, the current of a heavy isosinglet scalar (rule-in)."""
    return np.einsum("...am,...am->...", lower(dphi, (-1,)), dphi)
