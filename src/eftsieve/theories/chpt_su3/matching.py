"""The one-loop SU(3) -> SU(2) matching, as a map from a chpt-su3 fit to chpt-su2 regions.

An SU(3) fit of L1, L2, L3 at mu is mapped onto a chpt-su2 region through the one-loop
matching of Gasser & Leutwyler, Nucl. Phys. B250 (1985) 465, Eq. (11.6) (see
:func:`eftsieve.theories.chpt_su3.theory.su2_matching_map`), then from l^r(mu) to the
region's convention.  Valid to the order of the matching.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from eftsieve.errors import InputError
from eftsieve.theories.base import CoordinateMap
from eftsieve.theories.chpt_su2.conventions import convention, su2_scalar_map
from eftsieve.theories.chpt_su2.theory import region_convention
from eftsieve.theories.chpt_su3.theory import CONVENTION, DEFAULT_KAON_MASS_MEV, su2_matching_map

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region

#: the theory this module maps onto
TARGET = "chpt-su2"


def su3_fit_map(fit: Fit, region: Region) -> CoordinateMap:
    """The coordinate map of an SU(3) fit (L1, L2, L3 in ``Lr``) onto a chpt-su2 region."""
    target = region_convention(region)
    cols = {}
    for i, p in enumerate(fit.parameters):
        name = p.name.rstrip("r")
        if p.convention.name == CONVENTION and name in ("L1", "L2", "L3"):
            cols[name] = i
    if sorted(cols) != ["L1", "L2", "L3"]:
        raise InputError(fit.source, "parameters", "matching to SU(2) needs L1, L2 and L3",
                         "fit all three (convention Lr)")
    mu = fit.parameters[cols["L1"]].convention.get("mu_mev")
    if mu is None:
        raise InputError(fit.source, "parameters", "the Lr convention needs its scale mu",
                         "add kinematics.mu_mev")
    mk = float(fit.kinematics.get("kaon_mass_mev", DEFAULT_KAON_MASS_MEV))
    match = su2_matching_map(mu, mk)
    jac = np.zeros((2, len(fit.parameters)))
    shift = np.zeros(2)
    desc = []
    for k, idx in enumerate((1, 2)):
        a, c = su2_scalar_map(idx, convention("lr", mu_mev=mu), target)
        for j, name in enumerate(("L1", "L2", "L3")):
            jac[k, cols[name]] = a * match.jacobian[k, j]
        shift[k] = a * match.shift[k] + c
        desc.append(f"{region.coordinates[k]} from l{idx}^r(mu = {mu:g} MeV) by the one-loop "
                    f"SU(3) -> SU(2) matching (M_K = {mk:g} MeV)")
    return CoordinateMap(jac, shift, tuple(desc))
