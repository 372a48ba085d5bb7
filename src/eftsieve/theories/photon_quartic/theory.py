"""Theory ``photon-quartic``: light-by-light scattering at dimension 8 (operators.py)."""

from __future__ import annotations

import numpy as np

from eftsieve.theories.cone_theory import ConeTheory
from eftsieve.theories.photon_quartic import operators as ops
from eftsieve.theories.photon_quartic.references import REFERENCES


class PhotonQuartic(ConeTheory):

    references = REFERENCES
    name = "photon-quartic"
    summary = "light-by-light scattering at dimension 8; positivity cone of zeta1, zeta2"
    parameter_names = ops.COEFFICIENTS + ops.ALT_COEFFICIENTS
    coordinates = ops.COEFFICIENTS
    modes = ops.MODES
    operators = ops.OPERATORS
    basis = "zeta1 (F.F)^2 + zeta2 F_{mu nu}F^{nu rho}F_{rho lambda}F^{lambda mu}"
    alt_bases = {"(F.F)^2, (F.Ftilde)^2": (ops.ALT_COEFFICIENTS,
                                           np.linalg.inv(ops.ALT_FROM_ZETA))}


THEORY = PhotonQuartic()
