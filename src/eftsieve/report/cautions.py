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
    "By default the outer facets are relaxed by a truncation shift calibrated on "
    "loop-consistent models (an estimate, not a bound); points that pass only the relaxed "
    "facets are uncertain. Above M_pi = 300 MeV the tool warns: the estimate no longer "
    "covers physical QCD there.",
    "A point outside is in tension with causality, unitarity and crossing only within "
    "the truncation; it is not a proof that the underlying theory is inconsistent.",
)

SU3_CAUTIONS = (
    "The chpt-su3 bounds apply the exact inequalities to the one-loop (O(p^4)) SU(3) "
    "amplitudes with the physical M_pi, M_K, M_eta: they hold up to O(p^6) corrections, "
    "larger than in SU(2) (the expansion is in M_K/(4 pi F)), largest near "
    "t -> 4 M_pi^2 and for pi K near s = 9 M_pi^2.",
    "With physical masses only processes whose lowest s- and u-channel thresholds are "
    "their elastic ones enter (pi pi, pi K); the others are listed as skipped above, since "
    "positivity of their absorptive parts below the elastic threshold is not provable.",
    "L_i^r(mu) are in the scheme of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, at the "
    "region's mu; a fit at another scale is run there with the one-loop Gamma_i.",
    "Isospin limit: m_u = m_d and no electromagnetism.",
    CHPT_CAUTIONS[-1],
)

SCALAR_CAUTIONS = (
    "The scalar-eft bounds assume a mass gap M below which only the massless scalar "
    "propagates, and the low-energy expansion truncated at the stated order.",
    "Inner points come from explicit positive spectra on a discrete grid of heavy states; "
    "outer facets from dual functionals verified on a finer grid and asymptotically.",
    "The inner spectra satisfy every sum rule and null constraint up to the stated order "
    "only; higher null constraints can still exclude some of those points, so `inside` "
    "means consistent with the bounds to that order.",
    "The light sector is taken at tree level: loops of the massless scalar, which change "
    "the dispersion relations, are neglected.",
)


def cautions_for(theory: str) -> tuple[str, ...]:
    """The theory-specific cautions."""
    return {"chpt-su2": CHPT_CAUTIONS, "chpt-su3": SU3_CAUTIONS,
            "scalar-eft": SCALAR_CAUTIONS}.get(theory, ())
