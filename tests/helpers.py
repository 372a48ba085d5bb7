"""Small builders shared by the tests (hand-made regions and fits)."""

from __future__ import annotations

import numpy as np

from eftsieve.fit.model import Fit, Parameter
from eftsieve.region.model import Facet, Region
from eftsieve.theories.chpt_su2.conventions import convention

LBAR = convention("lbar", pion_mass_mev=139.57)


def region(*facets: tuple[tuple[float, float], float]) -> Region:
    """A chpt-su2 region in (lbar1, lbar2) from (normal, offset) pairs."""
    return Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar", "pion_mass_mev": 139.57},
                  tuple(Facet(tuple(map(float, n)), float(b), "test", f"facet{i}",
                              {"s": 0.0, "t": 4.0}) for i, (n, b) in enumerate(facets)))


def gaussian_fit(mean, cov, name: str = "toy", prior=None) -> Fit:
    mean = np.asarray(mean, dtype=float)
    params = tuple(Parameter(n, LBAR) for n in ("lbar1", "lbar2")[: len(mean)])
    return Fit(name, "chpt-su2", params, {"pion_mass_mev": 139.57}, mean,
               np.asarray(cov, dtype=float), prior=prior)
