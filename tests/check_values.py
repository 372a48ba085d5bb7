"""Golden numbers used by the tests, each with its source.

Every value here comes from outside the project: a paper (arXiv id, equation or table),
a handbook, or ``(from memory)`` where the source could not be re-read, or
``common practice`` for a convention of the trade.
"""

import math

_PI = math.pi

# Manohar & Mateu, "Dispersion relation bounds for pi pi scattering", arXiv:0801.3222
# (Phys. Rev. D 77 (2008) 094019), summary of results: the best second-derivative bounds
# of one-loop ChPT (the section and equation numbers are not re-checked).
MM_LBAR2_MIN = 27 / 20            # lbar2 >= 27/20 = 1.35
MM_L1_PLUS_2L2_MIN = 157 / 40     # lbar1 + 2 lbar2 >= 157/40 = 3.925
MM_L1_PLUS_3L2_MIN = 5.604        # lbar1 + 3 lbar2 >= 5.604 (quoted to 4 digits)

# Gasser & Leutwyler, Ann. Phys. 158 (1984) 142, Eq. (9.7): the coefficients gamma_i of
# the scale dependence of l_i^r(mu).  (from memory; also in arXiv:hep-ph/9511397, Eq. (2.6))
GAMMA = {1: 1 / 3, 2: 2 / 3, 3: -1 / 2, 4: 2}

# Gasser & Leutwyler (1984): one-loop D-wave scattering lengths, in units of M_pi,
# a_2^0 = (lbar1 + 4 lbar2 - 53/8) / (1440 pi^3 F^4),
# a_2^2 = (lbar1 + lbar2 - 103/40) / (1440 pi^3 F^4)   (from memory)
A20_CONST = -53 / 8
A22_CONST = -103 / 40

# Weinberg, Phys. Rev. Lett. 17 (1966) 616: a_0^0 = 7 M^2/(32 pi F^2),
# a_0^2 = -M^2/(16 pi F^2).
WEINBERG_A00 = 7 / 32
WEINBERG_A02 = -1 / 16

# Common-practice kinematics (PDG charged pion mass, F_pi in the 92 MeV normalisation,
# the rho mass as scale).  common practice
M_PI_MEV = 139.57
F_PI_MEV = 92.07
MU_MEV = 770.0

# Caron-Huot & Van Duong, "Extremal effective field theories", arXiv:2011.02957,
# Sec. 3 (the g3 bound): -10.346 <= g3 M^2 / g2 <= 3.
G3T_MIN = -10.346
G3T_MAX = 3.0


# ---- pi pi threshold parameters (tests/observables) ----------------------------------
def d_wave_closed(lbar, f):
    """Gasser & Leutwyler, Ann. Phys. 158 (1984) 142: one-loop D-wave scattering lengths
    a_2^0, a_2^2 in units of M_pi, F = F_pi/M_pi (from memory; also quoted in
    arXiv:hep-ph/9707291)."""
    l1, l2, _, _ = lbar
    return {"a_I0_l2": (l1 + 4 * l2 - 53 / 8) / (1440 * _PI**3 * f**4),
            "a_I2_l2": (l1 + l2 - 103 / 40) / (1440 * _PI**3 * f**4)}


def s_p_wave_closed(lbar, f):
    """One-loop S- and P-wave threshold parameters, in the factorised form of Gasser &
    Leutwyler (1984) (recognised from memory), derived by hand from their amplitude,
    Eq. (17.5), at threshold; tests/observables/test_threshold.py gives the derivation."""
    l1, l2, l3, l4 = lbar
    x = 1 / (12 * _PI**2 * f**2)
    return {
        "a_I0_l0": 7 / (32 * _PI * f**2)
        * (1 + 5 / 7 * x * (l1 + 2 * l2 - 3 / 8 * l3 + 21 / 10 * l4 + 21 / 8)),
        "b_I0_l0": 1 / (4 * _PI * f**2) * (1 + x * (2 * l1 + 3 * l2 + 1.5 * l4 - 13 / 16)),
        "a_I2_l0": -1 / (16 * _PI * f**2)
        * (1 - x * (l1 + 2 * l2 - 3 / 8 * l3 - 1.5 * l4 + 3 / 8)),
        "b_I2_l0": -1 / (8 * _PI * f**2) * (1 - x * (l1 + 3 * l2 - 1.5 * l4 - 5 / 16)),
        "a_I1_l1": 1 / (24 * _PI * f**2) * (1 - x * (l1 - l2 - 1.5 * l4 + 65 / 48)),
        "b_I1_l1": (l2 - l1 + 97 / 120) / (288 * _PI**3 * f**4),
    }


# Weinberg, Phys. Rev. Lett. 17 (1966) 616: leading-order threshold parameters times F^2
# (a_0^0, a_0^2 published; the slopes and a_1^1 by projecting A = (s - M^2)/F^2).
LEADING_ORDER = {"a_I0_l0": 7 / (32 * _PI), "a_I2_l0": -1 / (16 * _PI), "b_I0_l0": 1 / (4 * _PI),
                 "b_I2_l0": -1 / (8 * _PI), "a_I1_l1": 1 / (24 * _PI)}

# Lovasz, "On the Shannon capacity of a graph", IEEE Trans. Inf. Theory 25 (1979) 1:
# the theta function of the 5-cycle is sqrt(5).
LOVASZ_THETA_C5 = 5 ** 0.5

# Choi, "Positive semidefinite biquadratic forms", Linear Algebra Appl. 12 (1975) 95
# (from memory): F(x, y) = x1^2 y1^2 + x2^2 y2^2 + x3^2 y3^2
#   - 2 (x1 x2 y1 y2 + x2 x3 y2 y3 + x3 x1 y3 y1) + 2 (x1^2 y2^2 + x2^2 y3^2 + x3^2 y1^2)
# is >= 0 and not a sum of squares.  Terms as ((i, j, k, l), coefficient) of
# u_i v_j u_k v_l with u = x, v = y (0-based).
CHOI_FORM_TERMS = (
    ((0, 0, 0, 0), 1.0), ((1, 1, 1, 1), 1.0), ((2, 2, 2, 2), 1.0),
    ((0, 0, 1, 1), -2.0), ((1, 1, 2, 2), -2.0), ((2, 2, 0, 0), -2.0),
    ((0, 1, 0, 1), 2.0), ((1, 2, 1, 2), 2.0), ((2, 0, 2, 0), 2.0),
)
