"""Theory ``ew-chiral``: alpha4, alpha5 of the electroweak chiral Lagrangian (operators.py)."""

from __future__ import annotations

from eftsieve.theories.cone_theory import ConeTheory
from eftsieve.theories.ew_chiral import operators as ops
from eftsieve.theories.ew_chiral.references import REFERENCES


class EwChiral(ConeTheory):

    references = REFERENCES
    name = "ew-chiral"
    summary = "electroweak chiral Lagrangian, Goldstone limit; positivity cone of alpha4, alpha5"
    parameter_names = ops.COEFFICIENTS
    coordinates = ops.COEFFICIENTS
    modes = ops.MODES
    operators = ops.OPERATORS
    basis = "alpha4 [Tr(V_mu V_nu)]^2 + alpha5 [Tr(V_mu V^mu)]^2, v = 1"


THEORY = EwChiral()
