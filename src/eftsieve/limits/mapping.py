"""Published coefficients into a region's coordinates, through the theory.

A published result names some coefficients in a declared convention.  The theory's
coordinate map (:func:`eftsieve.theories.coordinate_map`, which applies the
convention, e.g. a sign flip of a convention map) takes them into the region's
coordinates; the coefficients not named are held at zero.  Every published input of
:mod:`eftsieve.limits` goes through :func:`affine_into`.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from eftsieve.errors import InputError

if TYPE_CHECKING:
    from eftsieve.fit.conventions import Convention
    from eftsieve.region.model import Region


def affine_into(region: Region, theory: str, convention: Convention, names: Sequence[str],
                kinematics: dict[str, float] | None = None, label: str = ""
                ) -> tuple[np.ndarray, np.ndarray]:
    """(J, c): the region coordinates of published values x (in ``names`` order) are
    ``J x + c``, the other coefficients of the region held at zero.

    Raises
    ------
    InputError
        The theory cannot map the names onto the region, or the map is not affine.
    """
    from eftsieve.fit.model import Fit, Parameter
    from eftsieve.theories import coordinate_map

    full = list(names)
    if all(n in region.coordinates for n in names):
        full += [c for c in region.coordinates if c not in full]
    fit = Fit(label or ", ".join(names), theory, tuple(Parameter(n, convention) for n in full),
              dict(kinematics or {}))
    cmap = coordinate_map(fit, region)
    if cmap.jacobian is None or cmap.shift is None:
        raise InputError(None, "coordinates", f"the map of {', '.join(names)} onto the "
                         "region is not affine, so a published line or plane is curved there",
                         "use a region in the coefficients' own basis")
    return np.asarray(cmap.jacobian)[:, :len(names)], np.asarray(cmap.shift)
