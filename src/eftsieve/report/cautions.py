"""The assumptions behind the bounds and their cautions, as printed in every report."""

from __future__ import annotations

ASSUMPTIONS = (
    "Lorentz invariance, and analyticity of the amplitude in s at fixed t (cut plane).",
    "Unitarity (positive absorptive parts of elastic amplitudes, partial waves with "
    "Im a_l >= 0) and crossing symmetry.",
    "A Froissart-type bound on the high-energy growth, so that two subtractions suffice.",
)

CHPT_CAUTIONS = (
    "The chpt-su2 bounds apply the exact inequalities to the one-loop (O(p^4)) amplitude: "
    "they hold up to O(p^6) corrections, which grow with the pion mass and towards the "
    "edge t -> 4 M_pi^2 of the kinematic domain.",
    "Isospin limit: m_u = m_d and no electromagnetism; the charged and neutral pion "
    "masses are equal.",
    "Above M_pi ~ 400 MeV one-loop SU(2) ChPT itself is not trusted; bounds evaluated there "
    "are flagged with a warning.",
    "A point outside is in tension with causality, unitarity and crossing only within "
    "the truncation; it is not a proof that the underlying theory is inconsistent.",
)

SCALAR_CAUTIONS = (
    "The scalar-eft bounds assume a mass gap M below which only the massless scalar "
    "propagates, and the low-energy expansion truncated at the stated order.",
    "Inner points come from explicit positive spectra on a discrete grid of heavy states; "
    "outer facets from dual functionals verified on a finer grid and asymptotically.",
)


def cautions_for(theory: str) -> tuple[str, ...]:
    """The theory-specific cautions."""
    if theory.startswith("chpt"):
        return CHPT_CAUTIONS
    if theory == "scalar-eft":
        return SCALAR_CAUTIONS
    return ()
