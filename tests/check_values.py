"""Golden numbers used by the tests, each with its source.

Every value here comes from outside the project: a paper (arXiv id, equation or table),
a handbook, or ``(from memory)`` where the source could not be re-read, or
``common practice`` for a convention of the trade.
"""

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
