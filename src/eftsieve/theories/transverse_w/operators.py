"""The purely transverse SU(2) operators of ``transverse-w`` and their six modes.

Basis of vector-boson-scattering analyses (Eboli, Gonzalez-Garcia & Mizukoshi,
hep-ph/0606118, and later updates; definitions from memory):

    O_T0 = Tr[W_{mu nu} W^{mu nu}] Tr[W_{alpha beta} W^{alpha beta}]
    O_T1 = Tr[W_{alpha nu} W^{mu beta}] Tr[W_{mu beta} W^{alpha nu}]
    O_T2 = Tr[W_{alpha mu} W^{mu beta}] Tr[W_{beta nu} W^{nu alpha}]

with W_{mu nu} = i g (sigma^a / 2) W^a_{mu nu} and L = sum_i (f_Ti / Lambda^4) O_Ti.
Four factors of i g/2 give the positive constant g^4/16, which does not change a cone;
we set g = 1.  Only the abelian part of W^a_{mu nu} enters a four-point contact.

Modes: three real isospin components W^1, W^2, W^3 (not W^+-) times the two linear
polarisations x, y of the massless, unbroken phase: six modes.  Real components and
real polarisations are self-conjugate, so crossing maps each mode to itself.
"""

from __future__ import annotations

import numpy as np

from eftsieve.bounds.contact import ModeSet, lower

MODES = ModeSet("vector", 3, ("W1", "W2", "W3"))
COEFFICIENTS = ("fT0", "fT1", "fT2")
_PAULI = np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]])


def matrix_field(f: np.ndarray) -> np.ndarray:
    """W^{mu nu} = i (sigma^a/2) W^{a, mu nu} as (..., 2, 2, 4, 4), indices up."""
    return 0.5j * np.einsum("aij,...amn->...ijmn", _PAULI, f)


def density_t0(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Tr[W_{mu nu} W^{mu nu}] Tr[W_{alpha beta} W^{alpha beta}]."""
    w = matrix_field(f)
    tr = np.einsum("...ijmn,...jimn->...", lower(w, (-2, -1)), w)
    return tr * tr


def density_t1(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Tr[W_{alpha nu} W^{mu beta}] Tr[W_{mu beta} W^{alpha nu}]."""
    w = matrix_field(f)
    wl = lower(w, (-2, -1))
    t1 = np.einsum("...ijan,...jimb->...anmb", wl, w)      # Tr[W_{a n} W^{m b}]
    t2 = np.einsum("...ijmb,...jian->...mban", wl, w)      # Tr[W_{m b} W^{a n}]
    return np.einsum("...anmb,...mban->...", t1, t2)


def density_t2(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Tr[W_{alpha mu} W^{mu beta}] Tr[W_{beta nu} W^{nu alpha}]."""
    w = matrix_field(f)
    wl = lower(w, (-2, -1))
    t1 = np.einsum("...ijam,...jimb->...ab", wl, w)        # Tr[W_{a m} W^{m b}] = T_a^b
    t2 = np.einsum("...ijbn,...jina->...ba", wl, w)        # Tr[W_{b n} W^{n a}] = U_b^a
    return np.einsum("...ab,...ba->...", t1, t2)


OPERATORS = {"fT0": density_t0, "fT1": density_t1, "fT2": density_t2}


def current_singlet_scalar(a: np.ndarray, f: np.ndarray) -> np.ndarray:
    """J = W^a_{mu nu} W^{a, mu nu}: a heavy isosinglet scalar coupled to two W (rule-in)."""
    return np.einsum("...amn,...amn->...", lower(f, (-2, -1)), f)


def _reduced_states(theta: np.ndarray) -> np.ndarray:
    """u(theta) = cos(theta) |W1 x> + sin(theta) |W2 y> (modes ordered W1x, W1y, W2x, ...)."""
    t = np.asarray(theta, dtype=float)[:, 0]
    u = np.zeros((len(t), 6))
    u[:, 0], u[:, 3] = np.cos(t), np.sin(t)
    return u


def _rotation(axis: int, angle: float, dim: int) -> np.ndarray:
    r = np.eye(dim)
    i, j = [k for k in range(dim) if k != axis][:2] if dim == 3 else (0, 1)
    c, s = np.cos(angle), np.sin(angle)
    r[i, i], r[i, j], r[j, i], r[j, j] = c, -s, s, c
    return r


def state_reduction():
    """Product states u as a real 3x2 matrix U[a, pol]: O(3) isospin x O(2) polarisation
    symmetry acts as U -> O U R^T, and the singular value decomposition brings every unit
    U to diag(cos theta, sin theta) with 0 <= theta <= pi/4 (common practice)."""
    from eftsieve.bounds.elastic import StateReduction

    gens = []
    for axis in range(3):
        gens.append(np.kron(_rotation(axis, 0.7, 3), np.eye(2)))
    gens.append(np.kron(np.diag([-1.0, 1.0, 1.0]), np.eye(2)))
    gens.append(np.kron(np.eye(3), _rotation(2, 0.9, 2)))
    gens.append(np.kron(np.eye(3), np.diag([1.0, -1.0])))
    return StateReduction(_reduced_states, np.array([0.0]), np.array([np.pi / 4]), 1.0,
                          tuple(gens), "O(3) isospin x O(2) polarisation; singular values of "
                          "the 3x2 matrix U[a, pol] of u")


def current_scalar(kind: str, component: int = 0):
    """Currents of heavy scalars coupled to two W (rule-in models): ``singlet`` W^a.W^a,
    ``pseudo`` W^a.Wtilde^a, ``quintet`` T^k_ab W^a.W^b with T^k the five symmetric
    traceless 3x3 matrices (isospin 2)."""
    from eftsieve.bounds.lorentz import dual

    quintet = [np.diag([1.0, -1.0, 0.0]) / np.sqrt(2), np.diag([1.0, 1.0, -2.0]) / np.sqrt(6)]
    for i, j in ((0, 1), (0, 2), (1, 2)):
        t = np.zeros((3, 3))
        t[i, j] = t[j, i] = 1 / np.sqrt(2)
        quintet.append(t)

    def current(a: np.ndarray, f: np.ndarray) -> np.ndarray:
        if kind == "singlet":
            return np.einsum("...amn,...amn->...", lower(f, (-2, -1)), f)
        if kind == "pseudo":
            return np.einsum("...amn,...amn->...", lower(f, (-2, -1)), dual(f))
        t = quintet[component]
        return np.einsum("ab,...amn,...bmn->...", t, lower(f, (-2, -1)), f)
    return current
