"""The four-derivative Higgs-doublet operators of ``higgs-quartic`` and their modes.

Basis of vector-boson-scattering analyses (Eboli, Gonzalez-Garcia & Mizukoshi,
hep-ph/0606118, and its later updates; definitions from memory):

    O_S0 = [(D_mu Phi)^dag D_nu Phi] [(D^mu Phi)^dag D^nu Phi]
    O_S1 = [(D_mu Phi)^dag D^mu Phi] [(D_nu Phi)^dag D^nu Phi]
    O_S2 = [(D_mu Phi)^dag D_nu Phi] [(D^nu Phi)^dag D^mu Phi]

with L = sum_i (f_Si / Lambda^4) O_Si.  The region's coordinates are f_S0, f_S1, f_S2 in
units of Lambda^-4 (a positive rescaling does not change a cone).

Modes: the massless, unbroken phase, gauge couplings set to zero in the contact
(D_mu -> d_mu; gauge-boson exchange is not a contact term), with the four real
components Phi = (phi1 + i phi2, phi3 + i phi4)/sqrt(2).  The conjugate doublet is
formed algebraically from the real components (never by complex conjugation, so that
the amplitude stays analytic in complex s).

Basis map to Remmen & Rodd, arXiv:1908.09845, who write the same three structures as
O^(1) = (D_mu H^dag D_nu H)(D^nu H^dag D^mu H), O^(2) = (D_mu H^dag D_nu H)(D^mu H^dag D^nu H),
O^(3) = (D_mu H^dag D^mu H)(D_nu H^dag D^nu H) (from memory): C^(1) = f_S2, C^(2) = f_S0,
C^(3) = f_S1 (in units of Lambda^-4).
"""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.contact import ModeSet, lower

MODES = ModeSet("scalar", 4, ("phi1", "phi2", "phi3", "phi4"))
COEFFICIENTS = ("fS0", "fS1", "fS2")


def doublet_derivatives(dphi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """d^mu Phi and d^mu Phi^dag, each (..., 2, 4), from the real components (..., 4, 4)."""
    r = 1 / np.sqrt(2)
    dp = np.stack([dphi[..., 0, :] + 1j * dphi[..., 1, :],
                   dphi[..., 2, :] + 1j * dphi[..., 3, :]], axis=-2) * r
    dpc = np.stack([dphi[..., 0, :] - 1j * dphi[..., 1, :],
                    dphi[..., 2, :] - 1j * dphi[..., 3, :]], axis=-2) * r
    return dp, dpc


def _x(dphi: np.ndarray) -> np.ndarray:
    """X^{mu nu} = (d^mu Phi)^dag d^nu Phi, (..., 4, 4)."""
    dp, dpc = doublet_derivatives(dphi)
    return np.einsum("...am,...an->...mn", dpc, dp)


def density_s0(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """O_S0 = X_{mu nu} X^{mu nu}."""
    x = _x(dphi)
    return np.einsum("...mn,...mn->...", lower(x, (-2, -1)), x)


def density_s1(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """O_S1 = (X_mu^mu)^2."""
    x = _x(dphi)
    return np.einsum("...mm->...", lower(x, (-1,))) ** 2


def density_s2(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """O_S2 = X_{mu nu} X^{nu mu}."""
    x = _x(dphi)
    return np.einsum("...mn,...nm->...", lower(x, (-2, -1)), x)


OPERATORS = {"fS0": density_s0, "fS1": density_s1, "fS2": density_s2}
#: Remmen & Rodd's (C1, C2, C3) = REMMEN_RODD_FROM_F @ (fS0, fS1, fS2) (module docstring)
REMMEN_RODD_FROM_F = np.array([[0.0, 0.0, 1.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]])


def current_singlet(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
    """J = (d_mu Phi)^dag d^mu Phi, the current of a heavy real singlet (rule-in model)."""
    dp, dpc = doublet_derivatives(dphi)
    return np.einsum("...am,...am->...", dpc, lower(dp, (-1,)))


_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])


def current_triplet(component: int):
    """J^a = (d_mu Phi)^dag sigma^a d^mu Phi of a heavy real triplet (rule-in model)."""
    def current(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
        dp, dpc = doublet_derivatives(dphi)
        return np.einsum("...am,ab,...bm->...", dpc, _PAULI[component], lower(dp, (-1,)))
    return current


def doublet(phi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Phi and Phi^dag (..., 2) from the real components (formal conjugate)."""
    r = 1 / np.sqrt(2)
    p = np.stack([phi[..., 0] + 1j * phi[..., 1], phi[..., 2] + 1j * phi[..., 3]], axis=-1) * r
    pc = np.stack([phi[..., 0] - 1j * phi[..., 1], phi[..., 2] - 1j * phi[..., 3]], axis=-1) * r
    return p, pc


def current_vector(component: int | None):
    """J_mu = i (Phi^dag T d_mu Phi - d_mu Phi^dag T Phi), T = 1 (singlet, component None)
    or sigma^a: the current of a heavy vector (rule-in model), contravariant index."""
    gen = np.eye(2) if component is None else _PAULI[component]

    def current(phi: np.ndarray, dphi: np.ndarray) -> np.ndarray:
        p, pc = doublet(phi)
        dp, dpc = doublet_derivatives(dphi)
        return 1j * (np.einsum("...a,ab,...bm->...m", pc, gen, dp)
                     - np.einsum("...am,ab,...b->...m", dpc, gen, p))
    return current
