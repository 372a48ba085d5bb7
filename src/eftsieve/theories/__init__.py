"""Theories: named amplitude models with their parameter spaces, as plug-ins.

Each theory is a sub-package ``eftsieve.theories.<name>`` whose ``theory`` module holds
a ``THEORY`` object (a :class:`~eftsieve.theories.base.Theory`).  Registering a theory
is one line of :data:`REGISTRY`; nothing outside this package names a theory.  Use
:func:`get_theory` to get one by name, :func:`available_theories` to list them, and
:func:`coordinate_map` for the map of a fit onto a region (through a matching when the
fit belongs to another theory).
"""

from __future__ import annotations

from importlib import import_module
from pathlib import Path
from typing import TYPE_CHECKING

from eftsieve.fit.conventions import NONE
from eftsieve.theories.base import CoordinateMap, Theory

if TYPE_CHECKING:
    from eftsieve.fit.model import Fit
    from eftsieve.region.model import Region

#: theory name -> module holding ``THEORY`` (imported only when asked for)
REGISTRY = {
    "chpt-su2": "eftsieve.theories.chpt_su2.theory",
    "chpt-su3": "eftsieve.theories.chpt_su3.theory",
    "scalar-eft": "eftsieve.theories.scalar_eft.theory",
    "photon-quartic": "eftsieve.theories.photon_quartic.theory",
    "higgs-quartic": "eftsieve.theories.higgs_quartic.theory",
    "ew-chiral": "eftsieve.theories.ew_chiral.theory",
    "transverse-w": "eftsieve.theories.transverse_w.theory",
    "aqgc-dim8": "eftsieve.theories.aqgc_dim8.theory",
}

#: the theory of ``eftsieve region`` without --theory
DEFAULT_THEORY = "chpt-su2"


def available_theories() -> tuple[str, ...]:
    """Names of the theories that this installation provides."""
    names = []
    for name, mod in REGISTRY.items():
        try:
            import_module(mod)
        except ModuleNotFoundError:
            continue
        names.append(name)
    return tuple(names)


def get_theory(name: str) -> Theory:
    """The theory called ``name``; KeyError with the accepted names otherwise."""
    if name not in REGISTRY:
        raise KeyError(f"unknown theory '{name}'; accepted: {', '.join(available_theories())}")
    theory: Theory = import_module(REGISTRY[name]).THEORY
    return theory


def check_region(region: Region, path: str | Path | None = None) -> None:
    """A loaded region names a known theory, its coordinates are parameters of that
    theory and its convention is one the theory offers; RegionFileError otherwise."""
    from eftsieve.errors import RegionFileError

    fix = "(fix: rebuild it with `eftsieve region`)"
    try:
        theory = get_theory(region.theory)
    except KeyError as err:
        raise RegionFileError(path, f"theory: {err.args[0]} {fix}") from err
    unknown = [c for c in region.coordinates if c not in theory.parameter_names]
    if unknown:
        raise RegionFileError(path, f"coordinates: '{unknown[0]}' is not a parameter of "
                              f"{theory.name} {fix}")
    name = region.convention.get("name")
    if name not in theory.convention_specs and name != NONE:
        raise RegionFileError(path, f"convention.name: '{name}' is not a convention of "
                              f"{theory.name} (it offers {', '.join(theory.convention_specs)}) "
                              f"{fix}")


def coordinate_map(fit: Fit, region: Region) -> CoordinateMap:
    """The map of ``fit``'s parameters to ``region``'s coordinates.

    The region's theory maps a fit of its own; a fit of another theory goes through that
    theory's matching onto the region's (e.g. an SU(3) fit onto an SU(2) region), and
    without one the pair is refused with an InputError.  Every engine calls this one
    function, so every engine accepts the same pairs.
    """
    if fit.theory == region.theory:
        return get_theory(region.theory).coordinate_map(fit, region)
    try:
        source = get_theory(fit.theory)
    except KeyError as err:
        from eftsieve.errors import InputError

        raise InputError(fit.source, "theory", str(err.args[0]), "run `eftsieve theories`"
                         ) from err
    return source.matching_map(fit, region)


__all__ = ["DEFAULT_THEORY", "REGISTRY", "CoordinateMap", "Theory", "available_theories",
           "check_region", "coordinate_map", "get_theory"]
