"""The assumptions shared by every bound, as printed in every report.

Each theory adds its own cautions (:attr:`eftsieve.theories.base.Theory.cautions`).
"""

from __future__ import annotations

ASSUMPTIONS = (
    "Lorentz invariance, and analyticity of the amplitude in s at fixed t (cut plane).",
    "Unitarity (positive absorptive parts of elastic amplitudes, partial waves with "
    "Im a_l >= 0) and crossing symmetry.",
    "A Froissart-type bound on the high-energy growth, so that two subtractions suffice.",
)


def cautions_for(theory: str) -> tuple[str, ...]:
    """The cautions of the named theory (none for a theory this installation lacks)."""
    from eftsieve.theories import get_theory

    try:
        return tuple(get_theory(theory).cautions)
    except KeyError:
        return ()
