"""Shared by the chpt-su3 tests: kinematics (units of M_pi unless named in MeV) and an
independent evaluation of the four-meson vertices from the Lagrangian of Gasser &
Leutwyler, Nucl. Phys. B250 (1985) 465 (O(p^2) and the L1, L2, L3 terms; equation
numbers from memory), by multilinear expansion of U = exp(i phi / F) in the fields.
"""

from __future__ import annotations

import math

import numpy as np

from eftsieve.theories.chpt_su3 import amplitude as amp3

MPI, MK, META = 139.57, 493.68, 547.86          # MeV, PDG (from memory)
mk, me, MU = MK / MPI, META / MPI, 770.0 / MPI
ES = np.array([1.0, 0.0, -1.0])                 # d/ds at fixed t
ET = np.array([0.0, 1.0, -1.0])                 # d/dt at fixed s
#: the pi pi corner channels and their (x1, x2) isospin weights (chpt-su2 corners)
PIPI = {"pi+ pi0": (0, 0), "pi+ pi-": (1, 0), "pi+ pi+": (0, 1), "pi0 pi0": (1, 1)}


# ---- an independent derivation of the four-meson vertices from the Lagrangian -------
_G = (1.0, -1.0, -1.0, -1.0)


def _mmul(a, b):
    """Product of matrix-valued multilinear polynomials in eps_1..eps_4 (eps_j^2 = 0).

    An element is an array (16, 3, 3) indexed by the bit mask of the eps's it carries.
    """
    out = np.zeros((16, 3, 3), dtype=complex)
    for s1 in range(16):
        if not a[s1].any():
            continue
        for s2 in range(16):
            if s1 & s2 == 0 and b[s2].any():
                out[s1 | s2] += a[s1] @ b[s2]
    return out


def _trp(a):
    return np.trace(a, axis1=1, axis2=2)


def _smul(a, b):
    out = np.zeros(16, dtype=complex)
    for s1 in range(16):
        for s2 in range(16):
            if s1 & s2 == 0:
                out[s1 | s2] += a[s1] * b[s2]
    return out


def fields(vecs, q):
    lam = amp3.gell_mann()
    phi = np.zeros((16, 3, 3), dtype=complex)
    dphi = np.zeros((4, 16, 3, 3), dtype=complex)
    for j in range(4):
        mat = np.einsum("a,aij->ij", vecs[j], lam)
        phi[1 << j] = mat
        for m in range(4):
            dphi[m, 1 << j] = -1j * q[j][m] * mat

    def series(sign):
        u = np.zeros((16, 3, 3), dtype=complex)
        u[0] = np.eye(3)
        power, dpow = u.copy(), np.zeros_like(dphi)
        du = np.zeros_like(dphi)
        for n in range(1, 5):
            dpow = np.array([_mmul(dpow[m], phi) + _mmul(power, dphi[m]) for m in range(4)])
            power = _mmul(power, phi)
            c = (sign * 1j) ** n / math.factorial(n)
            u, du = u + c * power, du + c * dpow
        return u, du
    return series(1), series(-1)


def lagrangian_vertex(vecs, q, mk_, chi_scale=1.0):
    """All-incoming four-meson vertices straight from the Lagrangian (GL85, Eq. (6.5)).

    phi = sum_j eps_j (v_j . lambda) e^{-i q_j x}, U = exp(i phi) (F = 1), d_mu -> -i q_j;
    the coefficient of eps_1 eps_2 eps_3 eps_4 of each term of the Lagrangian density is
    its vertex.  Returns the L2 vertex and those of L1 .. L8 (array of 8), chi =
    diag(M_pi^2, M_pi^2, 2 M_K^2 - M_pi^2) in units of M_pi^2.
    """
    (u, du), (ud, dud) = fields(vecs, q)
    chi = np.zeros((16, 3, 3), dtype=complex)
    chi[0] = chi_scale * np.diag([1.0, 1.0, 2 * mk_**2 - 1.0])
    lo = sum(_G[m] * _trp(_mmul(du[m], dud[m])) for m in range(4)) / 4
    lo = lo + _trp(_mmul(chi, u + ud)) / 4
    dd = sum(_G[m] * _mmul(dud[m], du[m]) for m in range(4))          # dU^+ dU
    cu, cud = _mmul(chi, u), _mmul(chi, ud)
    sp, sm = _trp(cu + cud), _trp(cu - cud)
    l2 = sum(_G[m] * _G[n] * _smul(_trp(_mmul(dud[m], du[n])), _trp(_mmul(dud[m], du[n])))
             for m in range(4) for n in range(4))
    lecs = [_smul(_trp(dd), _trp(dd)), l2, _trp(_mmul(dd, dd)), _smul(_trp(dd), sp),
            _trp(_mmul(dd, cu + _mmul(ud, chi))), _smul(sp, sp), _smul(sm, sm),
            _trp(_mmul(cu, cu) + _mmul(cud, cud))]
    return lo[15], np.array([x[15] for x in lecs])


def momenta(s, t, ma, mb):
    """All-incoming momenta (p_a, p_b, -p_c, -p_d) of a b -> a b at (s, t), complex."""
    rs = np.sqrt(complex(s))
    ea, eb = (s + ma**2 - mb**2) / (2 * rs), (s + mb**2 - ma**2) / (2 * rs)
    p2 = (s - (ma + mb) ** 2) * (s - (ma - mb) ** 2) / (4 * s)
    p = np.sqrt(complex(p2))
    c = 1 + t / (2 * p2) if p2 != 0 else 1.0
    sn = np.sqrt(complex(1 - c * c))
    pa, pb = np.array([ea, 0, 0, p]), np.array([eb, 0, 0, -p])
    pc, pd = np.array([ea, p * sn, 0, p * c]), np.array([eb, -p * sn, 0, -p * c])
    return (pa, pb, -pc, -pd)
