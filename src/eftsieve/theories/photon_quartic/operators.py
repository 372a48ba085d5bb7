"""Light-by-light scattering at dimension 8: the operators and modes of ``photon-quartic``.

L = zeta1 (F_{mu nu} F^{mu nu})^2 + zeta2 F_{mu nu} F^{nu rho} F_{rho lambda} F^{lambda mu},
the two-coefficient basis of experimental light-by-light analyses (coefficients in
GeV^-4; common practice).  The alternative basis
L = a (F_{mu nu} F^{mu nu})^2 + b (F_{mu nu} Ftilde^{mu nu})^2
is related by the identity F^4 = (1/2) (F.F)^2 + (1/4) (F.Ftilde)^2 (common practice;
checked numerically in the tests), so a = zeta1 + zeta2/2 and b = zeta2/4.

Modes: one real vector field (the photon), two linear polarisations x and y: the states
``A x`` and ``A y``.  Crossing maps a real linear polarisation to itself.
"""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.contact import ModeSet
from eftsieve.bounds.lorentz import dual, ff, trace_chain

MODES = ModeSet("vector", 1, ("A",))
COEFFICIENTS = ("zeta1", "zeta2")
ALT_COEFFICIENTS = ("a_FF2", "b_FFdual2")


def density_ff2(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """(F_{mu nu} F^{mu nu})^2."""
    return ff(f[..., 0, :, :], f[..., 0, :, :]) ** 2


def density_f4(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """F_{mu nu} F^{nu rho} F_{rho lambda} F^{lambda mu}."""
    g = f[..., 0, :, :]
    return trace_chain(g, g, g, g)


def density_ffdual2(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """(F_{mu nu} Ftilde^{mu nu})^2."""
    g = f[..., 0, :, :]
    return ff(g, dual(g)) ** 2


#: coefficient name -> density (the experimental basis)
OPERATORS = {"zeta1": density_ff2, "zeta2": density_f4}
#: the (F.F)^2, (F.Ftilde)^2 basis
ALT_OPERATORS = {"a_FF2": density_ff2, "b_FFdual2": density_ffdual2}
#: (a, b) = ALT_FROM_ZETA @ (zeta1, zeta2)
ALT_FROM_ZETA = np.array([[1.0, 0.5], [0.0, 0.25]])


def euler_heisenberg(alpha: float, mass: float) -> np.ndarray:
    """(zeta1, zeta2) of the one-loop electron Euler-Heisenberg Lagrangian.

    L_EH = 2 alpha^2/(45 m^4) [(E^2 - B^2)^2 + 7 (E.B)^2] (from memory; any QED textbook)
    = alpha^2/(90 m^4) [(F.F)^2 + (7/4) (F.Ftilde)^2], using F.F = 2(B^2 - E^2) and
    F.Ftilde = -4 E.B; so a = alpha^2/(90 m^4), b = 7 alpha^2/(360 m^4), and
    zeta2 = 4 b, zeta1 = a - zeta2/2.
    """
    a = alpha**2 / (90 * mass**4)
    b = 7 * alpha**2 / (360 * mass**4)
    return np.array([a - 2 * b, 4 * b])
