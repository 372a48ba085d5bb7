"""Theories: named amplitude models with their parameter spaces.

Use :func:`get_theory` to get a theory by name and :func:`available_theories` to list
them.  Each theory module is imported only when asked for.
"""

from __future__ import annotations

from importlib import import_module

from eftsieve.theories.base import Theory

_REGISTRY = {
    "chpt-su2": "eftsieve.theories.chpt_su2",
    "scalar-eft": "eftsieve.theories.scalar_eft",
    "chpt-su3": "eftsieve.theories.chpt_su3",
    "photon-quartic": "eftsieve.theories.photon_quartic.theory",
    "higgs-quartic": "eftsieve.theories.higgs_quartic.theory",
    "ew-chiral": "eftsieve.theories.ew_chiral.theory",
    "transverse-w": "eftsieve.theories.transverse_w.theory",
}


def available_theories() -> tuple[str, ...]:
    """Names of the theories that this installation provides."""
    names = []
    for name, mod in _REGISTRY.items():
        try:
            import_module(mod)
        except ModuleNotFoundError:
            continue
        names.append(name)
    return tuple(names)


def get_theory(name: str) -> Theory:
    """The theory called ``name``; KeyError with the accepted names otherwise."""
    if name not in _REGISTRY:
        raise KeyError(f"unknown theory '{name}'; accepted: {', '.join(available_theories())}")
    theory: Theory = import_module(_REGISTRY[name]).THEORY
    return theory


__all__ = ["Theory", "available_theories", "get_theory"]
