"""Theory ``higgs-quartic``: the three four-derivative Higgs-doublet operators (operators.py)."""

from __future__ import annotations

import numpy as np

from eftsieve.theories.cone_theory import ConeTheory
from eftsieve.theories.higgs_quartic import operators as ops
from eftsieve.theories.higgs_quartic.references import REFERENCES


class HiggsQuartic(ConeTheory):

    references = REFERENCES
    name = "higgs-quartic"
    summary = "Higgs-doublet scattering at dimension 8; positivity cone of f_S0, f_S1, f_S2"
    parameter_names = ops.COEFFICIENTS + ("C1", "C2", "C3")
    coordinates = ops.COEFFICIENTS
    modes = ops.MODES
    operators = ops.OPERATORS
    basis = "f_S0, f_S1, f_S2 over Lambda^4 (hep-ph/0606118 and updates)"
    alt_bases = {"Remmen-Rodd C1, C2, C3": (("C1", "C2", "C3"),
                                            np.linalg.inv(ops.REMMEN_RODD_FROM_F))}


THEORY = HiggsQuartic()
