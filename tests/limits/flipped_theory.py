"""A test-only theory: higgs-quartic with two declared conventions, one of which flips the
sign of fS1 (the way M-type coefficients flip between field-strength conventions)."""

from __future__ import annotations

import numpy as np

from eftsieve.fit.conventions import ConventionSpec
from eftsieve.theories.base import CoordinateMap
from eftsieve.theories.higgs_quartic.theory import HiggsQuartic


class FlippedHiggs(HiggsQuartic):
    name = "higgs-flipped"
    convention_specs = {"plain": ConventionSpec("plain", text="as in the region"),
                        "flip": ConventionSpec("flip", text="fS1 with the opposite sign")}

    def coordinate_map(self, fit, region):  # type: ignore[no-untyped-def]
        base = super().coordinate_map(fit, region)
        jac = np.array(base.jacobian, dtype=float)
        for col, p in enumerate(fit.parameters):
            if p.name == "fS1" and p.convention.name == "flip":
                jac[:, col] *= -1.0
        return CoordinateMap(jac, base.shift, base.description)


THEORY = FlippedHiggs()
