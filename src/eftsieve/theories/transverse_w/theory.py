"""Theory ``transverse-w``: the transverse SU(2) operators f_T0, f_T1, f_T2 (operators.py)."""

from __future__ import annotations

from eftsieve.theories.cone_theory import ConeTheory
from eftsieve.theories.transverse_w import operators as ops
from eftsieve.theories.transverse_w.references import REFERENCES


class TransverseW(ConeTheory):

    references = REFERENCES
    name = "transverse-w"
    summary = "transverse W scattering at dimension 8; positivity cone of f_T0, f_T1, f_T2"
    parameter_names = ops.COEFFICIENTS
    coordinates = ops.COEFFICIENTS
    modes = ops.MODES
    operators = ops.OPERATORS
    basis = "f_T0, f_T1, f_T2 over Lambda^4 (hep-ph/0606118 and updates), g = 1"
    reduction_factory = staticmethod(ops.state_reduction)


THEORY = TransverseW()
